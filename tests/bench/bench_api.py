"""Benchmark of the step list of the API; run as ``python tests/bench/bench_api.py``.

Creates 1,000 steps (each with a current indicator snapshot) in a throw-away test database,
then prints, from one run and asserting nothing:

1. the number of queries of `GET /api/v1/steps/` at page sizes 10, 100 and 1,000 (must not
   grow with the page size);
2. the time per step of that list at page size 1,000 against the same rows read with
   `.values()` (steps and their current snapshot values) and dumped to JSON (target ≤ 3×).
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")

N = 1000


def _setup():
    import django
    from django.conf import settings

    django.setup()
    from django.test.utils import setup_test_environment

    setup_test_environment()
    from django.db import connection

    old_name = settings.DATABASES["default"]["NAME"]
    connection.creation.create_test_db(verbosity=0, autoclobber=True, keepdb=False,
                                       serialize=False)
    return connection, old_name


def _rows():
    from hazards import models as m
    from tests.factories import ProcessFactory, SolventFactory, VesselFactory

    vessel, solvent = VesselFactory(), SolventFactory()
    processes = [ProcessFactory() for _ in range(10)]
    steps = [
        m.ReactionStep(process=processes[i % 10], sequence=i + 1, name=f"Step {i}",
                       operation_mode="batch", process_temperature_k=303.15,
                       reaction_mass_kg=5000.0, specific_heat_capacity_j_per_kg_k=2000.0,
                       system="open", operating_pressure_pa=101325.0, vessel=vessel,
                       solvent=solvent)
        for i in range(N)
    ]
    m.ReactionStep.objects.bulk_create(steps)  # recomputes every step's snapshot


def _best(func, repeat=5):
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    connection, old_name = _setup()
    try:
        from django.db.models import OuterRef, Subquery
        from django.test.utils import CaptureQueriesContext
        from rest_framework.test import APIClient

        from hazards import models as m
        from tests.conftest import make_user

        _rows()
        client = APIClient()
        client.force_authenticate(make_user("bench", superuser=True))

        print(f"steps: {m.ReactionStep.objects.count()}, current snapshots: "
              f"{m.IndicatorSnapshot.objects.filter(is_current=True).count()}")
        for size in (10, 100, 1000):
            with CaptureQueriesContext(connection) as ctx:
                resp = client.get(f"/api/v1/steps/?limit={size}")
            assert resp.status_code == 200 and len(resp.json()["results"]) == size
            print(f"queries for a page of {size:>4}: {len(ctx.captured_queries)}")

        def api():
            resp = client.get(f"/api/v1/steps/?limit={N}")
            resp.content  # noqa: B018  (rendered)

        current = m.IndicatorSnapshot.objects.filter(step=OuterRef("pk"), is_current=True)

        def values():
            rows = list(m.ReactionStep.objects.annotate(
                snapshot_values=Subquery(current.values("values")[:1]),
                snapshot_hash=Subquery(current.values("inputs_hash")[:1]),
            ).values())
            json.dumps(rows, default=str)

        t_api, t_values = _best(api), _best(values)
        print(f"API list: {t_api / N * 1e6:.1f} µs per step; .values()+json: "
              f"{t_values / N * 1e6:.1f} µs per step; ratio {t_api / t_values:.2f}x "
              "(target <= 3x)")
    finally:
        connection.creation.destroy_test_db(old_name, verbosity=0)


if __name__ == "__main__":
    main()
