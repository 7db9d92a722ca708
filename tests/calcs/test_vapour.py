"""Boiling points at pressure agree with IAPWS-IF97 and CoolProp within ±0.2 K (METHODS.md C5.1)."""

import math

import pytest
from CoolProp.CoolProp import PropsSI
from iapws import IAPWS97

from calcs.errors import CalcInputError
from calcs.vapour import (
    AntoineInputs,
    antoine_boiling_point,
    antoine_from_chemicals,
    antoine_vapour_pressure,
    clausius_clapeyron_pressure,
    clausius_clapeyron_temperature,
    extrapolation_warning,
)

WATER, TOLUENE, METHANOL, ETHANOL, ACETONE = ("7732-18-5", "108-88-3", "67-56-1", "64-17-5",
                                              "67-64-1")


@pytest.mark.parametrize("bar", [1.01325, 2.0, 3.01325])
def test_water_boiling_point_agrees_with_iapws_if97(bar):
    # IAPWS-IF97 via iapws; METHODS.md C5.1: Poling Antoine 100.077 / 120.333 / 133.790 °C
    reference = IAPWS97(P=bar / 10.0, x=0).T
    t = antoine_boiling_point(bar * 1e5, antoine_from_chemicals(WATER))
    assert t == pytest.approx(reference, abs=0.2)


def test_water_boiling_point_matches_the_c5_1_antoine_column():
    # METHODS.md C5.1 [COMPUTED], Poling et al. via chemicals
    s = antoine_from_chemicals(WATER)
    for bar, expected in ((1.01325, 100.077), (2.0, 120.333), (3.01325, 133.790)):
        assert antoine_boiling_point(bar * 1e5, s) - 273.15 == pytest.approx(expected, abs=1e-3)


@pytest.mark.parametrize(
    "cas, fluid, bars",
    [(TOLUENE, "Toluene", (1.01325, 2.0)), (METHANOL, "Methanol", (1.01325, 2.0)),
     (ETHANOL, "Ethanol", (1.01325,)), (ACETONE, "Acetone", (1.01325,))],
)
def test_organic_solvents_agree_with_coolprop_inside_their_range(cas, fluid, bars):
    # CoolProp 8 PropsSI('T','P',P,'Q',0,fluid); Poling et al. via chemicals; ±0.2 K in range
    s = antoine_from_chemicals(cas)
    for bar in bars:
        t = antoine_boiling_point(bar * 1e5, s)
        assert t == pytest.approx(PropsSI("T", "P", bar * 1e5, "Q", 0, fluid), abs=0.2)
        assert extrapolation_warning(t - 0.1, s) is None


def test_above_the_range_a_boiling_point_is_returned_with_an_extrapolation_warning():
    # METHODS.md C5.1 [COMPUTED]: toluene 154.112 °C at 3.01325 bar (extrapolated)
    s = antoine_from_chemicals(TOLUENE)
    t = antoine_boiling_point(301325.0, s)
    assert t - 273.15 == pytest.approx(154.112, abs=1e-3)
    w = extrapolation_warning(t, s)
    assert w.startswith("solvent vapour-pressure correlation extrapolated beyond its validity "
                        "range (")
    assert "409.61 K" in w


def test_an_entered_mmhg_degc_set_gives_the_same_boiling_point_as_the_pa_k_set():
    # METHODS.md §5.1: log10(P/mmHg) = 7.99074 − 1687.537/(t/°C + 230.17) is the Poling set
    mmhg = AntoineInputs(7.99074, 1687.537, 230.17, "10", "mmHg", "degC", 273.2, 473.2)
    pa = antoine_from_chemicals(WATER)
    assert antoine_boiling_point(2e5, mmhg) == pytest.approx(antoine_boiling_point(2e5, pa),
                                                             abs=0.01)
    ln_set = AntoineInputs(10.11564 * math.log(10), 1687.537 * math.log(10), -42.98, "e", "Pa",
                           "K")
    assert antoine_vapour_pressure(373.15, ln_set) == pytest.approx(
        antoine_vapour_pressure(373.15, pa), rel=1e-12)


def test_unknown_cas_gives_none_and_bad_sets_raise():
    assert antoine_from_chemicals("0-00-0") is None
    with pytest.raises(CalcInputError, match="log_base = '2': must be '10' or 'e'"):
        antoine_boiling_point(1e5, AntoineInputs(1, 1, 1, "2"))
    with pytest.raises(CalcInputError, match="temperature_unit"):
        antoine_boiling_point(1e5, AntoineInputs(1, 1, 1, "10", "Pa", "degF"))


def test_clausius_clapeyron_matches_c5_2():
    # METHODS.md C5.2 [COMPUTED]: 393.547 K = 120.40 °C, +0.19 K against IAPWS-IF97
    t2 = clausius_clapeyron_temperature(373.124, 101325.0, 2e5, 40.65e3)
    assert t2 == pytest.approx(393.547, abs=1e-3)
    assert t2 - IAPWS97(P=0.2, x=0).T == pytest.approx(0.19, abs=0.01)
    assert clausius_clapeyron_pressure(373.124, 101325.0, t2, 40.65e3) == pytest.approx(2e5)
