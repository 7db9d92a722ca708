"""The rendering side of dossiers: claim a queued dossier, render it, store the PDF or the
failure (row locks). Imports neither the queue side nor the task."""

from __future__ import annotations

import hashlib
import logging

from django.db import transaction
from django.utils import timezone

from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.render import DossierMeta, RenderError, render_in_process, render_sandboxed

logger = logging.getLogger(__name__)

LOST_WORKER = "the worker rendering this dossier stopped before it finished"


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
