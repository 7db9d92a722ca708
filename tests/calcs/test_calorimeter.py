"""The heat-flow balance returns each term and reproduces METHODS.md C2.1."""

import numpy as np
import pytest

from calcs.calorimeter import (
    heat_capacity_from_ramp,
    heat_flow_balance,
    specific_heat_capacity_from_ramp,
    time_lag_correction,
    ua_from_calibration,
    ua_interpolated,
)
from calcs.errors import CalcInputError


def test_heat_balance_terms_match_c2_1():
    # METHODS.md C2.1 [COMPUTED]: 10.000 + 1.000 + 1.000 + 0.200 = 12.200 W
    t = heat_flow_balance(4.0, 2.5, 1000.0, 0.001, 1.5e-3 / 60, 2000.0, 318.15, 298.15, 0.2, 0.0)
    assert t.heat_flow_w == pytest.approx(10.0)
    assert t.accumulation_w == pytest.approx(1.0)
    assert t.dosing_w == pytest.approx(1.0)
    assert t.loss_w == pytest.approx(0.2)
    assert t.reaction_w == pytest.approx(12.2)


def test_heat_balance_works_on_arrays():
    t = heat_flow_balance(np.array([4.0, 4.0]), np.array([2.5, 0.0]), 1000.0, 0.0)
    assert t.reaction_w.tolist() == [10.0, 0.0]


def test_calibration_and_ramp():
    # METHODS.md §2.1 [DERIVED]
    assert ua_from_calibration(10.0, 2.5) == 4.0
    assert ua_interpolated(50.0, 0.0, 4.0, 100.0, 5.0) == pytest.approx(4.5)
    c = heat_capacity_from_ramp(4.0, -0.5, 0.002)
    assert c == pytest.approx(1000.0)
    assert specific_heat_capacity_from_ramp(c, 0.45, 100.0) == pytest.approx(2000.0)
    with pytest.raises(CalcInputError, match="reactor_minus_jacket_k"):
        heat_capacity_from_ramp(4.0, 0.5, 0.002)


def test_time_lag_correction_adds_tau_times_the_slope():
    assert time_lag_correction([0, 1, 2], [0.0, 1.0, 2.0], 10.0).tolist() == [10.0, 11.0, 12.0]
