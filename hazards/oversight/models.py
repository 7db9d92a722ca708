"""Records that keep approvals current: revalidation schedules of approved revisions, change
records for changes to the inputs of approved steps, and notifications with their
preferences. The review's own models (hazards.review) are read, never changed, here."""

from __future__ import annotations

import pgtrigger
from django.conf import settings
from django.db import models
from django.db.models import Q
from django.db.models.functions import Now

from hazards.models.base import tracked


@tracked()
class ChangePolicy(models.Model):
    """How a site treats changes to approved steps, and how early it is reminded.

    The lighter review path is off unless the site turns it on; a change that moves no
    indicator beyond the tolerances and keeps the criticality class may then take it.
    Every change is recorded either way.
    """

    site = models.OneToOneField("hazards.Site", on_delete=models.CASCADE,
                                related_name="change_policy")
    light_review_allowed = models.BooleanField(default=False)
    # Indicators in kelvin (temperatures) compare by absolute difference, others relatively.
    temperature_tolerance_k = models.FloatField(default=2.0)
    relative_tolerance_percent = models.FloatField(default=5.0)
    # Reminders of revalidation and findings start this many days before the due date.
    revalidation_notice_days = models.PositiveIntegerField(default=90)
    finding_notice_days = models.PositiveIntegerField(default=7)

    class Meta:
        constraints = [
            models.CheckConstraint(condition=Q(temperature_tolerance_k__gte=0),
                                   name="policy_temperature_tolerance_not_negative"),
            models.CheckConstraint(condition=Q(relative_tolerance_percent__gte=0),
                                   name="policy_relative_tolerance_not_negative"),
        ]

    def __str__(self) -> str:
        return f"change policy of site {self.site_id}"


class RevalidationSchedule(models.Model):
    """When an endorsed revision must be revalidated: its approval date plus the site's
    interval. Kept when the revision is replaced (the history of due dates)."""

    revision = models.OneToOneField("review.ProcessRevision", on_delete=models.PROTECT,
                                    related_name="revalidation")
    process = models.ForeignKey("hazards.Process", on_delete=models.PROTECT,
                                related_name="revalidation_schedules")
    approved_on = models.DateField()
    interval_months = models.PositiveIntegerField()
    due_on = models.DateField()
    refreshed_at = models.DateTimeField(db_default=Now())

    class Meta:
        ordering = ["due_on", "id"]
        constraints = [
            models.CheckConstraint(condition=Q(interval_months__gte=1),
                                   name="revalidation_interval_at_least_a_month"),
            models.CheckConstraint(condition=Q(due_on__gt=models.F("approved_on")),
                                   name="revalidation_due_after_approval"),
        ]
        indexes = [models.Index(fields=["process", "due_on"], name="revalidation_process_due")]

    def __str__(self) -> str:
        return f"revision {self.revision_id} due for revalidation on {self.due_on}"


class ChangeState(models.TextChoices):
    OPEN = "open", "Open (waiting for the approval of a new revision)"
    CLOSED = "closed", "Closed by the approval of a new revision"


class ReviewPath(models.TextChoices):
    FULL = "full", "Full review"
    LIGHT = "light", "Lighter review (no indicator moved beyond the site's tolerances)"


@tracked()
class ChangeRecord(models.Model):
    """A change to the inputs of an approved step, from its opening to the approval of a new
    revision: what changed (approved and current values), which indicators moved, and
    whether the criticality class changed. Each change to the inputs adds a `ChangeEntry`."""

    process = models.ForeignKey("hazards.Process", on_delete=models.PROTECT,
                                related_name="change_records")
    # A deleted step keeps its change records; the label says which step it was.
    step = models.ForeignKey("hazards.ReactionStep", on_delete=models.SET_NULL, null=True,
                             blank=True, related_name="change_records")
    step_label = models.CharField(max_length=250)
    approved_revision = models.ForeignKey(
        "review.ProcessRevision", on_delete=models.PROTECT, null=True, blank=True,
        related_name="+")
    approved_inputs_hash = models.CharField(max_length=64)
    current_inputs_hash = models.CharField(max_length=64)
    changes = models.JSONField(default=dict)  # input -> {"old": approved, "new": current}
    indicators = models.JSONField(default=dict)  # indicator -> {"old", "new", "delta", ...}
    class_before = models.PositiveSmallIntegerField(null=True, blank=True)
    class_after = models.PositiveSmallIntegerField(null=True, blank=True)
    class_changed = models.BooleanField(default=False)
    review_path = models.CharField(max_length=8, choices=ReviewPath.choices,
                                   default=ReviewPath.FULL)
    state = models.CharField(max_length=8, choices=ChangeState.choices,
                             default=ChangeState.OPEN)
    opened_at = models.DateTimeField()
    opened_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT,
                                  null=True, blank=True, related_name="+")
    reason = models.TextField(blank=True)
    closed_at = models.DateTimeField(null=True, blank=True)
    closed_by_revision = models.ForeignKey(
        "review.ProcessRevision", on_delete=models.PROTECT, null=True, blank=True,
        related_name="+")

    class Meta:
        ordering = ["-opened_at", "-id"]
        constraints = [
            models.UniqueConstraint(fields=["step"], condition=Q(state="open"),
                                    name="change_one_open_per_step"),
            models.CheckConstraint(
                condition=(Q(state="open", closed_at__isnull=True,
                             closed_by_revision__isnull=True)
                           | Q(state="closed", closed_at__isnull=False,
                               closed_by_revision__isnull=False)),
                name="change_closed_only_by_an_approval",
            ),
        ]
        triggers = [pgtrigger.Protect(name="change_record_never_deleted",
                                      operation=pgtrigger.Delete)]

    def __str__(self) -> str:
        return f"change to {self.step_label} ({self.state})"


class ChangeEntry(models.Model):
    """One change to the inputs of a step under a change record: who, why, what."""

    record = models.ForeignKey(ChangeRecord, on_delete=models.PROTECT, related_name="entries")
    at = models.DateTimeField()
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True,
                             blank=True, related_name="+")
    reason = models.TextField(blank=True)
    url = models.CharField(max_length=500, blank=True)
    inputs_hash_before = models.CharField(max_length=64, blank=True)
    inputs_hash_after = models.CharField(max_length=64)
    changes = models.JSONField(default=dict)  # input -> {"old": before, "new": after}
    back_to_approved = models.BooleanField(default=False)

    class Meta:
        ordering = ["record_id", "at", "id"]
        triggers = [pgtrigger.Protect(name="change_entry_append_only",
                                      operation=pgtrigger.Update | pgtrigger.Delete)]

    def __str__(self) -> str:
        return f"entry {self.pk} of change record {self.record_id}"


class Kind(models.TextChoices):
    SUBMISSION_WAITING = "submission_waiting", "A submission waits for your review"
    APPROVAL_WAITING = "approval_waiting", "A revision waits for your approval"
    FINDING_ASSIGNED = "finding_assigned", "A finding was assigned to you"
    FINDING_DUE = "finding_due", "A finding you own falls due"
    REVALIDATION_DUE = "revalidation_due", "An approval falls due for revalidation"
    APPROVAL_LAPSED = "approval_lapsed", "An approval no longer holds"
    MEASURE_DUE = "measure_due", "A protective measure you own falls due"


@tracked(exclude=["body", "emailed_at"])
class Notification(models.Model):
    """One message to one person. (kind, object, period, recipient) is its idempotency key:
    whatever runs twice finds the row and sends nothing again. The trail keeps who was told
    what and when it was read, or settled by the act it asked for (`services.
    notifications_settle`, under that act's context)."""

    recipient = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE,
                                  related_name="notifications")
    kind = models.CharField(max_length=20, choices=Kind.choices)
    object_key = models.CharField(max_length=80)  # "<app_label.model>:<pk>"
    period = models.CharField(max_length=40, blank=True)  # e.g. "2031-05-14:overdue"
    process = models.ForeignKey("hazards.Process", on_delete=models.SET_NULL, null=True,
                                blank=True, related_name="+")
    subject = models.CharField(max_length=250)
    body = models.TextField()
    link = models.CharField(max_length=300, blank=True)
    created_at = models.DateTimeField(db_default=Now())
    in_inbox = models.BooleanField(default=True)
    email_wanted = models.BooleanField(default=True)
    emailed_at = models.DateTimeField(null=True, blank=True)
    read_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at", "-id"]
        constraints = [
            models.UniqueConstraint(fields=["kind", "object_key", "period", "recipient"],
                                    name="notification_once_per_key"),
        ]
        indexes = [models.Index(fields=["recipient", "read_at"], name="notification_inbox")]

    def __str__(self) -> str:
        return f"{self.kind} to {self.recipient_id}: {self.subject}"


class NotificationPreference(models.Model):
    """Whether a person receives one kind of notification by e-mail and in the inbox
    (both on unless turned off)."""

    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE,
                             related_name="notification_preferences")
    kind = models.CharField(max_length=20, choices=Kind.choices)
    email = models.BooleanField(default=True)
    inbox = models.BooleanField(default=True)

    class Meta:
        ordering = ["user_id", "kind"]
        constraints = [
            models.UniqueConstraint(fields=["user", "kind"], name="preference_once_per_kind"),
        ]

    def __str__(self) -> str:
        return f"{self.user_id} {self.kind}: email={self.email} inbox={self.inbox}"
