"""Benchmarks of the live indicators (run by hand: `python tests/bench/bench_indicators.py`).

Prints ratios measured in one run; asserts nothing about time.

1. Recomputing one step with its database reads and writes, against the same computation on
   inputs already in memory plus one read and one write of a row of that size (target <= 3x).
2. Fan-out: changing a vessel shared by 2,000 steps against one shared by 1,000 (target <= 2.3x),
   with the number of queries of each (target: the same).
"""

from __future__ import annotations

import os
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")
os.environ.setdefault("EXOLEDGER_BENCH_DB", "exoledger_bench")


def _setup():
    import django
    from django.conf import settings

    django.setup()
    from django.test.utils import setup_test_environment

    setup_test_environment()
    from django.db import connection

    old_name = settings.DATABASES["default"]["NAME"]
    connection.creation.create_test_db(verbosity=0, autoclobber=True, keepdb=False, serialize=False)
    return connection, old_name


def _median(fn, repeat=7):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    connection, old_name = _setup()
    try:
        from django.db import transaction
        from django.test.utils import CaptureQueriesContext

        from hazards import models as m
        from hazards.services.indicators import (
            inputs_hash,
            load_cases,
            recompute_steps,
            snapshot_for,
        )
        from tests.factories import (
            CalorimetryRunFactory,
            DecompositionTestFactory,
            ProcessFactory,
            SolventFactory,
            StepFactory,
            VesselFactory,
        )

        step = StepFactory()
        CalorimetryRunFactory(step=step)
        DecompositionTestFactory(step=step)

        # 1. one step, database included, against memory-only compute + one read + one write
        def full():
            recompute_steps([step.pk], force=True)

        (case,) = load_cases([step.pk])
        snap = m.IndicatorSnapshot.objects.filter(step=step, is_current=True).get()

        def baseline():
            snapshot_for(case, inputs_hash(case), snap.computed_at)
            row = m.IndicatorSnapshot.objects.filter(pk=snap.pk).values().get()
            m.IndicatorSnapshot.objects.filter(pk=snap.pk).update(values=row["values"])

        full()
        baseline()
        t_full, t_base = _median(full, 15), _median(baseline, 15)
        ratio1 = t_full / t_base
        print(f"recompute one step: {t_full * 1e3:.2f} ms with the database, "
              f"{t_base * 1e3:.2f} ms compute + 1 read + 1 write -> ratio {ratio1:.2f} "
              f"(target <= 3.0: {'met' if ratio1 <= 3.0 else 'NOT met'})")

        # 2. fan-out
        process = ProcessFactory()
        solvent = SolventFactory()
        results = {}
        for count in (1000, 2000):
            vessel = VesselFactory()
            with transaction.atomic():
                steps = m.ReactionStep.objects.bulk_create(
                    [m.ReactionStep(process=process, sequence=count * 10 + i, name=f"s{i}",
                                    operation_mode="batch", process_temperature_k=303.15,
                                    reaction_mass_kg=5000, specific_heat_capacity_j_per_kg_k=2000,
                                    system="open", operating_pressure_pa=101325.0,
                                    solvent=solvent, vessel=vessel)
                     for i in range(count)]
                )
                m.CalorimetryRun.objects.bulk_create(
                    [m.CalorimetryRun(step=s, specific_reaction_heat_j_per_kg=1.2e5,
                                      max_heat_release_rate_w_per_kg=20.0) for s in steps]
                )
            area = [10.0]

            def change(vessel=vessel, area=area):
                area[0] += 0.5
                vessel.heat_transfer_area_m2 = area[0]
                vessel.save()

            with CaptureQueriesContext(connection) as ctx:
                change()
            results[count] = (_median(change, 3), len(ctx.captured_queries))
        (t1, q1), (t2, q2) = results[1000], results[2000]
        ratio2 = t2 / t1
        print(f"vessel fan-out: 1,000 steps {t1:.2f} s ({q1} queries), 2,000 steps {t2:.2f} s "
              f"({q2} queries) -> ratio {ratio2:.2f} (target <= 2.3: "
              f"{'met' if ratio2 <= 2.3 else 'NOT met'}; queries "
              f"{'constant' if q1 == q2 else 'GROW'})")
    finally:
        connection.creation.destroy_test_db(old_name, verbosity=0)


if __name__ == "__main__":
    main()
