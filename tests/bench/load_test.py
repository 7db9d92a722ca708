"""Load test: gunicorn on 127.0.0.1 against a database of its own, then integrity checks.

Run by hand (loopback only, bounded by the duration; the database is dropped afterwards):

    python tests/bench/load_test.py --duration 60 [--clients 8] [--workers 3] [--json out.json]

The database is created on the server of `DATABASE_URL` when it is set, else on the embedded
PostgreSQL (`hazards.db`), migrated (or cloned from `--clone-from URL`, which the pytest
wrapper uses to save the migrations), and seeded with a few processes. Client threads then
read pages and API lists, edit steps with If-Match, create calorimetry runs and upload their
series, and request dossiers, for `--duration` seconds. It prints requests per second,
p50/p95/p99 latency and the answers by status, and then checks the database: every accepted
write is present with exactly one audit event, `verify` finds nothing, every indicator
snapshot is fresh. Exit status 0 only if no request got a 5xx or failed to connect and every
check passed. Figures are for regression detection on one machine, not capacity planning.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import re
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time
from collections import Counter, defaultdict
from pathlib import Path
from urllib.parse import quote

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

PASSWORD = "load test password 4711"
SERIES_CSV = ("time [min],heat_release_rate [W],dosed_mass [g],reactor_temperature [degC]\n"
              "0,0,0,30\n10,10,100,30\n20,0,100,30\n")
# Statuses that are answers, not failures: 412 is the If-Match race between two editors.
EXPECTED = {"edit_step": {200, 412}, "create_run": {201}, "upload_series": {201},
            "request_dossier": {200, 202}}


# --- the database ------------------------------------------------------------------

def database_url(config: dict) -> str:
    """A postgres URL for Django's DATABASES entry (TCP host or a unix-socket folder)."""
    user = quote(config.get("USER") or "postgres", safe="")
    password = config.get("PASSWORD") or ""
    auth = f"{user}:{quote(password, safe='')}@" if password else f"{user}@"
    host = config.get("HOST") or (config.get("OPTIONS") or {}).get("host") or ""
    name = config["NAME"]
    if host.startswith("/"):
        return f"postgresql://{auth}/{name}?host={quote(host, safe='/')}"
    port = config.get("PORT") or 5432
    return f"postgresql://{auth}{host or '127.0.0.1'}:{port}/{name}"


def server_config() -> dict:
    """The server the suite uses: DATABASE_URL's, or the embedded one (started on demand)."""
    import dj_database_url

    from hazards import db

    url = os.environ.get("DATABASE_URL") or db._embedded_url()
    return dj_database_url.parse(url)


def _connect(config: dict, name: str):
    import psycopg

    return psycopg.connect(dbname=name, user=config.get("USER") or None,
                           password=config.get("PASSWORD") or None,
                           host=config.get("HOST") or (config.get("OPTIONS") or {}).get("host"),
                           port=config.get("PORT") or None,
                           autocommit=True, connect_timeout=10)


def create_database(config: dict, name: str) -> None:
    with _connect(config, "postgres") as conn:
        conn.execute(f'CREATE DATABASE "{name}"')


def drop_database(config: dict, name: str) -> None:
    with _connect(config, "postgres") as conn:
        conn.execute("SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
                     "WHERE datname = %s AND pid <> pg_backend_pid()", [name])
        conn.execute(f'DROP DATABASE IF EXISTS "{name}"')


def pg_bin(name: str) -> str:
    """pgserver's client programs (new enough for either server)."""
    from pgserver._commands import POSTGRES_BIN_PATH

    return str(POSTGRES_BIN_PATH / name)


def clone_database(source_url: str, target_url: str) -> None:
    """Schema and data of `source_url` into the empty `target_url` (pg_dump | psql)."""
    dump = subprocess.run([pg_bin("pg_dump"), "--no-owner", "--no-privileges", "-d", source_url],
                          capture_output=True, check=True, timeout=120)
    # The 127.0.0.1:5432 server reports a column option `pg_attver` that a pgserver
    # PostgreSQL does not know; it is no part of the schema, so it is left out.
    script = re.sub(rb"(?m)^ALTER TABLE ONLY \S+ ALTER COLUMN \S+ SET \(pg_attver=\d+\);\n",
                    b"", dump.stdout)
    subprocess.run([pg_bin("psql"), "-q", "-v", "ON_ERROR_STOP=1", "-d", target_url],
                   input=script, capture_output=True, check=True, timeout=120)
    # The dump carries neither owners nor grants: `migrate`, run as the owner, creates the
    # application's role on that server if needed and grants it its rights (hazards.dbroles).
    migrate(target_url)


def subprocess_env(**extra) -> dict:
    env = {k: v for k, v in os.environ.items() if not k.startswith("PYTEST")}
    env.update({k: v for k, v in extra.items() if v is not None})
    return env


def migrate(url: str) -> None:
    subprocess.run([sys.executable, "manage.py", "migrate", "-v0"], cwd=ROOT, check=True,
                   env=subprocess_env(DATABASE_URL=url), timeout=600)


# --- gunicorn ----------------------------------------------------------------------

def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Gunicorn:
    """gunicorn serving hazards.wsgi on a free loopback port; stopped by `stop()`."""

    def __init__(self, database_url: str, *, workers: int = 2, timeout: int = 30,
                 log_dir: str | None = None, extra_env: dict | None = None):
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.log_path = Path(log_dir or tempfile.mkdtemp(prefix="exo-gunicorn-")) / "gunicorn.log"
        gunicorn = Path(sys.executable).with_name("gunicorn")
        argv = [str(gunicorn) if gunicorn.exists() else "gunicorn", "hazards.wsgi:application",
                "--bind", f"127.0.0.1:{self.port}", "--workers", str(workers),
                "--timeout", str(timeout), "--graceful-timeout", "5"]
        self._log = open(self.log_path, "wb")  # noqa: SIM115 - closed in stop()
        self.proc = subprocess.Popen(
            argv, cwd=ROOT, stdout=self._log, stderr=subprocess.STDOUT,
            env=subprocess_env(DATABASE_URL=database_url, EXOLEDGER_LOG_LEVEL="ERROR",
                               **(extra_env or {})),
        )

    def wait_ready(self, timeout: float = 60.0, workers: int = 1) -> None:
        import requests

        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError(f"gunicorn exited: {self.log()}")
            try:
                if requests.get(self.url + "/api/v1/problems/", timeout=2).status_code == 200 \
                        and len(self.worker_pids()) >= workers:
                    return
            except requests.RequestException:
                pass
            time.sleep(0.2)
        raise RuntimeError(f"gunicorn did not answer within {timeout} s: {self.log()}")

    def worker_pids(self) -> list[int]:
        try:
            text = Path(f"/proc/{self.proc.pid}/task/{self.proc.pid}/children").read_text()
        except OSError:
            return []
        return [int(p) for p in text.split()]

    def log(self) -> str:
        self._log.flush()
        return self.log_path.read_text(errors="replace")[-4000:]

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=10)
        self._log.close()


# --- seeding (in the load database, through Django) ------------------------------------

AUTHOR_PERMS = ("add_reactionstep", "change_reactionstep", "add_calorimetryrun",
                "change_calorimetryrun", "add_calorimetryseries", "add_process",
                "change_process")


def seed(*, clients: int, processes: int = 3, steps_per_process: int = 3) -> dict:
    from django.contrib.auth import get_user_model
    from django.contrib.auth.models import Permission

    from hazards.api.auth import issue_token
    from hazards.review.services.roles import role_grant
    from tests.factories import (
        CalorimetryRunFactory,
        DecompositionTestFactory,
        ProcessFactory,
        SiteFactory,
        StepFactory,
    )

    site = SiteFactory(code="varnholt-load", name="Varnholt works (load test)")
    procs = [ProcessFactory(name=f"Load route {i + 1}", site=site) for i in range(processes)]
    steps = []
    for process in procs:
        for j in range(steps_per_process):
            step = StepFactory(process=process, sequence=j + 1, name=f"Step {j + 1}")
            CalorimetryRunFactory(step=step, is_basis=True)
            DecompositionTestFactory(step=step, is_basis=True)
            steps.append(step.pk)
    User = get_user_model()
    perms = list(Permission.objects.filter(codename__in=AUTHOR_PERMS))
    users = []
    for i in range(clients):
        user = User.objects.create_user(username=f"load-author-{i}", password=PASSWORD,
                                        first_name="Load", last_name=f"Author {i}")
        user.user_permissions.set(perms)
        for process in procs:
            role_grant(process=process, user=user, role="author", granted_by=None,
                       reason="load test set-up")
        users.append({"username": user.username, "token": issue_token(user=user)})
    return {"processes": [p.pk for p in procs], "steps": steps, "users": users}


# --- the clients -------------------------------------------------------------------------

class Recorder:
    def __init__(self):
        self.lock = threading.Lock()
        self.latencies: dict[str, list[float]] = defaultdict(list)
        self.statuses: dict[str, Counter] = defaultdict(Counter)
        self.accepted: dict[str, list] = defaultdict(list)
        self.failures: list[str] = []

    def record(self, op: str, status, seconds: float, detail: str = ""):
        with self.lock:
            self.latencies[op].append(seconds)
            self.statuses[op][status] += 1
            bad = status == "connection_error" or (isinstance(status, int) and status >= 500)
            if not bad and op in EXPECTED and status not in EXPECTED[op]:
                bad = True
            if not bad and op not in EXPECTED and status != 200:
                bad = True
            if bad and len(self.failures) < 20:
                self.failures.append(f"{op}: {status} {detail[:300]}")

    def accept(self, kind: str, item):
        with self.lock:
            self.accepted[kind].append(item)


def _timed(rec: Recorder, op: str, session, method: str, url: str, **kw):
    import requests

    start = time.perf_counter()
    try:
        response = session.request(method, url, timeout=30, **kw)
    except requests.RequestException as exc:
        rec.record(op, "connection_error", time.perf_counter() - start, repr(exc))
        return None
    rec.record(op, response.status_code, time.perf_counter() - start, response.text)
    return response


def sign_in(session, base: str, username: str) -> bool:
    page = session.get(base + "/signin/", timeout=30)
    token = session.cookies.get("csrftoken") or re.search(
        r'name="csrfmiddlewaretoken" value="([^"]+)"', page.text).group(1)
    answer = session.post(base + "/signin/", data={
        "username": username, "password": PASSWORD, "csrfmiddlewaretoken": token,
    }, headers={"Referer": base + "/signin/"}, timeout=30, allow_redirects=False)
    return answer.status_code in (302, 303)


def client_loop(base: str, user: dict, world: dict, deadline: float, rec: Recorder,
                seed_value: int) -> None:
    import requests

    rng = random.Random(seed_value)
    api = requests.Session()
    api.headers["Authorization"] = f"Token {user['token']}"
    pages = requests.Session()
    if not sign_in(pages, base, user["username"]):
        rec.record("sign_in", "refused", 0.0)
        return
    ops = (["read_page"] * 3 + ["read_list"] * 4 + ["edit_step"] * 4 + ["upload_series"] * 2
           + ["request_dossier"])
    while time.monotonic() < deadline:
        op = rng.choice(ops)
        if op == "read_page":
            path = rng.choice(["/processes/", "/steps/", f"/steps/{rng.choice(world['steps'])}/",
                               f"/processes/{rng.choice(world['processes'])}/"])
            _timed(rec, op, pages, "GET", base + path)
        elif op == "read_list":
            path = rng.choice(["/api/v1/steps/?limit=20", "/api/v1/processes/",
                               "/api/v1/calorimetry-runs/?limit=20", "/api/v1/dossiers/"])
            _timed(rec, op, api, "GET", base + path)
        elif op == "edit_step":
            step = rng.choice(world["steps"])
            got = _timed(rec, "read_step", api, "GET", f"{base}/api/v1/steps/{step}/")
            if got is None or got.status_code != 200:
                continue
            celsius = round(rng.uniform(20.0, 60.0), 3)
            answer = _timed(rec, op, api, "PATCH", f"{base}/api/v1/steps/{step}/",
                            json={"process_temperature": f"{celsius} degC"},
                            headers={"If-Match": got.headers["ETag"]})
            if answer is not None and answer.status_code == 200:
                version = int(answer.headers["ETag"].strip('"').rsplit("-v", 1)[1])
                rec.accept("step_edits", (step, version, celsius))
        elif op == "upload_series":
            step = rng.choice(world["steps"])
            made = _timed(rec, "create_run", api, "POST", f"{base}/api/v1/calorimetry-runs/",
                          json={"step": step, "instrument": "Load calorimeter",
                                "specific_reaction_heat": "120 kJ/kg"})
            if made is None or made.status_code != 201:
                continue
            run = made.json()["id"]
            rec.accept("runs", run)
            answer = _timed(rec, op, api, "POST", f"{base}/api/v1/calorimetry-runs/{run}/series/",
                            files={"file": ("load.csv", SERIES_CSV.encode(), "text/csv")},
                            data={"initial_mass": "400 g", "feed_mass": "100 g"})
            if answer is not None and answer.status_code == 201:
                rec.accept("series", (run, answer.json()["sha256"]))
        else:
            process = rng.choice(world["processes"])
            answer = _timed(rec, op, api, "POST", f"{base}/api/v1/processes/{process}/dossiers/",
                            json={"reissue": True, "reason": "load test"})
            if answer is not None and answer.status_code == 202:
                rec.accept("dossiers", answer.json()["id"])


def percentile(values: list[float], q: float) -> float:
    if not values:
        return 0.0
    ordered = sorted(values)
    index = min(len(ordered) - 1, max(0, round(q / 100 * (len(ordered) - 1))))
    return ordered[index]


def summary(rec: Recorder, elapsed: float) -> dict:
    everything = [x for values in rec.latencies.values() for x in values]
    statuses = Counter()
    for counter in rec.statuses.values():
        statuses.update({str(k): v for k, v in counter.items()})
    return {
        "requests": len(everything),
        "seconds": round(elapsed, 2),
        "rps": round(len(everything) / elapsed, 1) if elapsed else 0.0,
        "p50_ms": round(percentile(everything, 50) * 1000, 1),
        "p95_ms": round(percentile(everything, 95) * 1000, 1),
        "p99_ms": round(percentile(everything, 99) * 1000, 1),
        "statuses": dict(sorted(statuses.items())),
        "by_operation": {
            op: {"n": len(v), "p50_ms": round(percentile(v, 50) * 1000, 1),
                 "p95_ms": round(percentile(v, 95) * 1000, 1),
                 "statuses": {str(k): n for k, n in sorted(rec.statuses[op].items(),
                                                          key=lambda kv: str(kv[0]))}}
            for op, v in sorted(rec.latencies.items())
        },
        "accepted": {kind: len(items) for kind, items in rec.accepted.items()},
        "failures": rec.failures,
    }


# --- the checks afterwards ---------------------------------------------------------------

def integrity_problems(accepted: dict) -> list[str]:
    """Every accepted write present with its audit event; verify clean; snapshots fresh."""
    from django.db.models import Count

    from hazards.dossier.models import Dossier
    from hazards.models import CalorimetryRun, CalorimetrySeries, ReactionStep
    from hazards.review.audit import event_models, verify_all
    from hazards.services.indicators import current_snapshot, inputs_hash, load_cases

    problems: list[str] = []
    events = {m.pgh_tracked_model: m for m in event_models()
              if getattr(m, "pgh_tracked_model", None) is not None}

    step_events = events[ReactionStep].objects.filter(pgh_label="update")
    by_version = {(e.pgh_obj_id, e.version): e for e in step_events}
    edits = accepted.get("step_edits", [])
    for step, version, celsius in edits:
        event = by_version.get((step, version))
        if event is None:
            problems.append(f"step {step} v{version}: accepted edit without an audit event")
        elif abs(event.process_temperature_k - (celsius + 273.15)) > 1e-6:
            problems.append(f"step {step} v{version}: event shows "
                            f"{event.process_temperature_k} K, {celsius} degC was accepted")
    per_step = Counter(step for step, _, _ in edits)
    for step in ReactionStep.objects.all():
        # Other writes (recomputed bookkeeping, a series upload) also update a step, so
        # count: at least one update event per accepted edit.
        versions = list(step_events.filter(pgh_obj_id=step.pk).values_list("version", flat=True))
        if len(versions) < per_step.get(step.pk, 0):
            problems.append(f"step {step.pk}: {len(versions)} update events for "
                            f"{per_step.get(step.pk, 0)} accepted edits")

    runs = set(accepted.get("runs", []))
    present = set(CalorimetryRun.objects.filter(pk__in=runs).values_list("pk", flat=True))
    problems += [f"run {pk}: accepted (201) but missing" for pk in sorted(runs - present)]
    inserted = set(events[CalorimetryRun].objects.filter(pgh_label="insert", pgh_obj_id__in=runs)
                   .values_list("pgh_obj_id", flat=True))
    problems += [f"run {pk}: no insert event" for pk in sorted(runs - inserted)]
    for run, sha in accepted.get("series", []):
        series = CalorimetrySeries.objects.filter(run_id=run).first()
        if series is None or series.sha256 != sha:
            problems.append(f"series of run {run}: accepted but missing or different")
        elif not events[CalorimetrySeries].objects.filter(pgh_obj_id=series.pk,
                                                          pgh_label="insert").exists():
            problems.append(f"series of run {run}: no insert event")
    uploaded = {run for run, _ in accepted.get("series", [])}
    extra = (CalorimetrySeries.objects.filter(run_id__in=runs).exclude(run_id__in=uploaded)
             .count())
    if extra:
        problems.append(f"{extra} series stored whose upload was not accepted")

    dossiers = set(accepted.get("dossiers", []))
    found = set(Dossier.objects.filter(pk__in=dossiers).values_list("pk", flat=True))
    problems += [f"dossier {pk}: accepted (202) but missing" for pk in sorted(dossiers - found)]
    duplicates = (Dossier.objects.values("process", "version").annotate(n=Count("id"))
                  .filter(n__gt=1).count())
    if duplicates:
        problems.append(f"{duplicates} dossier versions issued twice")

    problems += [f"verify: {p}" for p in verify_all()]
    for step in ReactionStep.objects.all():
        snapshot = current_snapshot(step)
        if snapshot is None or snapshot.inputs_hash != inputs_hash(load_cases([step.pk])[0]):
            problems.append(f"step {step.pk}: indicator snapshot is stale or missing")
    return problems


# --- the whole run ----------------------------------------------------------------------

def run(*, duration: float, clients: int, workers: int, clone_from: str | None = None,
        keep_db: bool = False, log=print) -> dict:
    config = server_config()
    name = f"exoledger_load_{os.getpid()}_{int(time.time())}"
    create_database(config, name)
    url = database_url({**config, "NAME": name})
    server = None
    try:
        if clone_from:
            clone_database(clone_from, url)
        else:
            migrate(url)
        os.environ["DATABASE_URL"] = url
        os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")
        import django

        django.setup()
        world = seed(clients=clients)
        server = Gunicorn(url, workers=workers)
        server.wait_ready(workers=workers)
        rec = Recorder()
        log(f"load: {clients} clients, {workers} gunicorn workers, {duration:g} s, "
            f"{server.url} on database {name}")
        start = time.monotonic()
        deadline = start + duration
        threads = [threading.Thread(target=client_loop, daemon=True,
                                    args=(server.url, user, world, deadline, rec, i))
                   for i, user in enumerate(world["users"])]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join(timeout=duration + 60)
        elapsed = time.monotonic() - start
        result = summary(rec, elapsed)
        result.update(clients=clients, workers=workers, database=name)
        server.stop()
        server = None
        from django.db import connection

        result["integrity_problems"] = integrity_problems(rec.accepted)
        connection.close()
        result["ok"] = not result["failures"] and not result["integrity_problems"] and all(
            not t.is_alive() for t in threads)
        return result
    finally:
        if server is not None:
            server.stop()
        if not keep_db:
            try:
                from django.db import connections

                connections.close_all()
            except Exception:  # noqa: BLE001 - Django may not be set up yet
                pass
            drop_database(config, name)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--duration", type=float, default=30.0, help="seconds of load")
    parser.add_argument("--clients", type=int, default=8, help="client threads")
    parser.add_argument("--workers", type=int, default=3, help="gunicorn workers")
    parser.add_argument("--clone-from", help="copy schema and data from this database URL "
                        "instead of migrating")
    parser.add_argument("--json", help="also write the figures to this file")
    parser.add_argument("--keep-db", action="store_true", help="do not drop the database")
    args = parser.parse_args(argv)
    if not 0 < args.duration <= 3600:
        parser.error("--duration must be between 0 and 3600 s")
    result = run(duration=args.duration, clients=args.clients, workers=args.workers,
                 clone_from=args.clone_from, keep_db=args.keep_db)
    print(f"requests: {result['requests']} in {result['seconds']} s = {result['rps']} req/s")
    print(f"latency: p50 {result['p50_ms']} ms, p95 {result['p95_ms']} ms, "
          f"p99 {result['p99_ms']} ms")
    print(f"statuses: {result['statuses']}")
    for op, figures in result["by_operation"].items():
        print(f"  {op:16s} n={figures['n']:5d} p50={figures['p50_ms']:7.1f} ms "
              f"p95={figures['p95_ms']:7.1f} ms {figures['statuses']}")
    print(f"accepted writes: {result['accepted']}")
    for line in result["failures"]:
        print(f"FAILED REQUEST {line}")
    for line in result["integrity_problems"]:
        print(f"INTEGRITY {line}")
    print("integrity: " + ("every accepted write present with its audit event, verify clean, "
                           "snapshots fresh" if not result["integrity_problems"] else "PROBLEMS"))
    if args.json:
        Path(args.json).write_text(json.dumps(result, indent=2))
    return 0 if result["ok"] else 1


if __name__ == "__main__":
    sys.exit(main())
