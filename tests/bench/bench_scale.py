"""Scale benchmark: do pages and API lists cost the same at 1 000, 10 000 and 50 000 steps?

    python tests/bench/bench_scale.py                 # 1 000, 10 000, 50 000 steps
    python tests/bench/bench_scale.py --quick         # 200 and 2 000 steps
    python tests/bench/bench_scale.py --sizes 1000,10000 [--json out.json] [--keep]

It creates a database of its own (`exoledger_bench_scale_<pid>`) on the server of
`DATABASE_URL`, else on 127.0.0.1:5432 (user postgres), or with `--embedded` on the embedded
PostgreSQL; migrates it; and grows the data through the application (the models' own
`bulk_create`, so every step gets its triggers, audit events, chain links and indicator
snapshot computed in the same transaction): five steps per process, each with a calorimetry
run and a decomposition test, parameters spread so that all five classes occur; a committee
member (a reviewer) holds a role on every process, so what they see grows with the site; one
process has a long history (as many description edits as there are steps). After growing it
runs VACUUM ANALYZE, as autovacuum would (the shared development server runs without it).

At each size it times every page and API list a committee opens (in-process through Django's
test client, so no network; two warm-up calls, then `--repeat` interleaved rounds over all
cases; the minimum, the run least disturbed by other work on a shared machine, and the
median) and counts its queries, then prints the ratio of the minimum times between
consecutive sizes. The database is dropped at
the end unless `--keep`. Benchmarks assert nothing: the figures are for one shared machine.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import sys
import time
from pathlib import Path
from urllib.parse import urlsplit

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

STEPS_PER_PROCESS = 5
BATCH_PROCESSES = 100


def _database(args) -> tuple[str, callable]:
    """(DATABASE_URL of a fresh database, function that drops it)."""
    import psycopg

    if args.embedded:
        os.environ.pop("DATABASE_URL", None)
        from hazards import db

        base = db._embedded_url()
    else:
        base = os.environ.get("DATABASE_URL") or "postgresql://postgres@127.0.0.1:5432/postgres"
    name = f"exoledger_bench_scale_{os.getpid()}"
    parts = urlsplit(base)
    admin_url = parts._replace(path="/postgres").geturl()
    with psycopg.connect(admin_url, autocommit=True) as conn:
        conn.execute(f'CREATE DATABASE "{name}"')

    def drop():
        from django.db import connections

        connections.close_all()
        with psycopg.connect(admin_url, autocommit=True) as conn:
            conn.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')

    return parts._replace(path=f"/{name}").geturl(), drop


def _setup(url: str) -> None:
    os.environ["DATABASE_URL"] = url
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")
    import django

    django.setup()
    from django.core.management import call_command

    call_command("migrate", verbosity=0)


class World:
    """The data grown so far and the people who look at it."""

    def __init__(self):
        from django.contrib.auth import get_user_model

        from hazards import models as m

        users = get_user_model()
        self.reviewer = users.objects.create_user("committee", password="bench password 4711")
        self.admin = users.objects.create_superuser("bench-admin", password="bench password 4711")
        self.site = m.Site.objects.create(code="bench", name="Bench works")
        self.vessel = m.Vessel.objects.create(
            name="Bench reactor",
            tag="B-001",
            volume_m3=6.3,
            heat_transfer_area_m2=12.0,
            heat_transfer_coefficient_w_per_m2_k=350.0,
            coolant_temperature_k=283.15,
            design_pressure_pa=7e5,
            relief_set_pressure_pa=6e5,
            headspace_volume_m3=1.5,
        )
        self.processes = 0
        self.steps = 0
        self.long_process = None
        self.edits = 0

    def grow(self, target_steps: int) -> float:
        """Add processes of five measured steps until `target_steps`; returns seconds."""
        from django.db import transaction

        from hazards import models as m
        from hazards.review.models import ProcessRole

        started = time.perf_counter()
        while self.steps < target_steps:
            n = min(BATCH_PROCESSES, (target_steps - self.steps) // STEPS_PER_PROCESS or 1)
            with transaction.atomic():
                processes = m.Process.objects.bulk_create(
                    [
                        m.Process(
                            name=f"Process {self.processes + i:06d}",
                            site=self.site,
                            description="Invented route for the scale benchmark.",
                        )
                        for i in range(n)
                    ]
                )
                self.processes += n
                ProcessRole.objects.bulk_create(
                    [ProcessRole(process=p, user=self.reviewer, role="reviewer") for p in processes]
                )
                steps = m.ReactionStep.objects.bulk_create(
                    [
                        m.ReactionStep(
                            process=p,
                            sequence=k + 1,
                            name=f"Step {k + 1} of {p.name}",
                            operation_mode="batch",
                            process_temperature_k=293.15 + 10 * ((p.pk + k) % 7),
                            reaction_mass_kg=5000.0,
                            specific_heat_capacity_j_per_kg_k=2000.0,
                            system="open",
                            operating_pressure_pa=101325.0,
                            vessel=self.vessel,
                            # No solvent: the MTT is given, so that every class occurs.
                            mtt_override_k=293.15 + 10 * ((p.pk + k) % 7)
                            + 15 + 20 * ((p.pk + 2 * k) % 4),
                            mtt_override_reason="Boiling point of the invented solvent.",
                        )
                        for p in processes
                        for k in range(STEPS_PER_PROCESS)
                    ]
                )
                m.CalorimetryRun.objects.bulk_create(
                    [
                        m.CalorimetryRun(
                            step=s,
                            instrument="Heat-flow calorimeter",
                            specific_reaction_heat_j_per_kg=60e3 + 40e3 * (s.pk % 9),
                            max_accumulation=0.1 + 0.1 * (s.pk % 5),
                            max_heat_release_rate_w_per_kg=20.0,
                            gas_release_mol_per_kg=0.0,
                            is_basis=True,
                        )
                        for s in steps
                    ]
                )
                m.DecompositionTest.objects.bulk_create(
                    [
                        m.DecompositionTest(
                            step=s,
                            method="dsc",
                            onset_temperature_k=400.0 + 25 * (s.pk % 8),
                            decomposition_energy_j_per_kg=400e3,
                            heating_rate_k_per_s=4 / 60,
                            is_basis=True,
                        )
                        for s in steps
                    ]
                )
            self.steps += len(steps)
        if self.long_process is None:
            self.long_process = m.Process.objects.order_by("pk").first()
        self._edit_long_history(target_steps)
        # Planner statistics and visibility maps as autovacuum would keep them (the shared
        # development server runs with autovacuum off; without statistics PostgreSQL plans
        # for a dozen rows, without a visibility map no scan is index-only).
        # As the owner of the tables: the application's own role owns nothing, and VACUUM
        # and ANALYZE skip (with a warning only) every table their caller does not own.
        from django.db import connections

        from hazards.db import owner_alias

        with connections[owner_alias()].cursor() as cursor:
            cursor.execute("VACUUM ANALYZE")
            cursor.execute(
                "SELECT count(*) FROM pg_stat_user_tables WHERE relname = 'hazards_reactionstep'"
                " AND last_analyze IS NOT NULL"
            )
            assert cursor.fetchone()[0] == 1, "ANALYZE did not reach the tables"
        return time.perf_counter() - started

    def _edit_long_history(self, target_edits: int) -> None:
        from django.db import transaction

        from hazards import models as m

        while self.edits < target_edits:
            with transaction.atomic():
                for _ in range(min(500, target_edits - self.edits)):
                    self.edits += 1
                    m.Process.objects.filter(pk=self.long_process.pk).update(
                        description=f"Edit number {self.edits} of the description"
                    )


def _cases(world) -> list[tuple[str, str, object]]:
    """(name, URL or callable giving the URL, user) of every page and list measured."""
    from hazards.models import ReactionStep

    step = ReactionStep.objects.filter(process=world.long_process).order_by("sequence").first()
    lp = world.long_process.pk
    r, a = world.reviewer, world.admin
    return [
        ("page: start (committee)", "/", r),
        ("page: steps", "/steps/", r),
        ("page: steps by class", "/steps/?sort=-klass", r),
        ("page: steps of class 3", "/steps/?klass=3", r),
        ("page: steps recently changed", "/steps/?sort=-updated", r),
        ("page: steps, 6th page (Next x5)", ("follow", "/steps/?sort=name", 5), r),
        ("page: processes by state", "/processes/?sort=state", r),
        ("page: process history (long)", f"/processes/{lp}/history/", r),
        ("page: process history, 6th page", ("follow", f"/processes/{lp}/history/", 5), r),
        ("page: step (charts cached)", f"/steps/{step.pk}/", r),
        ("api: steps by updated_at", "/api/v1/steps/?ordering=updated_at", r),
        ("api: steps by -name", "/api/v1/steps/?ordering=-name", r),
        ("api: steps of class 3", "/api/v1/steps/?criticality_class=3", r),
        ("api: steps, 6th page (next x5)", ("follow", "/api/v1/steps/?ordering=-updated_at", 5), r),
        ("api: steps offset 500", "/api/v1/steps/?offset=500&ordering=name", r),
        ("api: processes by name", "/api/v1/processes/?ordering=name", r),
        ("api: process history (long)", f"/api/v1/processes/{lp}/history/", r),
        ("api: indicator history", f"/api/v1/steps/{step.pk}/indicator-history/", r),
        ("api: steps (administrator)", "/api/v1/steps/", a),
    ]


def _resolve(client, target) -> str:
    """A URL, or the URL reached by following Next `n` times from a start URL."""
    import re

    if isinstance(target, str):
        return target
    _, url, n = target
    for _ in range(n):
        resp = client.get(url)
        if url.startswith("/api/"):
            nxt = resp.json().get("next")
            url = urlsplit(nxt)._replace(scheme="", netloc="").geturl() if nxt else url
        else:
            found = re.search(r'href="(\?[^"]+)" rel="next"', resp.content.decode())
            url = url.split("?")[0] + found[1].replace("&amp;", "&") if found else url
    return url


def measure(world, repeat: int) -> dict:
    """Time every case `repeat` times in interleaved rounds (a burst of load from other
    work on the machine then touches every case alike), after two warm-up calls each, in
    this one process; the minimum is the figure least disturbed by others, the median is
    shown beside it."""
    import gc

    from django.db import connection
    from django.test import Client
    from django.test.utils import CaptureQueriesContext

    clients, urls, queries = {}, {}, {}
    for name, target, user in _cases(world):
        client = clients.get(user.pk)
        if client is None:
            client = clients[user.pk] = Client(HTTP_HOST="localhost")
            client.force_login(user)
        url = _resolve(client, target)
        for _ in range(2):  # warm-up: caches, the chart cache, PostgreSQL's buffers
            resp = client.get(url)
            assert resp.status_code == 200, (name, url, resp.status_code)
        with CaptureQueriesContext(connection) as ctx:
            client.get(url)
        urls[name], queries[name] = (client, url), len(ctx.captured_queries)
    times: dict[str, list[float]] = {name: [] for name in urls}
    gc.collect()
    for _ in range(repeat):
        for name, (client, url) in urls.items():
            t0 = time.perf_counter()
            client.get(url)
            times[name].append(time.perf_counter() - t0)
    return {name: {"ms": min(t) * 1000, "median_ms": statistics.median(t) * 1000,
                   "queries": queries[name]} for name, t in times.items()}


def _classes() -> dict:
    from django.db.models import Count

    from hazards.models import IndicatorSnapshot

    rows = (IndicatorSnapshot.objects.filter(is_current=True).values("criticality_class")
            .annotate(n=Count("id")).order_by("criticality_class"))
    return {r["criticality_class"]: r["n"] for r in rows}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="200 and 2 000 steps")
    parser.add_argument("--sizes", help="comma-separated step counts (default 1000,10000,50000)")
    parser.add_argument("--repeat", type=int, default=9)
    parser.add_argument("--embedded", action="store_true", help="use the embedded PostgreSQL")
    parser.add_argument("--keep", action="store_true", help="keep the database")
    parser.add_argument("--json", help="write the figures to this file")
    args = parser.parse_args(argv)
    sizes = (
        [int(s) for s in args.sizes.split(",")]
        if args.sizes
        else [200, 2000]
        if args.quick
        else [1000, 10000, 50000]
    )
    url, drop = _database(args)
    print(f"database: {url.rsplit('@', 1)[-1]}", flush=True)
    results: dict[int, dict] = {}
    try:
        _setup(url)
        world = World()
        for size in sizes:
            took = world.grow(size)
            print(
                f"grew to {world.steps} steps, {world.processes} processes, "
                f"{world.edits} history edits in {took:.0f} s",
                flush=True,
            )
            print(f"  steps per current class: {_classes()}", flush=True)
            t0 = time.perf_counter()
            results[world.steps] = measure(world, args.repeat)
            for name, fig in results[world.steps].items():
                print(f"  {name:<38} {fig['ms']:8.1f} ms min {fig['median_ms']:8.1f} ms median "
                      f"{fig['queries']:4d} queries", flush=True)
            print(f"  measured in {time.perf_counter() - t0:.0f} s", flush=True)
    finally:
        if not args.keep:
            drop()
    steps = sorted(results)
    print("\nratio of minimum times between sizes (queries in brackets: same number = flat)")
    print(
        f"{'':<38} "
        + " ".join(f"{a}->{b}".rjust(14) for a, b in zip(steps, steps[1:], strict=False))
    )
    worst = 0.0
    for name in results[steps[0]]:
        cells = []
        for a, b in zip(steps, steps[1:], strict=False):
            ratio = results[b][name]["ms"] / results[a][name]["ms"]
            worst = max(worst, ratio)
            cells.append(
                f"{ratio:5.2f}x ({results[a][name]['queries']}/"
                f"{results[b][name]['queries']})".rjust(14)
            )
        print(f"{name:<38} " + " ".join(cells))
    print(f"\nlargest ratio: {worst:.2f}x (goal: at most 1.5x per step of size)")
    if args.json:
        Path(args.json).write_text(json.dumps({str(k): v for k, v in results.items()}, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
