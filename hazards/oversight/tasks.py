"""Background work of the oversight app (django-tasks; run by `manage.py db_worker`)."""

from __future__ import annotations

import datetime as dt

from django.db import connection, transaction
from django.utils import timezone
from django_tasks import default_task_backend, task
from django_tasks_db.models import DBTaskResult

from hazards.oversight.notify import deliver_now
from hazards.oversight.services import refresh_and_remind

# The periodic refresh runs once a day at this hour (UTC).
DAILY_AT_HOUR = 5
# Advisory lock key of `schedule_next` (an arbitrary constant of this project).
SCHEDULE_LOCK = 21_0009


@task()
def deliver(kind: str, object_key: str, period: str = "") -> int:
    """Write and e-mail the notifications of one idempotency key; returns how many were new."""
    return len(deliver_now(kind, object_key, period))


def next_run(now: dt.datetime) -> dt.datetime:
    at = now.replace(hour=DAILY_AT_HOUR, minute=0, second=0, microsecond=0)
    return at if at > now else at + dt.timedelta(days=1)


def schedule_next(now: dt.datetime | None = None) -> bool:
    """Queue tomorrow's run of `refresh_daily` unless one is already waiting (or the backend
    cannot defer, as in tests). Returns whether one was queued."""
    if not default_task_backend.supports_defer:
        return False
    with transaction.atomic():
        # Several workers may start at once: one at a time checks and queues.
        with connection.cursor() as cursor:
            cursor.execute("SELECT pg_advisory_xact_lock(%s)", [SCHEDULE_LOCK])
        waiting = DBTaskResult.objects.filter(
            task_path=refresh_daily.module_path, status="READY", run_after__isnull=False)
        if waiting.exists():
            return False
        refresh_daily.using(run_after=next_run(now or timezone.now())).enqueue()
    return True


@task()
def refresh_daily() -> dict:
    """Refresh due dates and send the reminders of today, then queue tomorrow's run."""
    result = refresh_and_remind()
    schedule_next()
    return result
