"""Notifications: who is told what, once, by e-mail and in the inbox.

Events inside a request only enqueue a background task on commit (`later`); the task
(`tasks.deliver`) works out the recipients from the review's roles at that moment, writes
one `Notification` per person under its idempotency key (kind, object, period, recipient)
and sends the e-mails of the rows it created. Nobody without a role on the process is told.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

from django.apps import apps
from django.conf import settings
from django.contrib.auth import get_user_model
from django.core.mail import send_mail
from django.db import IntegrityError, transaction
from django.utils import timezone

from hazards.models import Measure, MeasurePolicy, MeasureStatus
from hazards.oversight.dates import DEFAULT_SOURCE, OVERDUE, due_state
from hazards.oversight.models import (
    ChangePolicy,
    ChangeRecord,
    Kind,
    Notification,
    NotificationPreference,
)
from hazards.oversight.readable import describe
from hazards.oversight.revalidation import active_schedules
from hazards.quantities import STANDARD_UNITS, display_units
from hazards.review.access import roles_on
from hazards.review.models import Finding, FindingStatus, ProcessRole, ReviewState

CAUTION = ("Exoledger supports and does not replace a qualified assessment; local codes, "
           "company standards and licensed practice prevail.")
# Who hears of each kind (besides the named owner of a finding).
KIND_ROLES = {
    Kind.SUBMISSION_WAITING: ("reviewer",),
    Kind.APPROVAL_WAITING: ("approver",),
    Kind.REVALIDATION_DUE: ("author", "reviewer", "approver"),
    Kind.APPROVAL_LAPSED: ("author", "reviewer", "approver"),
}


@dataclass
class Notice:
    process: object
    recipients: list
    subject: str
    body: str
    link: str = ""
    extra: dict = field(default_factory=dict)


def key_of(obj) -> str:
    return f"{obj._meta.label_lower}:{obj.pk}"


def _people_with_roles(process_id: int, roles, exclude=()) -> list:
    ids = (ProcessRole.objects.filter(process_id=process_id, role__in=roles)
           .exclude(user_id__in=list(exclude)).values("user_id"))
    return list(get_user_model().objects.filter(pk__in=ids, is_active=True).order_by("pk"))


def _owner_if_on_process(finding) -> list:
    owner = finding.owner
    return [owner] if owner.is_active and roles_on(owner, finding.process_id) else []


def _revision_notice(revision, kind) -> Notice | None:
    waiting = {Kind.SUBMISSION_WAITING: ReviewState.LODGED,
               Kind.APPROVAL_WAITING: ReviewState.CHECKED}[kind]
    if revision.state != waiting:
        return None  # it moved on before the task ran: nothing waits any more
    signers = revision.signatures.values_list("signer_id", flat=True)
    people = _people_with_roles(revision.process_id, KIND_ROLES[kind], exclude=signers)
    what = "review" if kind == Kind.SUBMISSION_WAITING else "approval"
    process = revision.process
    return Notice(process, people,
                  f"Waiting for your {what}: {process.name}, revision {revision.number}",
                  f"Revision {revision.number} of {process.name} ({process.site.name}) is "
                  f"{revision.get_state_display().lower()} and waits for your {what}.",
                  f"/processes/{process.pk}/review/")


def _finding_notice(finding, kind, period) -> Notice | None:
    if finding.status != FindingStatus.OPEN:
        return None
    process = finding.process
    if kind == Kind.FINDING_ASSIGNED:
        subject = f"Finding assigned to you: {finding.title}"
        body = (f"A {finding.get_kind_display().lower()} finding on {process.name} was "
                f"assigned to you, due {finding.due_date:%Y-%m-%d}.")
    else:
        overdue = period.endswith(":overdue")
        subject = (f"Finding overdue since {finding.due_date:%Y-%m-%d}: {finding.title}"
                   if overdue else f"Finding due {finding.due_date:%Y-%m-%d}: {finding.title}")
        body = (f"The finding \u201c{finding.title}\u201d on {process.name} that you own "
                f"{'is overdue' if overdue else 'falls due'} ({finding.due_date:%Y-%m-%d}).")
    return Notice(process, _owner_if_on_process(finding), subject, body,
                  f"/findings/{finding.pk}/")


def _measure_notice(measure, period) -> Notice | None:
    if measure.status == MeasureStatus.PROVEN:
        return None
    step, owner = measure.step, measure.owner
    process = step.process
    overdue = period.endswith(":overdue")
    what = f"{measure.get_kind_display()} on {measure.acts_on}"
    subject = (f"Protective measure overdue since {measure.due_date:%Y-%m-%d}: {what}"
               if overdue else f"Protective measure due {measure.due_date:%Y-%m-%d}: {what}")
    body = (f"The protective measure \u201c{what}\u201d of step {step.sequence}. {step.name} "
            f"({process.name}) that you own is {measure.get_status_display().lower()} and "
            f"{'is overdue' if overdue else 'falls due'} ({measure.due_date:%Y-%m-%d}). The "
            "site's policy may require it proven, with its evidence, before the approval.")
    people = [owner] if owner.is_active and roles_on(owner, process.pk) else []
    return Notice(process, people, subject, body, f"/steps/{step.pk}/#measures")


REVALIDATION_TODO = (
    "What to do: on the review page of the process (link below) an author opens a new draft "
    "revision, checks the data and indicators of every step against the plant as it runs now, "
    "corrects what changed (each change with its reason) and submits the revision for review; "
    "a reviewer reviews it and an approver approves it. That approval starts the next "
    "interval; until then the current approval stays in force.")


def _revalidation_notice(schedule, period) -> Notice | None:
    if schedule.revision.state != ReviewState.ENDORSED:
        return None
    process = schedule.process
    overdue = period.endswith(":overdue")
    subject = (f"Revalidation overdue since {schedule.due_on:%Y-%m-%d}: {process.name}"
               if overdue else f"Revalidation due {schedule.due_on:%Y-%m-%d}: {process.name}")
    body = (f"The approval of revision {schedule.revision.number} of {process.name} "
            f"({process.site.name}), given {schedule.approved_on:%Y-%m-%d}, "
            f"{'was' if overdue else 'is'} due for revalidation on {schedule.due_on:%Y-%m-%d} "
            f"(interval {schedule.interval_months} months). Default interval: "
            f"{DEFAULT_SOURCE}\n\n{REVALIDATION_TODO}")
    return Notice(process, _people_with_roles(process.pk, KIND_ROLES[Kind.REVALIDATION_DUE]),
                  subject, body, f"/processes/{process.pk}/review/")


def _lapsed_notice(revision) -> Notice | None:
    process = revision.process
    records = list(ChangeRecord.objects.filter(approved_revision=revision).order_by("pk"))
    if not records:
        return None
    lines = [f"- {r.step_label}: {describe(r)}" for r in records]
    return Notice(process, _people_with_roles(process.pk, KIND_ROLES[Kind.APPROVAL_LAPSED]),
                  f"Changes pending against the approval of {process.name}, revision "
                  f"{revision.number}",
                  f"The inputs of approved steps of {process.name} changed after revision "
                  f"{revision.number} was approved. Revision {revision.number} stays in force "
                  "until a later revision is approved; the changes collect in the next draft, "
                  "which needs review and approval before the plant may run on it.\n"
                  + "\n".join(lines), f"/changes/?process={process.pk}")


def build(kind: str, object_key: str, period: str) -> Notice | None:
    """What to say and to whom, from the records as they are now (None: nothing to say).

    A notice is one text read by several people: it is written in the site's standard units,
    never in the display units of the person whose request happened to queue it."""
    with display_units(STANDARD_UNITS):
        return _build(kind, object_key, period)


def _build(kind: str, object_key: str, period: str) -> Notice | None:
    label, _, pk = object_key.rpartition(":")
    model = apps.get_model(label)
    obj = model._base_manager.filter(pk=pk).first()
    if obj is None:
        return None
    if kind in (Kind.SUBMISSION_WAITING, Kind.APPROVAL_WAITING):
        return _revision_notice(obj, kind)
    if kind in (Kind.FINDING_ASSIGNED, Kind.FINDING_DUE):
        return _finding_notice(obj, kind, period)
    if kind == Kind.REVALIDATION_DUE:
        return _revalidation_notice(obj, period)
    if kind == Kind.APPROVAL_LAPSED:
        return _lapsed_notice(obj)
    if kind == Kind.MEASURE_DUE:
        return _measure_notice(obj, period)
    raise ValueError(f"unknown notification kind {kind!r}")


def preferences(user_ids, kind) -> dict[int, NotificationPreference]:
    return {p.user_id: p for p in NotificationPreference.objects.filter(
        user_id__in=list(user_ids), kind=kind)}


def deliver_now(kind: str, object_key: str, period: str = "") -> list[Notification]:
    """Write the notifications of one key and e-mail them; returns the rows created now."""
    notice = build(kind, object_key, period)
    if notice is None or not notice.recipients:
        return []
    prefs = preferences([u.pk for u in notice.recipients], kind)
    created = []
    for user in notice.recipients:
        pref = prefs.get(user.pk) or NotificationPreference(email=True, inbox=True)
        if not (pref.email or pref.inbox):
            continue
        try:
            with transaction.atomic():
                row, new = Notification.objects.get_or_create(
                    kind=kind, object_key=object_key, period=period, recipient=user,
                    defaults={"process": notice.process, "subject": notice.subject[:250],
                              "body": notice.body, "link": notice.link,
                              "in_inbox": pref.inbox, "email_wanted": pref.email})
        except IntegrityError:  # a concurrent delivery of the same key won
            continue
        if new:
            created.append(row)
    send_emails([n.pk for n in created])
    return created


def send_emails(ids) -> int:
    """E-mail the rows not yet e-mailed, each under a row lock so that two workers never
    send one row twice."""
    sent = 0
    base = getattr(settings, "EXOLEDGER_BASE_URL", "").rstrip("/")
    for pk in ids:
        with transaction.atomic():
            row = (Notification.objects.select_for_update(skip_locked=True)
                   .select_related("recipient")
                   .filter(pk=pk, emailed_at__isnull=True, email_wanted=True).first())
            if row is None or not row.recipient.email:
                continue
            link = f"\n\n{base}{row.link}" if row.link else ""
            send_mail(f"[Exoledger] {row.subject}", f"{row.body}{link}\n\n{CAUTION}\n",
                      None, [row.recipient.email])
            row.emailed_at = timezone.now()
            row.save(update_fields=["emailed_at"])
            sent += 1
    return sent


def remind(*, on: dt.date) -> dict:
    """Reminders of findings and revalidations that fall due or are overdue on `on`;
    each (object, due date, stage) is told once per person however often this runs."""
    policies = {p.site_id: p for p in ChangePolicy.objects.all()}
    default = ChangePolicy()
    counts = {"finding_due": 0, "revalidation_due": 0}
    longest = max([default.finding_notice_days,
                   *[p.finding_notice_days for p in policies.values()]])
    for finding in (Finding.objects.filter(status=FindingStatus.OPEN,
                                           due_date__lte=on + dt.timedelta(days=longest))
                    .select_related("process").order_by("due_date", "pk")):
        days = policies.get(finding.process.site_id, default).finding_notice_days
        stage = due_state(finding.due_date, on, days)
        if stage not in ("due", OVERDUE):
            continue
        counts["finding_due"] += len(deliver_now(Kind.FINDING_DUE, key_of(finding),
                                                 f"{finding.due_date}:{stage}"))
    longest = max([default.revalidation_notice_days,
                   *[p.revalidation_notice_days for p in policies.values()]])
    for schedule in active_schedules().filter(due_on__lte=on + dt.timedelta(days=longest)):
        days = policies.get(schedule.process.site_id, default).revalidation_notice_days
        stage = due_state(schedule.due_on, on, days)
        if stage not in ("due", OVERDUE):
            continue
        counts["revalidation_due"] += len(deliver_now(Kind.REVALIDATION_DUE, key_of(schedule),
                                                      f"{schedule.due_on}:{stage}"))
    counts["measure_due"] = _remind_measures(on)
    return counts


def _remind_measures(on: dt.date) -> int:
    """Owners of measures not yet proven, as their due date nears (the site's
    `MeasurePolicy.reminder_days`) and once overdue."""
    policies = {p.site_id: p.reminder_days for p in MeasurePolicy.objects.all()}
    default = MeasurePolicy().reminder_days
    longest = max([default, *policies.values()])
    sent = 0
    for measure in (Measure.objects.exclude(status=MeasureStatus.PROVEN)
                    .filter(due_date__lte=on + dt.timedelta(days=longest))
                    .select_related("step__process").order_by("due_date", "pk")):
        days = policies.get(measure.step.process.site_id, default)
        stage = due_state(measure.due_date, on, days)
        if stage in ("due", OVERDUE):
            sent += len(deliver_now(Kind.MEASURE_DUE, key_of(measure),
                                    f"{measure.due_date}:{stage}"))
    return sent
