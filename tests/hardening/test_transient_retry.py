"""A request whose transaction PostgreSQL aborted as a deadlock or serialization victim is run
again (hazards.middleware.RetryTransientDatabaseErrors); other database errors are not.

These tests need requests outside any open transaction, as in production, so they use
transactional test databases. The deadlock itself is simulated here. The load test
(tests/hardening/test_load.py) once met a real one: an API create holding the audit chain's
advisory lock, checking its foreign key at COMMIT, against a page read that had locked the
process tree FOR UPDATE and waited for that lock. The chain now takes its lock after those
checks (tests/review/test_chain_at_commit.py shows that cycle no longer forms); the retry
stays for every other deadlock or serialization conflict.
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
    return api.post(
        "/api/v1/calorimetry-runs/",
        {"step": step.pk, "specific_reaction_heat": "100 kJ/kg"},
        format="json",
    )


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
