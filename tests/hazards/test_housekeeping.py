"""Housekeeping: the recompute queue stays bounded under write load, superseded snapshots
are pruned by the retention rule (checked against the rule written out in Python), a dead
worker's jobs are recovered and its task rows never stay `RUNNING`."""

from __future__ import annotations

import datetime as dt

import pytest
from django.conf import settings
from django.db import connection, transaction
from django.utils import timezone
from django_tasks.base import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from hazards.management import housekeeping as hk
from hazards.models import IndicatorSnapshot, ReactionStep
from hazards.services.indicators import recompute_steps
from tests.conftest import make_user
from tests.review.factories import assessed_process, revision_in

QUEUE = hk.QUEUE_TABLE


def _write_load(cycles: int, step_ids: list[int]) -> None:
    """What every write does to the queue, in its own transaction: the trigger's INSERT of
    the changed steps, then flush_pending's DELETE … RETURNING (hazards.models.triggers,
    hazards.services.indicators.flush_pending), without the recompute in between."""
    with connection.cursor() as cursor:
        for i in range(cycles):
            with transaction.atomic():
                cursor.execute(
                    f"INSERT INTO {QUEUE} (step_id, queued_at) VALUES (%s, now()), (%s, now())",
                    [step_ids[i % len(step_ids)], step_ids[(i + 1) % len(step_ids)]],
                )
                cursor.execute(f"DELETE FROM {QUEUE} RETURNING step_id")
                cursor.fetchall()


def _size() -> int:
    with connection.cursor() as cursor:
        cursor.execute("SELECT pg_total_relation_size(%s)", [QUEUE])
        return cursor.fetchone()[0]


@pytest.mark.django_db(transaction=True)
def test_the_recompute_queue_stays_bounded_under_write_load():
    with connection.cursor() as cursor:  # the control below must not meet autovacuum
        cursor.execute(f"ALTER TABLE {QUEUE} SET (autovacuum_enabled = false)")
    try:
        hk.vacuum_queue()
        sizes = []
        for _ in range(5):
            _write_load(400, [1, 2, 3])
            assert hk.vacuum_queue()
            sizes.append(_size())
        # With the sweep, the space of the dead rows is used again: after the indexes have
        # reached their working size (round 2), three more rounds add nothing.
        assert max(sizes[2:]) <= sizes[1], sizes
        # The control: the same load without the sweep grows the table (so the check above
        # can fail). Common practice, no source: PostgreSQL reclaims deleted rows only by
        # VACUUM; page pruning keeps their line pointers and index entries.
        before = _size()
        _write_load(1200, [1, 2, 3])
        assert _size() > before, (before, _size())
        hk.vacuum_queue()
    finally:
        with connection.cursor() as cursor:
            cursor.execute(f"ALTER TABLE {QUEUE} RESET (autovacuum_enabled)")


@pytest.mark.django_db
def test_the_queue_table_has_its_own_low_autovacuum_thresholds():
    with connection.cursor() as cursor:
        cursor.execute("SELECT reloptions FROM pg_class WHERE relname = %s", [QUEUE])
        options = set(cursor.fetchone()[0] or [])
    assert {"autovacuum_vacuum_threshold=200", "autovacuum_vacuum_scale_factor=0"} <= options


def _expected_kept(snaps: list, referenced: set, keep: int) -> set:
    """The retention rule of hazards.management.housekeeping, written out in Python."""
    ordered = sorted(snaps, key=lambda s: (s.computed_at, s.id))
    newest = {s.id for s in sorted(ordered, key=lambda s: (s.computed_at, s.id))[-keep:]}
    kept, seen_copies, previous = set(), set(), object()
    for i, s in enumerate(ordered):
        copy = (s.inputs_hash, s.calcs_version)
        first_copy = copy not in seen_copies
        seen_copies.add(copy)
        if (
            s.is_current
            or s.id in newest
            or i == 0
            or s.criticality_class != previous
            or (first_copy and copy in referenced)
        ):
            kept.add(s.id)
        previous = s.criticality_class
    return kept


@pytest.mark.django_db
def test_superseded_snapshots_are_pruned_by_the_retention_rule():
    people = {n: make_user(n) for n in ("author", "reviewer", "approver", "auditor")}
    process = assessed_process(**people)
    author = people["author"]
    step = ReactionStep.objects.filter(process=process).order_by("sequence").first()
    lodged = revision_in(process, "lodged", author=author)
    held = lodged.content["steps"][0]["indicators"]
    referenced = {(held["inputs_hash"], held["calcs_version"])}
    signed_snapshot = IndicatorSnapshot.objects.get(step=step, is_current=True)
    step.reaction_mass_kg *= 1.1
    step.save()
    for _ in range(hk.KEEP_SNAPSHOTS_PER_STEP + 8):
        with transaction.atomic():
            recompute_steps([step.pk], force=True)  # as `recompute_indicators --force`
    before = list(IndicatorSnapshot.objects.filter(step=step))
    expected = _expected_kept(before, referenced, hk.KEEP_SNAPSHOTS_PER_STEP)
    assert hk.prune_snapshots() == len(before) - len(expected) > 0
    after = set(IndicatorSnapshot.objects.filter(step=step).values_list("id", flat=True))
    assert after == expected
    assert signed_snapshot.pk in after  # what the author signed keeps its snapshot
    assert hk.prune_snapshots() == 0  # a second sweep finds nothing more


@pytest.mark.django_db
def test_a_dead_workers_task_rows_are_failed_past_the_lease_and_live_ones_left_alone():
    now = timezone.now()
    lease = settings.DOSSIER_RENDER_LEASE_SECONDS

    def row(started):
        return DBTaskResult.objects.create(
            status=TaskResultStatus.RUNNING,
            started_at=started,
            args_kwargs={"args": [1], "kwargs": {}},
            task_path="hazards.dossier.tasks.render_dossier",
            backend_name="default",
            queue_name="default",
            run_after=started,
            worker_ids=["host:1"],
        )

    dead = row(now - dt.timedelta(seconds=lease + 5))
    alive = row(now - dt.timedelta(seconds=5))
    result = hk.housekeeping(now=now)
    assert result["tasks_marked_failed"] == 1 and result["queue_vacuumed"] is False
    dead.refresh_from_db()
    alive.refresh_from_db()
    assert dead.status == TaskResultStatus.FAILED and hk.LOST_TASK in dead.traceback
    assert dead.finished_at == now
    assert alive.status == TaskResultStatus.RUNNING
