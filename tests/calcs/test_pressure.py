"""Closed-vessel pressure and MTT follow METHODS.md §5.1 and C5.3."""

import pytest

from calcs.constants import R
from calcs.errors import CalcInputError
from calcs.pressure import closed_vessel_mtt, closed_vessel_pressure, gas_volume_released
from calcs.vapour import antoine_from_chemicals, antoine_vapour_pressure


def test_pressure_is_vapour_plus_heated_pad_plus_released_gas():
    # METHODS.md §5.1 [DERIVED]: P = P_vap + p_pad0·T/T0 + n·R·T/V
    p = closed_vessel_pressure(400.0, 5e4, 1e5, 300.0, 10.0, 2.0)
    assert p == pytest.approx(5e4 + 1e5 * 400 / 300 + 10 * R * 400 / 2.0)


def test_mtt_of_a_closed_vessel_is_where_the_pressure_reaches_the_set_pressure():
    water = antoine_from_chemicals("7732-18-5")

    def pvap(t):
        return antoine_vapour_pressure(t, water)

    pad = 101325.0 - pvap(303.15)
    t = closed_vessel_mtt(4e5, pvap, pad, 303.15, 5.0, 1.0)
    assert closed_vessel_pressure(t, pvap(t), pad, 303.15, 5.0, 1.0) == pytest.approx(4e5)
    # more gas gives a lower MTT
    assert closed_vessel_mtt(4e5, pvap, pad, 303.15, 50.0, 1.0) < t


def test_mtt_limits():
    # already above the set pressure: MTT is the start temperature
    assert closed_vessel_mtt(1e5, lambda t: 0.0, 2e5, 300.0) == 300.0
    # never reaching it below 1500 K: None
    assert closed_vessel_mtt(1e7, lambda t: 0.0, 1e5, 300.0) is None


def test_gas_needs_a_headspace():
    with pytest.raises(CalcInputError, match="headspace_m3 = None"):
        closed_vessel_pressure(400.0, 0.0, 1e5, 300.0, 1.0, None)


def test_released_gas_volume_is_ideal_gas():
    # ideal gas molar volume at 273.15 K, 1 atm: 22.414 L/mol (common practice, no source)
    assert gas_volume_released(1.0, 273.15, 101325.0) == pytest.approx(22.414e-3, rel=1e-4)
