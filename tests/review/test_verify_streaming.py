"""`verify` walks the chain in bounded memory, shows its progress and resumes from a
checkpoint with the verdict a walk from the start gives (issue 22 item 3, verify part).

Common practice, no source: memory measured with the standard library's tracemalloc (its
peak over the walk), at two chain lengths."""

from __future__ import annotations

import io
import json
import tracemalloc

import pytest
from django.core.management import call_command
from django.db import connection

from hazards.models import ReactionStep
from hazards.review import audit
from hazards.review.chain_verify import CheckpointRefused, Walk, load_checkpoint
from hazards.review.selectors import event_model_for

pytestmark = pytest.mark.django_db


class Interrupted(Exception):
    pass


def add_events(step, count: int) -> str:
    """`count` more events of the step (copies of its latest one, so that the record still
    matches its last event), linked as a COMMIT would link them."""
    table = event_model_for(ReactionStep)._meta.db_table
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT attname FROM pg_attribute WHERE attrelid = %s::regclass AND attnum > 0 "
            "AND NOT attisdropped AND attname <> 'pgh_id'",
            [table],
        )
        cols = ", ".join(f'"{c}"' for (c,) in cursor.fetchall())
        cursor.execute(
            f'INSERT INTO "{table}" ({cols}) SELECT {cols} FROM "{table}" e, '
            f'generate_series(1, %s) WHERE e.pgh_id = (SELECT max(pgh_id) FROM "{table}" '
            "WHERE pgh_obj_id = %s)",
            [count, step.pk],
        )
    audit.link_pending_now()
    return table


def alter_event(table: str, pgh_id: int) -> None:
    with connection.cursor() as cursor:
        cursor.execute("SET session_replication_role = replica")
        cursor.execute(
            f'UPDATE "{table}" SET name = name || %s WHERE pgh_id = %s', [" (altered)", pgh_id]
        )
        cursor.execute("SET session_replication_role = DEFAULT")


def peak_of_walk(batch: int) -> tuple[int, int]:
    tracemalloc.start()
    try:
        problems = audit.verify_chain(batch=batch)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert problems == []
    return peak, len(problems)


@pytest.fixture
def step(process):
    return ReactionStep.objects.get(process=process)


def test_memory_of_the_walk_does_not_grow_with_the_number_of_events(step):
    add_events(step, 1500)
    small, _ = peak_of_walk(batch=500)
    add_events(step, 6000)  # five times the events
    large, _ = peak_of_walk(batch=500)
    # The previous verifier kept a digest of every event (~0.2 KB each here: +1.2 MB).
    assert large < small * 1.25 + 50_000, (small, large)


def test_a_walk_resumed_from_its_checkpoint_gives_the_same_verdict(step, tmp_path):
    table = add_events(step, 1200)
    ids = list(
        event_model_for(ReactionStep).objects.order_by("pgh_id").values_list("pgh_id", flat=True)
    )
    alter_event(table, ids[5])  # found before the interruption
    alter_event(table, ids[-5])  # found after it
    whole = [p.message for p in audit.verify_chain(batch=100)]
    assert len(whole) == 2 and all("the event row was altered" in p for p in whole)

    checkpoint = tmp_path / "verify.checkpoint"
    seen = []

    def stop_after_three(walk: Walk, last_seq: int) -> None:
        seen.append(walk.seq)
        if len(seen) == 3:
            raise Interrupted

    with pytest.raises(Interrupted):
        audit.verify_chain(batch=100, checkpoint=checkpoint, progress=stop_after_three)
    saved = load_checkpoint(checkpoint)
    assert saved.seq == seen[-1] and saved.checked == 300
    assert len(saved.problems) == 1  # the early alteration, carried over

    resumed = [p.message for p in audit.verify_chain(batch=100, checkpoint=checkpoint)]

    assert resumed == whole


def test_an_altered_checkpoint_is_refused(step, tmp_path):
    add_events(step, 300)
    checkpoint = tmp_path / "verify.checkpoint"
    with pytest.raises(Interrupted):
        audit.verify_chain(
            batch=100,
            checkpoint=checkpoint,
            progress=lambda walk, last: (_ for _ in ()).throw(Interrupted),
        )
    data = json.loads(checkpoint.read_text())
    data["problems"] = []  # hide what was found
    data["seq"] += 100
    checkpoint.write_text(json.dumps(data))

    with pytest.raises(CheckpointRefused):
        audit.verify_chain(batch=100, checkpoint=checkpoint)


def test_the_command_shows_progress_and_removes_its_checkpoint_when_done(step, tmp_path):
    add_events(step, 250)
    checkpoint = tmp_path / "verify.checkpoint"
    out, err = io.StringIO(), io.StringIO()

    call_command(
        "verify",
        "--progress",
        "--batch",
        "100",
        "--checkpoint",
        str(checkpoint),
        stdout=out,
        stderr=err,
    )

    bars = [line for line in err.getvalue().splitlines() if line.startswith("chain [")]
    assert len(bars) >= 3 and bars[-1].startswith("chain [" + "#" * 30 + "] 100.0%")
    assert "verify: no problems found" in out.getvalue()
    assert not checkpoint.exists()
