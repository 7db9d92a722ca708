"""The audit chain links a transaction's events at its COMMIT (issue 22 item 4): the chain
lock is not held through the transaction body (the indicator recompute), concurrent writers
still get one complete, ordered, intact chain, and nothing commits without its links.

Run against real PostgreSQL (transactional test databases, so transactions really commit);
CI runs the suite on the embedded server and on a PostgreSQL server (DATABASE_URL)."""

from __future__ import annotations

import threading

import pghistory
import psycopg
import pytest
from django.db import connection, transaction

from hazards.models import CalorimetryRun, ReactionStep
from hazards.review import audit
from hazards.review.models import ChainLink, ChainPending
from hazards.review.selectors import event_model_for
from hazards.services.indicators import flush_pending
from hazards.services.records import record_create, record_update
from tests.factories import StepFactory

pytestmark = pytest.mark.django_db(transaction=True)


def other_connection() -> psycopg.Connection:
    return psycopg.connect(**connection.get_connection_params(), autocommit=True)


def chain_lock_free(conn) -> bool:
    """Whether another session could take the chain lock right now (taken and let go)."""
    free = conn.execute("SELECT pg_try_advisory_lock(%s)", [audit.CHAIN_LOCK_KEY]).fetchone()[0]
    if free:
        conn.execute("SELECT pg_advisory_unlock(%s)", [audit.CHAIN_LOCK_KEY])
    return free


def test_a_writing_transaction_does_not_hold_the_chain_lock_before_its_commit():
    step = StepFactory()
    links_before = ChainLink.objects.count()
    with other_connection() as other:
        with transaction.atomic():
            # An edit with its indicator recompute: events in several tables.
            record_update(
                instance=step, data={"reaction_mass_kg": 4200.0}, expected_version=step.version
            )
            record_create(
                model=CalorimetryRun, data={"step": step, "specific_reaction_heat_j_per_kg": 90e3}
            )
            # Before: the first event took the lock and kept it to COMMIT.
            assert chain_lock_free(other)
            assert (
                other.execute("SELECT count(*) FROM review_chainlink").fetchone()[0] == links_before
            )
        assert chain_lock_free(other)
    written = ChainLink.objects.filter(seq__gt=0).count() - links_before
    assert written >= 2  # the step update and the run insert
    assert not ChainPending.objects.exists()  # the stage is emptied by the COMMIT
    assert audit.verify_all() == []


def test_a_transaction_rolled_back_leaves_no_link_and_nothing_staged():
    step = StepFactory()
    links_before = ChainLink.objects.count()
    with pytest.raises(RuntimeError), transaction.atomic():
        record_update(instance=step, data={"reaction_mass_kg": 4100.0})
        raise RuntimeError("abandoned")
    assert ChainLink.objects.count() == links_before
    assert not ChainPending.objects.exists()
    assert audit.verify_all() == []


def test_one_transactions_events_are_linked_together_in_the_order_they_were_written():
    step = StepFactory()
    last = ChainLink.objects.order_by("-seq").values_list("seq", flat=True).first() or 0
    with transaction.atomic():
        ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
        run = CalorimetryRun.objects.create(step=step, specific_reaction_heat_j_per_kg=9e4)
        ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=3000.0)
        flush_pending()
    step_events = event_model_for(ReactionStep)
    run_events = event_model_for(CalorimetryRun)
    s1, s2 = step_events.objects.filter(pgh_obj_id=step.pk).order_by("pgh_id")[1:3]
    (r1,) = run_events.objects.filter(pgh_obj_id=run.pk)
    links = list(
        ChainLink.objects.filter(seq__gt=last)
        .order_by("seq")
        .values_list("event_table", "event_id")
    )
    assert links == [
        (step_events._meta.db_table, s1.pgh_id),
        (run_events._meta.db_table, r1.pgh_id),
        (step_events._meta.db_table, s2.pgh_id),
    ]
    assert audit.verify_all() == []


def test_a_row_locked_for_update_no_longer_deadlocks_against_the_chain_lock(api):
    """The cycle the retry middleware met under load: another transaction holds the step FOR
    UPDATE and then asks for the chain lock while an API create waits for that row at its
    foreign-key check. The create held the chain lock from its first event (a deadlock,
    retried); now it takes the lock only after its checks, so nobody waits in a cycle."""
    import time

    step = StepFactory()
    params = connection.get_connection_params()
    locked, errors, waited = threading.Event(), [], []

    def other_transaction():
        try:
            with psycopg.connect(**params, autocommit=False) as other:
                other.execute(
                    "SELECT 1 FROM hazards_reactionstep WHERE id = %s FOR UPDATE", [step.pk]
                )
                locked.set()
                with psycopg.connect(**params, autocommit=True) as watch:
                    for _ in range(200):  # until the create waits for our row lock
                        if watch.execute(
                            "SELECT count(*) FROM pg_stat_activity WHERE datname = "
                            "current_database() AND wait_event_type = 'Lock' "
                            "AND wait_event <> 'advisory'"
                        ).fetchone()[0]:
                            waited.append(True)
                            break
                        time.sleep(0.02)
                other.execute("SELECT pg_advisory_xact_lock(%s)", [audit.CHAIN_LOCK_KEY])
                time.sleep(0.2)
                other.commit()
        except Exception as exc:  # noqa: BLE001 - reported by the test
            errors.append(exc)
        finally:
            locked.set()

    from hazards import middleware

    attempts = []
    real = middleware.transient_database_error

    def counting(exc):
        attempts.append(exc)
        return real(exc)

    thread = threading.Thread(target=other_transaction)
    thread.start()
    assert locked.wait(10)
    middleware.transient_database_error, saved = counting, middleware.transient_database_error
    try:
        response = api.post(
            "/api/v1/calorimetry-runs/",
            {"step": step.pk, "specific_reaction_heat": "100 kJ/kg"},
            format="json",
        )
    finally:
        middleware.transient_database_error = saved
    thread.join(30)
    assert errors == [] and waited == [True]
    assert response.status_code == 201, response.content
    assert attempts == []  # no deadlock to retry
    assert CalorimetryRun.objects.filter(step=step).count() == 1
    assert audit.verify_all() == []


def _link_contexts() -> list[tuple[int, str | None]]:
    """(seq, pghistory context of the linked event) for every link, in chain order."""
    parts = []
    for model in audit.event_models():
        if any(f.name == "pgh_context" for f in model._meta.fields):
            table = model._meta.db_table
            parts.append(
                f"SELECT '{table}' AS t, pgh_id, pgh_context_id::text AS ctx FROM \"{table}\""
            )
    with connection.cursor() as cursor:
        cursor.execute(
            f"SELECT l.seq, e.ctx FROM review_chainlink l LEFT JOIN "
            f"({' UNION ALL '.join(parts)}) e ON e.t = l.event_table "
            "AND e.pgh_id = l.event_id ORDER BY l.seq"
        )
        return cursor.fetchall()


def test_concurrent_writers_get_one_complete_ordered_intact_chain():
    """Six threads (each its own connection) write at once: edits with their recompute on
    their own step and on one shared step, run inserts, and a FOR UPDATE before a write as
    signing does. Afterwards every event has one link, each transaction's events are one
    unbroken stretch of the chain, and verify finds nothing. Common practice, no source."""
    shared = StepFactory()
    own = [StepFactory(process=shared.process) for _ in range(6)]
    barrier, errors = threading.Barrier(6), []

    def writer(n):
        try:
            barrier.wait(timeout=20)
            for i in range(6):
                with pghistory.context(reason=f"writer {n} transaction {i}"), transaction.atomic():
                    mine = ReactionStep.objects.select_for_update().get(pk=own[n].pk)
                    record_update(instance=mine, data={"reaction_mass_kg": 4000.0 + 10 * i})
                    record_create(
                        model=CalorimetryRun,
                        data={"step": mine, "specific_reaction_heat_j_per_kg": 1e5 + n * 100 + i},
                    )
                    if i % 2 == 0:
                        common = ReactionStep.objects.get(pk=shared.pk)
                        record_update(
                            instance=common, data={"name": f"shared, writer {n} change {i}"}
                        )
        except Exception as exc:  # noqa: BLE001 - reported by the test
            errors.append(exc)
        finally:
            connection.close()

    threads = [threading.Thread(target=writer, args=(n,)) for n in range(6)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    assert errors == []
    assert audit.verify_all() == []
    tables = {m._meta.db_table for m in audit.event_models()}
    events = sum(m.objects.count() for m in audit.event_models())
    assert ChainLink.objects.filter(event_table__in=tables).count() == events
    assert not ChainPending.objects.exists()
    # Each writer transaction (one pghistory context) is one unbroken stretch of links.
    contexts = _link_contexts()
    stretches: dict[str, list[int]] = {}
    for position, (_, ctx) in enumerate(contexts):
        if ctx is not None:
            stretches.setdefault(ctx, []).append(position)
    assert sum(len(p) >= 2 for p in stretches.values()) >= 36  # 6 writers x 6 transactions
    for positions in stretches.values():
        assert positions == list(range(positions[0], positions[-1] + 1))
