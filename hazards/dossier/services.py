"""The queue side of dossiers: request and retry (row locks), which enqueue the render task.

Layers inside the app: this module -> `tasks` (the render job, recovery of lost renders) ->
`rendering` (claim, render, finish, fail). The lifecycle's functions are importable here as
well, so callers need one module.
"""

from __future__ import annotations

from django.db import connection, transaction
from django.utils import timezone

from hazards.dossier import review_bridge
from hazards.dossier.content import content_hashes, dossier_content
from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.rendering import (
    LOST_WORKER,
    dossier_claim,
    dossier_fail,
    dossier_finish,
    dossier_render,
)
from hazards.dossier.seal import seal_for
from hazards.dossier.tasks import dossier_recover_stale, render_dossier
from hazards.models import Process

__all__ = [
    "LOST_WORKER",
    "NOT_RETRYABLE",
    "ReissueLimited",
    "dossier_claim",
    "dossier_fail",
    "dossier_finish",
    "dossier_recover_stale",
    "dossier_render",
    "dossier_request",
    "dossier_retry",
]

NOT_RETRYABLE = "Only a failed dossier can be queued again."
REISSUE_WINDOW = timezone.timedelta(hours=24)
REISSUE_LIMITED = ("This process has had {count} dossiers issued in the last 24 hours, the most "
                   "a re-issue may add (EXOLEDGER_DOSSIER_REISSUES_PER_DAY); the re-issue can "
                   "be requested again in {minutes} min.")


class ReissueLimited(Exception):
    """Too many re-issues of one process's dossier within REISSUE_WINDOW."""

    def __init__(self, message: str, retry_after_seconds: int):
        super().__init__(message)
        self.message = message
        self.retry_after_seconds = retry_after_seconds


def _next_id() -> int:
    with connection.cursor() as cursor:
        cursor.execute("SELECT nextval(pg_get_serial_sequence(%s, 'id'))",
                       [Dossier._meta.db_table])
        return cursor.fetchone()[0]


def _reissue_check(process: Process, content_sha: str, max_reissues: int | None):
    """The queued re-issue of this content to coalesce with, or None; ReissueLimited when
    the process had `max_reissues` dossiers in the window already (None: no limit)."""
    queued = (Dossier.objects.filter(process=process, content_sha256=content_sha,
                                     status=DossierStatus.QUEUED).order_by("-version").first())
    if queued is not None:
        return queued
    if max_reissues is None:
        return None
    since = timezone.now() - REISSUE_WINDOW
    recent = list(Dossier.objects.filter(process=process, created_at__gte=since)
                  .order_by("created_at").values_list("created_at", flat=True)[:max_reissues])
    if len(recent) >= max_reissues:
        wait = max(1, int((recent[0] + REISSUE_WINDOW - timezone.now()).total_seconds()) + 1)
        raise ReissueLimited(REISSUE_LIMITED.format(count=len(recent),
                                                    minutes=(wait + 59) // 60), wait)
    return None


def dossier_request(*, process: Process, requested_by=None, reason: str = "",
                    reissue: bool = False, enqueue: bool = True,
                    max_reissues: int | None = None) -> tuple[Dossier, bool]:
    """A dossier of the process's latest revision: (dossier, created).

    The same content already issued or on its way is returned as is, unless `reissue`;
    a new revision (new content) or a re-issue gets the next version number. A re-issue
    while one of the same content still waits in the queue gets that one (coalesced), and
    `max_reissues` (the API passes EXOLEDGER_DOSSIER_REISSUES_PER_DAY) bounds the dossiers a
    re-issue may bring a process to within 24 hours (ReissueLimited). The render job is
    enqueued in the same transaction, so a rolled-back request leaves no job behind.
    """
    with transaction.atomic():
        # Serialises version numbers per process.
        locked = Process.objects.select_for_update(no_key=True, of=("self",)).select_related("site").get(pk=process.pk)
        revision = review_bridge.latest_revision(locked, reconcile=True)
        content = dossier_content(locked, revision)
        content_sha, context_sha = content_hashes(content)
        existing = (Dossier.objects.filter(process=locked, content_sha256=content_sha)
                    .exclude(status=DossierStatus.FAILED).order_by("-version").first())
        if existing is not None and not reissue:
            return existing, False
        if reissue:
            coalesced = _reissue_check(locked, content_sha, max_reissues)
            if coalesced is not None:
                return coalesced, False
        last = Dossier.objects.filter(process=locked).order_by("-version").first()
        version = (last.version + 1) if last else 1
        pk = _next_id()
        dossier = Dossier.objects.create(
            pk=pk, process=locked, revision=revision, version=version, content=content,
            content_sha256=content_sha, context_sha256=context_sha,
            seal=seal_for(dossier_id=pk, process_id=locked.pk, version=version,
                          content_sha256=content_sha, context_sha256=context_sha),
            requested_by=requested_by, reason=reason[:200], created_at=timezone.now(),
        )
        if enqueue:
            render_dossier.enqueue(dossier.pk)
    return dossier, True


def dossier_retry(*, dossier: Dossier) -> Dossier:
    """Queue a failed dossier again (same version, same content)."""
    with transaction.atomic():
        row = Dossier.objects.select_for_update().get(pk=dossier.pk)
        if row.status != DossierStatus.FAILED:
            raise ValueError(NOT_RETRYABLE)
        row.status = DossierStatus.QUEUED
        row.save(update_fields=["status"])
        render_dossier.enqueue(row.pk)
    return row
