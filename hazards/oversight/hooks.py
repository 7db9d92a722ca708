"""Where the oversight app listens: the indicator recompute (every change path passes
through it), signatures (submission, review, approval), transitions of revisions, findings,
measures and sites (interval). The acts also settle the notifications that asked for them,
in the act's own transaction (`services.notifications_settle`). Imported by the app's
`ready()` only, so the models are loaded when this module imports them."""

from __future__ import annotations

from django.db.models.signals import post_save

from hazards.models import Measure, MeasureStatus, Site
from hazards.oversight import changes, notify, queue, revalidation, services
from hazards.oversight.changes import light_path, on_approved_inputs_changed
from hazards.oversight.models import Kind, RevalidationSchedule
from hazards.review.models import (
    Finding,
    FindingStatus,
    Meaning,
    ProcessRevision,
    ReviewState,
    Signature,
    Transition,
)
from hazards.review.policies import provide_light_path
from hazards.services.indicators import approved_inputs_changed


def _signature_saved(sender, instance, created, using="default", **kwargs) -> None:
    if not created:
        return
    revision = instance.revision
    key = f"review.processrevision:{revision.pk}"
    if instance.meaning == Meaning.AUTHORED:
        queue.later(Kind.SUBMISSION_WAITING, key, using=using)
    elif instance.meaning == Meaning.REVIEWED:
        queue.later(Kind.APPROVAL_WAITING, key, using=using)
    elif instance.meaning == Meaning.APPROVED:
        revalidation.schedule_for(revision=revision, signed_at=instance.signed_at, using=using)
        changes.close_on_approval(revision=revision, signed_at=instance.signed_at, using=using)


def _transition_saved(sender, instance, created, using="default", **kwargs) -> None:
    """A revision that leaves "lodged" or "checked" no longer waits for a review or an
    approval; an approved revision also answers the revalidation of the process and the
    changes pending against its earlier approvals."""
    if not created:
        return
    revision_id = instance.revision_id
    key = f"review.processrevision:{revision_id}"
    if (instance.from_state in (ReviewState.LODGED, ReviewState.CHECKED)
            and instance.to_state != instance.from_state):
        services.notifications_settle(kinds=[Kind.SUBMISSION_WAITING, Kind.APPROVAL_WAITING],
                                      object_keys=[key], using=using)
    if instance.to_state == ReviewState.ENDORSED:
        process_id = instance.revision.process_id
        earlier = list(ProcessRevision.objects.using(using).filter(process_id=process_id)
                       .exclude(pk=revision_id).values_list("pk", flat=True))
        schedules = (RevalidationSchedule.objects.using(using).filter(process_id=process_id)
                     .exclude(revision_id=revision_id).values_list("pk", flat=True))
        services.notifications_settle(
            kinds=[Kind.APPROVAL_LAPSED],
            object_keys=[f"review.processrevision:{pk}" for pk in earlier], using=using)
        services.notifications_settle(
            kinds=[Kind.REVALIDATION_DUE],
            object_keys=[f"oversight.revalidationschedule:{pk}" for pk in schedules],
            using=using)


def _finding_saved(sender, instance, using="default", **kwargs) -> None:
    if instance.status == FindingStatus.OPEN:
        # The key names the owner (the recipient), so a new owner is told once as well.
        queue.later(Kind.FINDING_ASSIGNED, notify.key_of(instance), using=using)
    else:
        # Handed over for check, resolved or withdrawn: the owner has nothing left to do.
        services.notifications_settle(kinds=[Kind.FINDING_ASSIGNED, Kind.FINDING_DUE],
                                      object_keys=[notify.key_of(instance)], using=using)


def _measure_saved(sender, instance, using="default", **kwargs) -> None:
    if instance.status == MeasureStatus.PROVEN:
        services.notifications_settle(kinds=[Kind.MEASURE_DUE],
                                      object_keys=[notify.key_of(instance)], using=using)


def _site_saved(sender, instance, created, using="default", **kwargs) -> None:
    """A changed revalidation interval moves the due dates of the site's approvals at once
    (in the same transaction), not at the next daily refresh."""
    if not created:
        revalidation.refresh_schedules(site_id=instance.pk, using=using)


def connect() -> None:
    provide_light_path(light_path)
    approved_inputs_changed.connect(on_approved_inputs_changed, dispatch_uid="oversight-changes")
    post_save.connect(_signature_saved, sender=Signature, dispatch_uid="oversight-signature")
    post_save.connect(_transition_saved, sender=Transition,
                      dispatch_uid="oversight-transition")
    post_save.connect(_finding_saved, sender=Finding, dispatch_uid="oversight-finding")
    post_save.connect(_measure_saved, sender=Measure, dispatch_uid="oversight-measure")
    post_save.connect(_site_saved, sender=Site, dispatch_uid="oversight-site")
