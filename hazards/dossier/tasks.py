"""Background rendering through the tasks API (django-tasks; django_tasks_db's db_worker),
and the recovery of renders whose worker died (queued and enqueued again)."""

from __future__ import annotations

import os
import socket

from django.conf import settings
from django.db import transaction
from django.utils import timezone
from django_tasks import task

from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.rendering import LOST_WORKER, dossier_render


@task()
def render_dossier(dossier_id: int) -> str:
    """Render one queued dossier in a bounded child process; the row records the outcome.

    Two workers that pick up jobs for the same dossier cannot both render it: the claim is a
    state transition under a SKIP LOCKED row lock (rendering.dossier_claim).
    """
    # A render lives at most DOSSIER_RENDER_TIMEOUT_SECONDS (the child is killed past it), so
    # a row still `rendering` after its lease belongs to a worker that died: render it again.
    dossier_recover_stale(older_than_seconds=settings.DOSSIER_RENDER_LEASE_SECONDS,
                          max_attempts=settings.DOSSIER_RENDER_MAX_ATTEMPTS)
    worker = f"{socket.gethostname()}:{os.getpid()}"
    dossier = dossier_render(dossier_id=dossier_id, worker=worker, sandbox=True)
    return "skipped" if dossier is None else str(
        DossierStatus(dossier.status).value)


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
                render_dossier.enqueue(row.pk)
            else:
                row.status, row.error, row.finished_at = DossierStatus.FAILED, LOST_WORKER, \
                    timezone.now()
                row.save(update_fields=["status", "error", "finished_at"])
    return len(rows)
