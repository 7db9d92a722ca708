"""Benchmark of the what-if window (run by hand: `python tests/bench/bench_whatif.py`).

A 30 × 30 operating window against one what-if evaluation (target: within 20x), each with the
reaction model built from a 181-row series as a request does, and with the model prebuilt.
Open vessel (one assessment for MTT/TD24) and closed vessel (one per temperature row).
No database: the step is given as in-memory scenario inputs. Each time is the fastest of 25
runs (the machine is shared). Prints ratios; asserts nothing.
"""

from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path
from types import SimpleNamespace

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import numpy as np  # noqa: E402

from calcs.scenario import StepInputs  # noqa: E402
from calcs.semibatch import accumulated_fraction  # noqa: E402
from hazards.whatif import services  # noqa: E402


def case_and_rows(system: str):
    t = np.arange(0.0, 180 * 60.0 + 1, 60.0)
    k, td = 0.1 / 60, 3600.0
    data = {"time_s": t.tolist(), "heat_release_rate_w": (60e3 * k * accumulated_fraction(
        t, k, td)).tolist(), "dosed_fraction": np.minimum(t / td, 1).tolist(),
        "reactor_temperature_k": [303.15] * t.size}
    inputs = StepInputs(
        "semi_batch", 303.15, 5000.0, 2000.0, system, 101325.0, td, solvent_cas="108-88-3",
        vessel_heat_transfer_area_m2=12.0, vessel_u_w_per_m2_k=350.0,
        vessel_coolant_temperature_k=283.15, vessel_relief_set_pressure_pa=6e5,
        vessel_design_pressure_pa=7e5, vessel_headspace_m3=1.5,
        specific_reaction_heat_j_per_kg=120e3, max_accumulation=0.166254,
        max_heat_release_rate_w_per_kg=33.25, decomposition_method="dsc",
        onset_temperature_k=523.15, decomposition_energy_j_per_kg=400e3,
        activation_energy_j_per_mol=100e3, reference_temperature_k=453.15,
        heat_release_rate_at_reference_w_per_kg=50.0)
    case = SimpleNamespace(scenario_inputs=replace(inputs), inputs={"basis": {
        "calorimetry_run": 1}})
    rows = [{"run_id": 1, "run__is_basis": True, "data": data, "initial_mass_kg": 0.4,
             "feed_mass_kg": 0.1}]
    return case, rows


def best_time(fn, repeat=25):
    """The fastest of `repeat` runs: the least disturbed by other work on a shared machine."""
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


RANGES = {"dosing_time_min_s": 900.0, "dosing_time_max_s": 4 * 3600.0,
          "temperature_min_k": 283.15, "temperature_max_k": 323.15,
          "dosing_steps": 30, "temperature_steps": 30}


def measure(system: str) -> None:
    case, rows = case_and_rows(system)
    model = services.build_model(case, rows, activation_energy_j_per_mol=70e3)

    def one_request():
        m = services.build_model(case, rows, activation_energy_j_per_mol=70e3)
        services.evaluate(case, m, dosing_time_s=5400.0)

    def window_request():
        m = services.build_model(case, rows, activation_energy_j_per_mol=70e3)
        services.window(case, m, **RANGES)

    t_one = best_time(one_request)
    t_win = best_time(window_request)
    t_eval = best_time(lambda: services.evaluate(case, model, dosing_time_s=5400.0))
    t_grid = best_time(lambda: services.window(case, model, **RANGES))
    print(f"{system} vessel: one what-if {t_one * 1e3:.2f} ms, 30x30 window "
          f"{t_win * 1e3:.2f} ms, ratio {t_win / t_one:.1f}x (target <= 20x)")
    print(f"{system} vessel, model prebuilt: evaluate {t_eval * 1e3:.2f} ms, window "
          f"{t_grid * 1e3:.2f} ms, ratio {t_grid / t_eval:.1f}x (target <= 20x)")


def main() -> None:
    for system in ("open", "closed"):
        measure(system)


if __name__ == "__main__":
    main()
