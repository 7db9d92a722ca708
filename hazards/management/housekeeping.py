"""Housekeeping that keeps the database the size of its content, run every minute by
`manage.py housekeeping --every 60` (started by `serve`).

- Jobs of a worker that died: a dossier left `rendering` past its lease is queued again (at
  most `DOSSIER_RENDER_MAX_ATTEMPTS` claims, then failed), and a task row left `RUNNING` past
  the lease is marked `FAILED` with the reason, so the task table never shows a dead job as
  running. No live job runs that long: a render is killed at its timeout, the lease is twice
  that plus a minute.
- The recompute queue: every write inserts and deletes its rows in its own transaction, so
  the table holds no live row between transactions but gathers dead ones; it is vacuumed here
  whatever the server's autovacuum does (it may be off), and its own autovacuum thresholds
  are low (migration 0008) for servers where it is on.
- Superseded indicator snapshots (every forced recompute adds one per step) are pruned by
  `SNAPSHOT_RETENTION`.
"""

from __future__ import annotations

import datetime as dt
import logging

from django.conf import settings
from django.db import connection
from django.utils import timezone
from django_tasks.base import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from hazards.dossier.services import dossier_recover_stale

log = logging.getLogger(__name__)

SWEEP_SECONDS = 60
KEEP_SNAPSHOTS_PER_STEP = 30
LOST_TASK = ("the worker running this task stopped before it finished "
             "(no result within its lease); swept by housekeeping")
QUEUE_TABLE = "hazards_pendingrecompute"

SNAPSHOT_RETENTION = f"""
A superseded snapshot (not current) is deleted unless
- it is one of the newest {KEEP_SNAPSHOTS_PER_STEP} of its step (what the step page's history
  shows), or
- its class differs from the snapshot before it (the class history stays whole), or
- a revision's or a dossier's frozen content holds its step, inputs hash and calcs version
  and it is the first snapshot of the step with those (what was reviewed, signed or printed
  keeps its snapshot; the copies a forced recompute made of the same numbers do not stay).
"""

_PRUNE_SQL = """
WITH referenced AS (
    SELECT (s->>'id')::bigint AS step_id,
           coalesce(s->'indicators'->>'inputs_hash', s->'snapshot'->>'inputs_hash') AS h,
           coalesce(s->'indicators'->>'calcs_version', s->'snapshot'->>'calcs_version') AS v
    FROM review_processrevision r,
         jsonb_array_elements(CASE WHEN jsonb_typeof(r.content->'steps') = 'array'
                                   THEN r.content->'steps' ELSE '[]'::jsonb END) s
    UNION
    SELECT (s->>'id')::bigint,
           coalesce(s->'indicators'->>'inputs_hash', s->'snapshot'->>'inputs_hash'),
           coalesce(s->'indicators'->>'calcs_version', s->'snapshot'->>'calcs_version')
    FROM dossier_dossier d,
         jsonb_array_elements(CASE
             WHEN jsonb_typeof(d.content->'record'->'steps') = 'array'
             THEN d.content->'record'->'steps'
             WHEN jsonb_typeof(d.content->'steps') = 'array' THEN d.content->'steps'
             ELSE '[]'::jsonb END) s
), ranked AS (
    SELECT id, step_id, inputs_hash, calcs_version, is_current, criticality_class,
           row_number() OVER (PARTITION BY step_id, inputs_hash, calcs_version
                              ORDER BY computed_at, id) AS copy_nth,
           row_number() OVER (PARTITION BY step_id ORDER BY computed_at DESC, id DESC) AS rn,
           lag(criticality_class) OVER (PARTITION BY step_id ORDER BY computed_at, id)
               AS prev_class,
           row_number() OVER (PARTITION BY step_id ORDER BY computed_at, id) AS nth
    FROM hazards_indicatorsnapshot
)
DELETE FROM hazards_indicatorsnapshot d
USING ranked
WHERE d.id = ranked.id
  AND NOT ranked.is_current
  AND ranked.rn > %(keep)s
  AND ranked.nth > 1
  AND ranked.prev_class IS NOT DISTINCT FROM ranked.criticality_class
  AND NOT (ranked.copy_nth = 1 AND EXISTS (
      SELECT 1 FROM referenced f
      WHERE f.step_id = d.step_id AND f.h = d.inputs_hash AND f.v = d.calcs_version))
"""


def sweep_lost_tasks(*, lease_seconds: float, now: dt.datetime | None = None) -> int:
    """Task rows still `RUNNING` past the lease are marked `FAILED` with the reason."""
    now = now or timezone.now()
    return DBTaskResult.objects.filter(
        status=TaskResultStatus.RUNNING, started_at__lt=now - dt.timedelta(seconds=lease_seconds)
    ).update(status=TaskResultStatus.FAILED, finished_at=now,
             exception_class_path="hazards.management.housekeeping.LostWorker",
             traceback=LOST_TASK)


def prune_snapshots(*, keep: int = KEEP_SNAPSHOTS_PER_STEP) -> int:
    """Delete the superseded snapshots that `SNAPSHOT_RETENTION` lets go; returns how many."""
    with connection.cursor() as cursor:
        cursor.execute(_PRUNE_SQL, {"keep": keep})
        return cursor.rowcount


def vacuum_queue() -> bool:
    """VACUUM the recompute queue (not possible inside a transaction: then skipped)."""
    if connection.in_atomic_block:
        return False
    with connection.cursor() as cursor:
        cursor.execute(f"VACUUM {QUEUE_TABLE}")
    return True


def housekeeping(*, now: dt.datetime | None = None) -> dict:
    """One sweep: lost jobs, the queue, old snapshots. Safe to run on several hosts at once."""
    lease = settings.DOSSIER_RENDER_LEASE_SECONDS
    result = {
        "dossiers_recovered": dossier_recover_stale(
            older_than_seconds=lease, max_attempts=settings.DOSSIER_RENDER_MAX_ATTEMPTS),
        "tasks_marked_failed": sweep_lost_tasks(lease_seconds=lease, now=now),
        "snapshots_pruned": prune_snapshots(),
        "queue_vacuumed": vacuum_queue(),
    }
    if any(v for k, v in result.items() if k != "queue_vacuumed"):
        log.info("housekeeping: %s", result)
    return result
