"""Background rendering through the tasks API (django-tasks; django_tasks_db's db_worker)."""

from __future__ import annotations

import os
import socket

from django.conf import settings
from django_tasks import task

from hazards.dossier.models import DossierStatus


@task()
def render_dossier(dossier_id: int) -> str:
    """Render one queued dossier in a bounded child process; the row records the outcome.

    Two workers that pick up jobs for the same dossier cannot both render it: the claim is a
    state transition under a SKIP LOCKED row lock (services.dossier_claim).
    """
    from hazards.dossier.services import dossier_recover_stale, dossier_render

    # A render lives at most DOSSIER_RENDER_TIMEOUT_SECONDS (the child is killed past it), so
    # a row still `rendering` after its lease belongs to a worker that died: render it again.
    dossier_recover_stale(older_than_seconds=settings.DOSSIER_RENDER_LEASE_SECONDS,
                          max_attempts=settings.DOSSIER_RENDER_MAX_ATTEMPTS)
    worker = f"{socket.gethostname()}:{os.getpid()}"
    dossier = dossier_render(dossier_id=dossier_id, worker=worker, sandbox=True)
    return "skipped" if dossier is None else str(
        DossierStatus(dossier.status).value)
