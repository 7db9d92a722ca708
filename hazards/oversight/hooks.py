"""Where the oversight app listens: the indicator recompute (every change path passes
through it), signatures (submission, review, approval), findings and sites (interval)."""

from __future__ import annotations

from django.db.models.signals import post_save


def _signature_saved(sender, instance, created, using="default", **kwargs) -> None:
    from hazards.oversight import changes, queue, revalidation
    from hazards.oversight.models import Kind
    from hazards.review.models import Meaning

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


def _finding_saved(sender, instance, using="default", **kwargs) -> None:
    from hazards.oversight import notify, queue
    from hazards.oversight.models import Kind
    from hazards.review.models import FindingStatus

    if instance.status == FindingStatus.OPEN:
        # The key names the owner (the recipient), so a new owner is told once as well.
        queue.later(Kind.FINDING_ASSIGNED, notify.key_of(instance), using=using)


def _site_saved(sender, instance, created, using="default", **kwargs) -> None:
    """A changed revalidation interval moves the due dates of the site's approvals at once
    (in the same transaction), not at the next daily refresh."""
    from hazards.oversight import revalidation

    if not created:
        revalidation.refresh_schedules(site_id=instance.pk, using=using)


def connect() -> None:
    from hazards.models import Site
    from hazards.oversight.changes import light_path, on_approved_inputs_changed
    from hazards.review.models import Finding, Signature
    from hazards.review.policies import provide_light_path
    from hazards.services.indicators import approved_inputs_changed

    provide_light_path(light_path)
    approved_inputs_changed.connect(on_approved_inputs_changed, dispatch_uid="oversight-changes")
    post_save.connect(_signature_saved, sender=Signature, dispatch_uid="oversight-signature")
    post_save.connect(_finding_saved, sender=Finding, dispatch_uid="oversight-finding")
    post_save.connect(_site_saved, sender=Site, dispatch_uid="oversight-site")
