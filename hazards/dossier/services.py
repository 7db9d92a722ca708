"""Every write to dossiers: request, claim, finish, fail, retry (one module, row locks)."""

from __future__ import annotations

import hashlib
import logging

from django.db import connection, transaction
from django.utils import timezone

from hazards.dossier import review_bridge
from hazards.dossier.content import content_hashes, dossier_content
from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.render import DossierMeta, RenderError, render_in_process, render_sandboxed
from hazards.dossier.seal import seal_for
from hazards.models import Process

logger = logging.getLogger(__name__)

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
LOST_WORKER = "the worker rendering this dossier stopped before it finished"


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
        locked = Process.objects.select_for_update().select_related("site").get(pk=process.pk)
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
            from hazards.dossier.tasks import render_dossier

            render_dossier.enqueue(dossier.pk)
    return dossier, True


def dossier_claim(*, dossier_id: int, worker: str) -> Dossier | None:
    """Move a queued dossier to rendering; None when another worker has it or it is done.

    SKIP LOCKED: a second worker does not wait for the first one's lock, it moves on.
    """
    with transaction.atomic():
        dossier = (Dossier.objects.select_for_update(skip_locked=True)
                   .filter(pk=dossier_id, status=DossierStatus.QUEUED).first())
        if dossier is None:
            return None
        dossier.status = DossierStatus.RENDERING
        dossier.started_at = timezone.now()
        dossier.attempts += 1
        dossier.worker = worker[:120]
        dossier.error = ""
        dossier.save(update_fields=["status", "started_at", "attempts", "worker", "error"])
    return dossier


def dossier_finish(*, dossier: Dossier, pdf: bytes) -> Dossier:
    with transaction.atomic():
        row = Dossier.objects.select_for_update().get(pk=dossier.pk)
        if row.status != DossierStatus.RENDERING:
            raise RenderError(f"dossier {row.pk} is {row.status}, not rendering")
        row.pdf = pdf
        row.sha256 = hashlib.sha256(pdf).hexdigest()
        row.size_bytes = len(pdf)
        row.status = DossierStatus.DONE
        row.finished_at = timezone.now()
        row.save(update_fields=["pdf", "sha256", "size_bytes", "status", "finished_at"])
    return row


def dossier_fail(*, dossier: Dossier, error: str) -> Dossier:
    with transaction.atomic():
        row = Dossier.objects.select_for_update().get(pk=dossier.pk)
        if row.status == DossierStatus.DONE:
            return row
        row.status = DossierStatus.FAILED
        row.error = error[:2000]
        row.finished_at = timezone.now()
        row.save(update_fields=["status", "error", "finished_at"])
    return row


def dossier_render(*, dossier_id: int, worker: str = "inline", sandbox: bool = True,
                   **limits) -> Dossier | None:
    """Claim, render and store one dossier; None if it was not this worker's to render."""
    dossier = dossier_claim(dossier_id=dossier_id, worker=worker)
    if dossier is None:
        return None
    meta = DossierMeta.of(dossier)
    try:
        pdf = (render_sandboxed(dossier.content, meta, **limits) if sandbox
               else render_in_process(dossier.content, meta))
    except RenderError as exc:
        return dossier_fail(dossier=dossier, error=str(exc))
    except Exception as exc:  # noqa: BLE001 - recorded on the row, then re-raised
        logger.exception("dossier %s failed", dossier.pk)
        dossier_fail(dossier=dossier, error=f"{type(exc).__name__}: {exc}")
        raise
    try:
        return dossier_finish(dossier=dossier, pdf=pdf)
    except RenderError:
        raise  # no longer this worker's to finish (see dossier_finish)
    except Exception as exc:  # e.g. the disk full: never leave the row `rendering`
        logger.exception("dossier %s could not be stored", dossier.pk)
        full = "No space left on device" in str(exc) or getattr(exc, "errno", None) == 28
        dossier_fail(dossier=dossier, error="the PDF could not be stored ("
                     + ("no space left on device" if full else type(exc).__name__) + ")")
        raise


def dossier_retry(*, dossier: Dossier) -> Dossier:
    """Queue a failed dossier again (same version, same content)."""
    with transaction.atomic():
        row = Dossier.objects.select_for_update().get(pk=dossier.pk)
        if row.status != DossierStatus.FAILED:
            raise ValueError(NOT_RETRYABLE)
        row.status = DossierStatus.QUEUED
        row.save(update_fields=["status"])
        from hazards.dossier.tasks import render_dossier

        render_dossier.enqueue(row.pk)
    return row


def dossier_recover_stale(*, older_than_seconds: float, max_attempts: int = 3) -> int:
    """Dossiers left `rendering` by a worker that died (its lease ran out): queued and
    enqueued again, so another worker picks them up; failed (retry by hand) once they have
    been claimed `max_attempts` times, so a render that kills its worker cannot loop."""
    cutoff = timezone.now() - timezone.timedelta(seconds=older_than_seconds)
    with transaction.atomic():
        rows = list(Dossier.objects.select_for_update(skip_locked=True)
                    .filter(status=DossierStatus.RENDERING, started_at__lt=cutoff))
        for row in rows:
            if row.attempts < max_attempts:
                row.status, row.error = DossierStatus.QUEUED, LOST_WORKER
                row.save(update_fields=["status", "error"])
                from hazards.dossier.tasks import render_dossier

                render_dossier.enqueue(row.pk)
            else:
                row.status, row.error, row.finished_at = DossierStatus.FAILED, LOST_WORKER, \
                    timezone.now()
                row.save(update_fields=["status", "error", "finished_at"])
    return len(rows)
