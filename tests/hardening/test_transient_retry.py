"""A request whose transaction PostgreSQL aborted as a deadlock or serialization victim is run
again (hazards.middleware.RetryTransientDatabaseErrors); other database errors are not.

These tests need requests outside any open transaction, as in production, so they use
transactional test databases. The deadlock itself is simulated here; the load test
(tests/hardening/test_load.py) met the real one: an API create holding the audit chain's
advisory lock, checking its foreign key at COMMIT, against a page read that had locked the
process tree FOR UPDATE and waited for that lock.
"""

from __future__ import annotations

import psycopg
import pytest
from django.db import OperationalError, transaction
from django.test import RequestFactory

from hazards import middleware
from hazards.models import CalorimetryRun
from tests.factories import StepFactory

pytestmark = pytest.mark.django_db(transaction=True)


def _deadlock() -> OperationalError:
    error = OperationalError("deadlock detected")
    error.__cause__ = psycopg.errors.DeadlockDetected("deadlock detected")
    return error


def _flaky_create(monkeypatch, failures: list[Exception]):
    """record_create as the API calls it, failing with the given errors first, each after
    its write (rolled back with the transaction, as PostgreSQL does to a victim)."""
    from hazards.api import serializers

    real, calls = serializers.record_create, []

    def create(**kwargs):
        calls.append(1)
        if failures:
            with transaction.atomic():
                real(**kwargs)
                raise failures.pop(0)
        return real(**kwargs)

    monkeypatch.setattr(serializers, "record_create", create)
    return calls


def _post_run(api, step):
    return api.post("/api/v1/calorimetry-runs/",
                    {"step": step.pk, "specific_reaction_heat": "100 kJ/kg"}, format="json")


def test_a_deadlock_victim_is_run_again_and_written_once(api, monkeypatch):
    step = StepFactory()
    calls = _flaky_create(monkeypatch, [_deadlock()])
    response = _post_run(api, step)
    assert response.status_code == 201, response.content
    assert len(calls) == 2
    run = CalorimetryRun.objects.get(step=step)
    assert response.json()["id"] == run.pk
    assert run.events.filter(pgh_label="insert").count() == 1  # one write in the audit trail


def test_after_three_deadlocks_the_client_gets_a_503_and_nothing_is_saved(api, monkeypatch):
    step = StepFactory()
    calls = _flaky_create(monkeypatch, [_deadlock(), _deadlock(), _deadlock()])
    response = _post_run(api, step)
    assert response.status_code == 503
    assert response.json()["code"] == "database_unavailable"
    assert len(calls) == middleware.RETRY_ATTEMPTS == 3
    assert not CalorimetryRun.objects.filter(step=step).exists()


def test_other_database_errors_are_not_repeated(api, monkeypatch):
    step = StepFactory()
    calls = _flaky_create(monkeypatch, [OperationalError("server closed the connection")])
    response = _post_run(api, step)
    assert response.status_code == 503
    assert len(calls) == 1
    assert not CalorimetryRun.objects.filter(step=step).exists()


def test_each_attempt_reads_the_same_form_body_afresh():
    seen = []

    def view(request):
        seen.append(request.POST.get("name"))
        if len(seen) == 1:
            middleware.mark_transient(request, _deadlock())
        from django.http import HttpResponse

        return HttpResponse("ok")

    request = RequestFactory().post("/x/", {"name": "Nitration of QX-4"})
    response = middleware.RetryTransientDatabaseErrors(view)(request)
    assert response.status_code == 200
    assert seen == ["Nitration of QX-4", "Nitration of QX-4"]


def test_only_deadlocks_and_serialization_failures_count_as_transient():
    assert middleware.transient_database_error(_deadlock())
    serial = OperationalError("could not serialize")
    serial.__cause__ = psycopg.errors.SerializationFailure("could not serialize")
    assert middleware.transient_database_error(serial)
    unique = OperationalError("duplicate key")
    unique.__cause__ = psycopg.errors.UniqueViolation("duplicate key")
    assert not middleware.transient_database_error(unique)
    assert not middleware.transient_database_error(OperationalError("connection refused"))


def test_a_real_deadlock_with_a_process_tree_lock_is_survived(api, caplog):
    """The load test's cycle, made on purpose on real PostgreSQL: another transaction holds
    the step FOR UPDATE (as signing and reconciling do) and then asks for the audit chain
    lock, which the API create took with its first audit event and holds while its foreign
    key check at COMMIT waits for that step. PostgreSQL aborts the create (it waited first);
    the retry waits for the other transaction and then succeeds."""
    import threading
    import time

    from django.db import connection

    from hazards.review.audit import CHAIN_LOCK_KEY

    step = StepFactory()
    params = connection.get_connection_params()
    locked, done, errors = threading.Event(), threading.Event(), []

    def other_transaction():
        try:
            with psycopg.connect(**params, autocommit=False) as other:
                other.execute("SELECT 1 FROM hazards_reactionstep WHERE id = %s FOR UPDATE",
                              [step.pk])
                locked.set()
                with psycopg.connect(**params, autocommit=True) as watch:
                    for _ in range(200):  # until the create waits for our row lock
                        waiting = watch.execute(
                            "SELECT count(*) FROM pg_stat_activity WHERE datname = "
                            "current_database() AND wait_event_type = 'Lock'").fetchone()[0]
                        if waiting:
                            break
                        time.sleep(0.02)
                other.execute("SELECT pg_advisory_xact_lock(%s)", [CHAIN_LOCK_KEY])
                time.sleep(0.2)
                other.commit()
        except Exception as exc:  # noqa: BLE001 - reported by the test
            errors.append(exc)
        finally:
            locked.set()
            done.set()

    thread = threading.Thread(target=other_transaction)
    thread.start()
    assert locked.wait(10)
    with caplog.at_level("WARNING", logger="hazards.api.errors"):
        response = _post_run(api, step)
    thread.join(30)
    assert done.is_set() and errors == []
    assert response.status_code == 201, response.content
    assert CalorimetryRun.objects.filter(step=step).count() == 1
    assert any("deadlock" in r.getMessage() and "retried" in r.getMessage()
               for r in caplog.records), [r.getMessage() for r in caplog.records]
