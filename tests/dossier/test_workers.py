"""Several workers never render one job twice (real PostgreSQL, committed transactions)."""

from __future__ import annotations

import threading

import pytest
from django.db import connection

from hazards.dossier.models import Dossier
from hazards.dossier.services import dossier_claim
from tests.dossier.conftest import build_process


@pytest.mark.django_db(transaction=True)
def test_two_db_workers_running_at_once_render_each_dossier_exactly_once():
    from django_tasks_db.management.commands.db_worker import Worker
    from django_tasks_db.models import DBTaskResult

    from hazards.dossier.services import dossier_request
    from hazards.dossier.tasks import render_dossier

    process = build_process(steps=1, name="Worker race route")
    dossier, _ = dossier_request(process=process)  # enqueues one job
    render_dossier.enqueue(dossier.pk)  # and a duplicate job for the same dossier
    render_dossier.enqueue(dossier.pk)

    barrier = threading.Barrier(2)
    errors = []

    def work(name):
        try:
            barrier.wait(timeout=10)
            Worker(queue_names=["default"], interval=0, batch=True, backend_name="default",
                   startup_delay=False, max_tasks=None, worker_id=name,
                   excluded_queue_names=[]).run()
        except Exception as exc:  # noqa: BLE001
            errors.append(exc)
        finally:
            connection.close()

    threads = [threading.Thread(target=work, args=(f"w{i}",)) for i in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=120)
    assert not errors
    dossier.refresh_from_db()
    assert dossier.status == "done", dossier.error
    assert dossier.attempts == 1
    results = sorted(r.return_value for r in DBTaskResult.objects.all())
    assert results == ["done", "skipped", "skipped"]
    workers = {r.worker_ids[0] for r in DBTaskResult.objects.all()}
    assert len(workers) == 2, "both workers should have taken jobs"


@pytest.mark.django_db(transaction=True)
def test_two_claims_at_the_same_moment_give_the_job_to_one_of_them():
    from hazards.dossier.services import dossier_request

    dossier, _ = dossier_request(process=build_process(steps=1, name="Claim race"),
                                 enqueue=False)
    barrier = threading.Barrier(2)
    won = []

    def claim(name):
        barrier.wait(timeout=10)
        won.append(dossier_claim(dossier_id=dossier.pk, worker=name) is not None)
        connection.close()

    threads = [threading.Thread(target=claim, args=(f"c{i}",)) for i in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=30)
    assert sorted(won) == [False, True]
    assert Dossier.objects.get(pk=dossier.pk).attempts == 1
