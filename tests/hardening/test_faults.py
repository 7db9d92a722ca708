"""Fault tests (INTEGRITY.md §5.2-5.4): each bounded in time, on loopback, and self-stopping.

- a gunicorn worker SIGKILLed in the middle of a write;
- the PostgreSQL server stopped and started again during writes (a private server);
- the disk full while a dossier's PDF is stored (a tablespace on a 64 KiB tmpfs);
- a dossier worker SIGKILLed while it renders.
"""

from __future__ import annotations

import json
import os
import pwd
import signal
import subprocess
import sys
import threading
import time
import uuid

import psycopg
import pytest
import requests

from hazards.dossier.models import Dossier
from hazards.models import CalorimetryRun, CalorimetrySeries, ReactionStep
from hazards.review.audit import verify_all
from hazards.review.models import ChainLink
from tests.hardening.conftest import (
    ROOT,
    auth,
    manage,
    subprocess_env,
    test_database_url,
    wait_for,
)

SERIES = (b"time [min],heat_release_rate [W],dosed_mass [g],reactor_temperature [degC]\n"
          b"0,0,0,30\n10,10,100,30\n20,0,100,30\n")
pytestmark = pytest.mark.django_db(transaction=True)


def _upload(base, token, run, key):
    return requests.post(f"{base}/api/v1/calorimetry-runs/{run}/series/",
                         headers={**auth(token), "Idempotency-Key": key},
                         files={"file": ("run.csv", SERIES, "text/csv")},
                         data={"initial_mass": "400 g", "feed_mass": "100 g"}, timeout=30)


def test_a_worker_killed_in_the_middle_of_a_write_leaves_nothing_and_the_retry_succeeds(
        world, serve):
    me = world["mine"]
    run = me["run"]
    server = serve(workers=1)
    links_before = ChainLink.objects.count()
    (worker,) = server.worker_pids()

    # Hold the run's row: the upload stores its idempotency key, then waits for the row in
    # the middle of its transaction until we let go. (Not the audit chain's lock: the chain
    # takes it inside COMMIT, and a COMMIT under way completes even when its client is gone,
    # as any COMMIT whose answer is lost does; the key then replays it.)
    blocker = psycopg.connect(test_database_url())
    blocker.execute("SELECT 1 FROM hazards_calorimetryrun WHERE id = %s FOR UPDATE", [run.pk])
    outcome = {}

    def send():
        try:
            outcome["response"] = _upload(server.url, me["token"], run.pk, "kill-1")
        except requests.RequestException as exc:
            outcome["error"] = exc

    thread = threading.Thread(target=send)
    thread.start()
    monitor = psycopg.connect(test_database_url(), autocommit=True)

    def waiting_backend():
        return monitor.execute(
            "SELECT pid FROM pg_stat_activity WHERE datname = current_database() "
            "AND wait_event_type = 'Lock'").fetchone()

    wait_for(waiting_backend, what="the upload to wait inside its transaction")
    os.kill(worker, signal.SIGKILL)
    thread.join(timeout=30)
    assert "error" in outcome, f"the client got an answer: {outcome.get('response')}"
    blocker.rollback()
    blocker.close()
    wait_for(lambda: waiting_backend() is None, what="the dead request's backend to go")
    monitor.close()

    # Nothing of the killed request was committed: no series, no new audit event, no key.
    assert not CalorimetrySeries.objects.filter(run=run).exists()
    assert CalorimetryRun.objects.get(pk=run.pk).version == run.version
    assert ChainLink.objects.count() == links_before
    # The master replaces the worker; the same request with the same key now succeeds.
    wait_for(lambda: server.worker_pids() and server.worker_pids() != [worker],
             what="a new gunicorn worker")
    retry = _upload(server.url, me["token"], run.pk, "kill-1")
    assert retry.status_code == 201, retry.text
    assert CalorimetrySeries.objects.filter(run=run).count() == 1
    assert verify_all() == []


def test_a_worker_killed_while_a_finding_post_waits_keeps_no_finding_and_the_key_retries(
        world, serve):
    # Issue 18 item 7: findings honour Idempotency-Key like the records, under faults too.
    from hazards.api.auth import issue_token
    from hazards.review.models import Finding
    from hazards.review.services.roles import role_grant
    from tests.conftest import make_user

    me = world["mine"]
    reviewer = make_user("fault-reviewer")
    role_grant(process=me["process"], user=reviewer, role="reviewer", granted_by=None,
               reason="fault test set-up")
    token = issue_token(user=reviewer)
    server = serve(workers=1)
    (worker,) = server.worker_pids()
    body = {"process": me["process"].pk, "title": "Relief sizing basis", "kind": "blocking",
            "owner": me["user"].username, "due_date": "2027-01-31"}

    def post():
        return requests.post(f"{server.url}/api/v1/findings/", json=body, timeout=30,
                             headers={**auth(token), "Idempotency-Key": "kill-finding"})

    # Hold the process row: the finding's foreign key waits for it after the key is stored.
    blocker = psycopg.connect(test_database_url())
    blocker.execute("SELECT 1 FROM hazards_process WHERE id = %s FOR UPDATE",
                    [me["process"].pk])
    outcome = {}

    def send():
        try:
            outcome["response"] = post()
        except requests.RequestException as exc:
            outcome["error"] = exc

    thread = threading.Thread(target=send)
    thread.start()
    monitor = psycopg.connect(test_database_url(), autocommit=True)

    def waiting_backend():
        return monitor.execute(
            "SELECT pid FROM pg_stat_activity WHERE datname = current_database() "
            "AND wait_event_type = 'Lock'").fetchone()

    wait_for(waiting_backend, what="the finding POST to wait inside its transaction")
    os.kill(worker, signal.SIGKILL)
    thread.join(timeout=30)
    assert "error" in outcome, f"the client got an answer: {outcome.get('response')}"
    blocker.rollback()
    blocker.close()
    wait_for(lambda: waiting_backend() is None, what="the dead request's backend to go")
    monitor.close()
    # The foreign key is checked at COMMIT (Django's constraints are deferred), and a COMMIT
    # the server already received completes even when its client is gone. Either outcome
    # keeps the record whole: nothing at all, or the finding with its key, which the retry
    # then replays. Never a finding without its key, never two.
    assert Finding.objects.count() <= 1
    wait_for(lambda: server.worker_pids() and server.worker_pids() != [worker],
             what="a new gunicorn worker")
    first, again = post(), post()
    assert (first.status_code, again.status_code) == (201, 201), first.text
    assert again.headers.get("Idempotent-Replayed") == "true"
    assert Finding.objects.count() == 1
    assert verify_all() == []


def _edit_until(base, token, step, stop: threading.Event, log: list):
    """PATCH the step again and again (GET for the ETag first); every answer is logged."""
    session = requests.Session()
    session.headers.update(auth(token))
    n = 0
    while not stop.is_set():
        n += 1
        try:
            got = session.get(f"{base}/api/v1/steps/{step}/", timeout=10)
            if got.status_code != 200:
                log.append(("get", got.status_code, got.headers.get("Content-Type"), got.text,
                            time.monotonic()))
                time.sleep(0.1)
                continue
            celsius = 20 + n % 40
            answer = session.patch(f"{base}/api/v1/steps/{step}/", timeout=10,
                                   json={"process_temperature": f"{celsius} degC"},
                                   headers={"If-Match": got.headers["ETag"]})
            log.append(("patch", answer.status_code, answer.headers.get("Content-Type"),
                        answer.text, time.monotonic()))
        except requests.RequestException as exc:
            log.append(("error", None, None, repr(exc), time.monotonic()))
        time.sleep(0.05)


def test_postgresql_restarted_during_writes_gives_clean_503s_then_recovers(
        world, serve, private_pg):
    me = world["mine"]
    url = private_pg.clone("faults", test_database_url())
    server = serve(url, workers=2)
    stop, log = threading.Event(), []
    writer = threading.Thread(target=_edit_until,
                              args=(server.url, me["token"], me["step"].pk, stop, log))
    writer.start()
    try:
        wait_for(lambda: sum(1 for e in log if e[1] == 200) >= 3, what="edits before the stop")
        down_at = time.monotonic()
        private_pg.stop()
        time.sleep(2.0)
        private_pg.start()
        up_at = time.monotonic()
        wait_for(lambda: sum(1 for e in log if e[1] == 200 and e[4] > up_at) >= 3,
                 timeout=30, what="edits after the restart")
    finally:
        stop.set()
        writer.join(timeout=30)
    statuses = {e[1] for e in log}
    assert statuses <= {200, 503}, [e for e in log if e[1] not in (200, 503)][:3]
    outages = [e for e in log if e[1] == 503]
    assert outages, "no request fell into the outage"
    assert all(down_at - 0.5 <= e[4] <= up_at + 5 for e in outages), \
        [(round(e[4] - down_at, 2), round(up_at - down_at, 2)) for e in outages]
    for _, _, content_type, body, _ in outages:
        assert content_type == "application/problem+json"
        problem = json.loads(body)
        assert problem["code"] == "database_unavailable" and problem["status"] == 503
        assert "Traceback" not in body and "psycopg" not in body
    # Every accepted edit is in the trail, once, and the chain verifies.
    accepted = sum(1 for e in log if e[0] == "patch" and e[1] == 200)
    updates = private_pg.psql(
        f"SELECT count(*) FROM hazards_reactionstepevent WHERE pgh_label = 'update' "
        f"AND pgh_obj_id = {me['step'].pk}", "faults")
    assert int(updates) == accepted
    version = private_pg.psql(f"SELECT version FROM hazards_reactionstep "
                              f"WHERE id = {me['step'].pk}", "faults")
    assert int(version) == me["step"].version + accepted
    verified = manage("verify", env={"DATABASE_URL": url})
    assert verified.returncode == 0, verified.stdout + verified.stderr


DISK_FULL_SCRIPT = r"""
import hashlib, json, sys, django
django.setup()
from django.contrib.auth import get_user_model
from django.test import Client
from hazards.dossier.models import Dossier
from hazards.dossier.services import dossier_render, dossier_retry
step = sys.argv[1]
dossier = Dossier.objects.get(pk=int(sys.argv[2]))
client = Client()
client.force_login(get_user_model().objects.get(username="author-mine"))
out = {}
if step == "full":
    try:
        dossier_render(dossier_id=dossier.pk, sandbox=False)
        out["raised"] = None
    except Exception as exc:
        out["raised"] = f"{type(exc).__name__}: {exc}"
    dossier.refresh_from_db()
    pdf = client.get(f"/api/v1/dossiers/{dossier.pk}/pdf/")
    page = client.get(f"/dossiers/{dossier.pk}/pdf/")
    out.update(status=dossier.status, error=dossier.error, has_pdf=dossier.pdf is not None,
               api_pdf=pdf.status_code, page_pdf=page.status_code,
               api_body_is_pdf=pdf.content.startswith(b"%PDF"))
else:
    dossier_retry(dossier=dossier)
    done = dossier_render(dossier_id=dossier.pk, sandbox=False)
    pdf = client.get(f"/api/v1/dossiers/{dossier.pk}/pdf/")
    out.update(status=done.status, api_pdf=pdf.status_code, sha_matches=(
        hashlib.sha256(pdf.content).hexdigest() == done.sha256), size=done.size_bytes)
print(json.dumps(out))
"""


def test_disk_full_while_a_dossier_is_stored_fails_it_cleanly_and_a_retry_succeeds(
        world, private_pg):
    from hazards.dossier.services import dossier_request

    dossier, _ = dossier_request(process=world["mine"]["process"], enqueue=False)
    url = private_pg.clone("diskfull", test_database_url())
    tiny = private_pg.dir.with_name(private_pg.dir.name + "-tiny")
    tiny.mkdir()
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=64k", "tmpfs", str(tiny)],
                             capture_output=True, text=True)
    if mounted.returncode:
        pytest.skip(f"cannot mount a tmpfs here: {mounted.stderr.strip()}")
    try:
        owner = pwd.getpwnam(private_pg.user) if private_pg.user else None
        if owner:
            os.chown(tiny, owner.pw_uid, owner.pw_gid)
        private_pg.psql(f"CREATE TABLESPACE tiny LOCATION '{tiny}'")
        private_pg.psql("ALTER TABLE dossier_dossier SET TABLESPACE tiny", "diskfull")

        def script(step):
            result = subprocess.run([sys.executable, "-c", DISK_FULL_SCRIPT, step,
                                     str(dossier.pk)], cwd=ROOT, capture_output=True,
                                    text=True, timeout=180,
                                    env=subprocess_env(DATABASE_URL=url))
            assert result.returncode == 0, result.stderr[-3000:]
            return json.loads(result.stdout.strip().splitlines()[-1])

        full = script("full")
        assert full["raised"] and "No space left on device" in full["raised"], full
        assert full["status"] == "failed", full
        assert full["error"] == "the PDF could not be stored (no space left on device)"
        assert not full["has_pdf"]
        assert full["api_pdf"] == 409 and not full["api_body_is_pdf"]
        assert full["page_pdf"] in (302, 404, 409)  # the page redirects with a message
        # Space comes back; the same dossier (same version, same content) is retried.
        subprocess.run(["mount", "-o", "remount,size=16m", str(tiny)], check=True)
        again = script("retry")
        assert again == {**again, "status": "done", "api_pdf": 200, "sha_matches": True}
    finally:
        try:
            private_pg.stop()
        finally:
            subprocess.run(["umount", "-l", str(tiny)], capture_output=True)
            tiny.rmdir()


def _worker(url, **env):
    return subprocess.Popen(
        [sys.executable, "manage.py", "db_worker", "--queue-name", "default", "--interval",
         "0.2", "--no-reload"], cwd=ROOT, start_new_session=True, stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL, env=subprocess_env(DATABASE_URL=url, **env))


def _stop(proc):
    if proc.poll() is None:
        os.killpg(proc.pid, signal.SIGTERM)
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=10)


def test_a_dossier_worker_killed_while_rendering_is_picked_up_again(world):
    from hazards.dossier.services import dossier_request

    process = world["mine"]["process"]
    dossier, _ = dossier_request(process=process)  # enqueued in its transaction
    url = test_database_url()
    first = _worker(url)
    try:
        wait_for(lambda: Dossier.objects.get(pk=dossier.pk).status == "rendering",
                 timeout=60, interval=0.05, what="the worker to start rendering")
        os.killpg(first.pid, signal.SIGKILL)  # the worker and its render child
        first.wait(timeout=10)
    finally:
        _stop(first)
    orphan = Dossier.objects.get(pk=dossier.pk)
    assert orphan.status == "rendering" and orphan.pdf is None and orphan.attempts == 1

    # A new worker with a short lease; the next render job recovers the orphan.
    time.sleep(1.5)
    second = _worker(url, EXOLEDGER_DOSSIER_LEASE_SECONDS="1")
    try:
        other, _ = dossier_request(process=process, reissue=True, reason="next job")
        wait_for(lambda: set(Dossier.objects.filter(pk__in=[dossier.pk, other.pk])
                             .values_list("status", flat=True)) == {"done"},
                 timeout=120, interval=0.2, what="both dossiers to be rendered")
    finally:
        _stop(second)
    recovered = Dossier.objects.get(pk=dossier.pk)
    assert recovered.attempts == 2 and recovered.error == ""
    assert recovered.size_bytes == len(bytes(recovered.pdf))
    assert ReactionStep.objects.filter(process=process).exists()


def test_a_render_that_keeps_losing_its_worker_ends_failed_not_in_a_loop(world):
    from django.utils import timezone

    from hazards.dossier.services import LOST_WORKER, dossier_recover_stale, dossier_request

    dossier, _ = dossier_request(process=world["mine"]["process"], enqueue=False)
    long_ago = timezone.now() - timezone.timedelta(hours=1)
    Dossier.objects.filter(pk=dossier.pk).update(status="rendering", started_at=long_ago,
                                                 attempts=3, worker=f"gone:{uuid.uuid4()}")
    assert dossier_recover_stale(older_than_seconds=60, max_attempts=3) == 1
    row = Dossier.objects.get(pk=dossier.pk)
    assert row.status == "failed" and row.error == LOST_WORKER
