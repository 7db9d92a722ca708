"""The window agrees with the single what-if at every grid point (open and closed vessel);
no database needed: the step is given as scenario inputs."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "bench"))
from bench_whatif import case_and_rows  # noqa: E402

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
