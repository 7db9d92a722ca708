"""The window agrees with the single what-if at every grid point (open and closed vessel);
no database needed: the step is given as scenario inputs."""

from __future__ import annotations

import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "bench"))
from bench_whatif import case_and_rows  # noqa: E402

from calcs.semibatch import accumulated_fraction  # noqa: E402
from hazards.whatif import services  # noqa: E402


@pytest.mark.parametrize("system", ["open", "closed"])
def test_each_window_cell_is_the_what_if_of_that_point(system):
    case, rows = case_and_rows(system)
    model = services.build_model(case, rows, activation_energy_j_per_mol=70e3)
    w = services.window(case, model, dosing_time_min_s=1800.0, dosing_time_max_s=14400.0,
                        temperature_min_k=293.15, temperature_max_k=313.15, dosing_steps=5,
                        temperature_steps=3)
    g = w.grid
    for i, temp in enumerate(g.temperatures_k):
        for j, td in enumerate(g.dosing_times_s):
            p = services.evaluate(case, model, dosing_time_s=float(td),
                                  process_temperature_k=float(temp))
            assert g.mtsr_k[i, j] == pytest.approx(p.mtsr_k, abs=1e-9)
            assert g.cooling_margin[i, j] == pytest.approx(p.cooling_margin, rel=1e-9)
            assert g.criticality_class[i, j] == p.criticality_class
            assert bool(g.safe[i, j]) == p.acceptable
    assert np.isfinite(g.cooling_limited_dosing_time_s).all()


def test_without_an_activation_energy_the_window_is_one_row_and_says_why():
    case, rows = case_and_rows("open")
    model = services.build_model(case, rows)
    assert model.activation_energy_j_per_mol is None
    w = services.window(case, model, **services.default_ranges(case, model))
    assert w.grid.temperatures_k.tolist() == [303.15]
    with pytest.raises(services.WhatIfRefused) as exc:
        services.evaluate(case, model, dosing_time_s=3600.0, process_temperature_k=313.15)
    assert exc.value.field == "process_temperature"
    # within 0.5 K of the measured temperature k is held
    assert services.evaluate(case, model, dosing_time_s=3600.0,
                             process_temperature_k=303.5).rate_constant_per_s == \
        model.rate_constant_per_s


def test_without_a_series_the_mass_present_is_counted_once():
    # an entered accumulation 0.166254 at 60 min (METHODS.md C1.7, k = 0.1 1/min) and an
    # initial charge of 80 % of the final mass: at 120 min the what-if's MTSR is
    # T_p + X_eff·ΔT_ad with X_eff = max_t a(t)·m_f/m(t) at 120 min, computed here on a 1 s
    # grid [DERIVED, METHODS.md §1.1 note], not a second mass correction of that number
    case, _ = case_and_rows("open")
    case.scenario_inputs = replace(case.scenario_inputs, initial_mass_fraction=0.8)
    model = services.build_model(case, [])
    p = services.evaluate(case, model, dosing_time_s=7200.0)
    t = np.arange(0.0, 7201.0, 1.0)
    x_eff = float(np.max(accumulated_fraction(t, model.rate_constant_per_s, 7200.0)
                         / (0.8 + 0.2 * t / 7200.0)))
    assert p.mtsr_k == pytest.approx(303.15 + 60.0 * x_eff, abs=2e-3)
    # and at the step's own point the entered number as the step reads it
    own = services.evaluate(case, model, dosing_time_s=3600.0)
    assert own.mtsr_k - 273.15 == pytest.approx(40.584, abs=2e-3)  # METHODS.md C1.7
