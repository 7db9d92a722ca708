"""Benchmark of the audit chain's serialised section (issue 22 item 4), run by hand:

    python tests/bench/bench_chain.py [--seconds 8] [--writers 1,2,4,8]

Its own database on the server of DATABASE_URL (else the embedded PostgreSQL), migrated,
dropped afterwards. Each write is a step edit through the service (`record_update`, with its
indicator recompute), one transaction, each writer a process with its own step. Measured for
the chain as it was (each event linked as it is inserted, the lock held from the first event
to COMMIT: the trigger of review migration 0002) and as it is (linked at COMMIT):

1. the serialised section of one write: from the first link of the transaction (taken just
   after the chain lock) to the end of its COMMIT, in the database's clock, one writer;
2. writes per second with 1, 2, 4 and 8 writers, and the ratio after/before.

Prints figures and ratios of one run on this machine; asserts nothing about time. Then runs
`verify` on the database (every write linked, the chain intact).
"""

from __future__ import annotations

import argparse
import importlib
import multiprocessing
import os
import statistics
import sys
import time
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from tests.bench.load_test import (  # noqa: E402
    create_database,
    database_url,
    drop_database,
    migrate,
    server_config,
)


def use_design(design: str) -> None:
    """Install the chain's triggers of one design on every event table."""
    from django.db import connections

    from hazards.db import owner_alias
    from hazards.review import audit

    legacy = importlib.import_module("hazards.review.migrations.0002_audit_chain")
    # As the owner of the tables: the application's role may not touch triggers.
    with connections[owner_alias()].cursor() as cursor:
        tables = audit.existing_event_tables(cursor)
        for table in tables:
            cursor.execute(f'DROP TRIGGER IF EXISTS {audit.TRIGGER_NAME} ON "{table}"')
        if design == "before":
            cursor.execute(legacy.FUNCTIONS_SQL)
            for table in tables:
                cursor.execute(
                    f'CREATE TRIGGER {audit.TRIGGER_NAME} AFTER INSERT ON "{table}" '
                    "FOR EACH ROW EXECUTE FUNCTION review_chain_append()"
                )
        else:
            audit.install_chain_triggers(using=owner_alias())


def one_write(step, mass: float) -> None:
    from hazards.services.records import record_update

    step.refresh_from_db()
    record_update(instance=step, data={"reaction_mass_kg": mass}, expected_version=step.version)


def serialised_sections(step, count: int) -> tuple[list[float], list[float], list[float]]:
    """Per write, one writer, in ms: (serialised section, COMMIT round trip, whole write).

    The section ends with the COMMIT, which releases the lock: it is the time from the first
    link (in the database's clock, just after the lock was taken) to the end of the body
    (a clock reading sent just before COMMIT), plus the COMMIT's round trip. Linked at
    COMMIT, the first link is made inside the COMMIT and that difference is negative: the
    section is the part of the COMMIT after the lock (the append and the WAL flush)."""
    from django.db import connections

    connection = connections["default"]
    held, commits, whole = [], [], []
    marks: dict = {}
    real_commit = type(connection)._commit

    def timed_commit(self):
        with self.cursor() as cursor:
            cursor.execute("SELECT clock_timestamp()")
            (marks["body_end"],) = cursor.fetchone()
        started = time.perf_counter()
        real_commit(self)
        marks["commit_ms"] = (time.perf_counter() - started) * 1e3

    type(connection)._commit = timed_commit
    try:
        for i in range(count):
            with connection.cursor() as cursor:
                cursor.execute("SELECT coalesce(max(seq), 0) FROM review_chainlink")
                (last,) = cursor.fetchone()
            started = time.perf_counter()
            one_write(step, 4000.0 + i % 50)
            whole.append((time.perf_counter() - started) * 1e3)
            with connection.cursor() as cursor:
                cursor.execute("SELECT min(linked_at) FROM review_chainlink WHERE seq > %s", [last])
                (first_link,) = cursor.fetchone()
            # Negative when the first link is made inside the COMMIT: what the COMMIT did
            # before taking the lock (staging the events, the deferred checks) is left out.
            body_after_lock = (marks["body_end"] - first_link).total_seconds() * 1e3
            held.append(body_after_lock + marks["commit_ms"])
            commits.append(marks["commit_ms"])
    finally:
        type(connection)._commit = real_commit
    return held, commits, whole


def _writer(step_id: int, seconds: float, start_at: float, out) -> None:
    from django.db import connections

    from hazards.models import ReactionStep

    connections.close_all()
    step = ReactionStep.objects.get(pk=step_id)
    while time.time() < start_at:
        time.sleep(0.001)
    done, deadline = 0, start_at + seconds
    while time.time() < deadline:
        one_write(step, 3000.0 + done % 50)
        done += 1
    out.put(done)


def throughput(steps: list, writers: int, seconds: float) -> float:
    from django.db import connections

    connections.close_all()
    ctx = multiprocessing.get_context("fork")
    out = ctx.Queue()
    start_at = time.time() + 1.0
    procs = [
        ctx.Process(target=_writer, args=(steps[i].pk, seconds, start_at, out))
        for i in range(writers)
    ]
    for proc in procs:
        proc.start()
    total = sum(out.get(timeout=seconds + 120) for _ in procs)
    for proc in procs:
        proc.join()
    return total / seconds


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=8.0)
    parser.add_argument("--writers", default="1,2,4,8")
    parser.add_argument("--samples", type=int, default=60)
    args = parser.parse_args(argv)
    counts = [int(n) for n in args.writers.split(",")]

    config = server_config()
    name = f"exoledger_bench_chain_{uuid.uuid4().hex[:8]}"
    config = {**config, "NAME": name}
    create_database(config, name)
    try:
        url = database_url(config)
        migrate(url)
        os.environ["DATABASE_URL"] = url
        os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")
        import django

        django.setup()
        from tests.factories import StepFactory

        first = StepFactory()
        steps = [first] + [StepFactory(process=first.process) for _ in range(max(counts))]
        results = {}
        for design in ("before", "after"):
            use_design(design)
            one_write(steps[0], 4500.0)  # warm up
            held, commits, whole = serialised_sections(steps[0], args.samples)
            rates = {n: throughput(steps[1:], n, args.seconds) for n in counts}
            results[design] = (statistics.median(held), statistics.median(whole), rates)
            print(
                f"{design:>6}: serialised section median {results[design][0]:.2f} ms of a "
                f"{results[design][1]:.2f} ms write (of which the COMMIT round trip "
                f"{statistics.median(commits):.2f} ms); writes/s "
                + ", ".join(f"{n}: {r:.1f}" for n, r in rates.items()),
                flush=True,
            )
        b, a = results["before"], results["after"]
        print(
            f"serialised section after/before: {a[0] / b[0]:.2f} "
            f"({b[0]:.2f} -> {a[0]:.2f} ms; share of the write {b[0] / b[1]:.0%} -> "
            f"{a[0] / a[1]:.0%})"
        )
        for n in counts:
            print(
                f"writes/s with {n} writer(s) after/before: {a[2][n] / b[2][n]:.2f} "
                f"({b[2][n]:.1f} -> {a[2][n]:.1f})"
            )
        from hazards.review.audit import verify_chain

        problems = verify_chain()
        print(f"verify after the run: {len(problems)} problem(s) in the chain")
        for problem in problems[:10]:
            print(f"  {problem}")
        return 1 if problems else 0
    finally:
        from django.db import connections

        connections.close_all()
        drop_database(config, name)


if __name__ == "__main__":
    sys.exit(main())
