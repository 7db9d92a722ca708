"""TMRad and TD24 follow Townsend & Tou and the check cases of METHODS.md §3."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import lambertw

from calcs.constants import R
from calcs.errors import CalcInputError
from calcs.td_vectorised import td24_vectorised, td_for_time_vectorised
from calcs.tmr import (
    heat_release_rate_at,
    td8,
    td24,
    td_for_time,
    tmr_shift_zero_order,
    tmr_zero_order,
    tmr_zero_order_at,
)
from calcs.tmr_numeric import b_parameter, tmr_nth_order


def test_zero_order_tmr_matches_c3_1():
    # METHODS.md C3.1 [COMPUTED]: 4626.5 s = 1.2851 h (±0.01 %)
    tmr = tmr_zero_order(1800.0, 393.15, 5.0, 100e3)
    assert tmr == pytest.approx(4626.5, rel=1e-4)
    assert tmr / 3600 == pytest.approx(1.2851, rel=1e-4)


def test_td24_and_td8_match_c3_2():
    # METHODS.md C3.2 [COMPUTED]
    t24 = td24(1800.0, 100e3, 453.15, 50.0)
    assert t24 == pytest.approx(377.599, abs=0.01)
    assert t24 - 273.15 == pytest.approx(104.449, abs=0.01)
    assert heat_release_rate_at(t24, 100e3, 453.15, 50.0) == pytest.approx(0.24698, rel=1e-4)
    assert td8(1800.0, 100e3, 453.15, 50.0) - 273.15 == pytest.approx(118.895, abs=0.01)
    assert tmr_zero_order_at(t24, 1800.0, 100e3, 453.15, 50.0) == pytest.approx(86400.0)


def test_td_for_any_time_and_no_root_returns_none():
    assert td_for_time(3600.0, 1800.0, 100e3, 453.15, 50.0) > td8(1800.0, 100e3, 453.15, 50.0)
    # a rate so small that even 1500 K gives TMR > 24 h: no root in [150 K, 1500 K]
    assert td24(1800.0, 100e3, 300.0, 1e-30) is None


def test_vectorised_td24_equals_brent_and_scipy_lambert_w():
    rng = np.random.default_rng(7)
    n = 2000
    cp, e = rng.uniform(500, 4000, n), rng.uniform(2e4, 3e5, n)
    tr, q = rng.uniform(300, 900, n), rng.uniform(1e-3, 1e4, n)
    vec = td24_vectorised(cp, e, tr, q)
    lw = td_for_time_vectorised(86400.0, cp, e, tr, q, method="lambertw")
    brent = np.array([td24(*p) or np.nan for p in zip(cp, e, tr, q, strict=True)])
    assert np.array_equal(np.isnan(vec), np.isnan(brent))
    ok = ~np.isnan(vec)
    np.testing.assert_allclose(vec[ok], brent[ok], rtol=1e-11)
    np.testing.assert_allclose(vec[ok], lw[ok], rtol=1e-12)


def test_closed_form_is_the_lambert_w_solution_of_the_log_form():
    # [DERIVED] u − 2 ln u = C, u = a/T, T = a/(−2 W₋₁(−½ e^{−C/2}))
    cp, e, tr, q = 1800.0, 100e3, 453.15, 50.0
    a = e / R
    c = math.log(86400.0 * q / (cp * a)) + a / tr
    t = a / (-2.0 * lambertw(-0.5 * math.exp(-0.5 * c), k=-1).real)
    assert t == pytest.approx(td24(cp, e, tr, q), rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(800, 3000), st.floats(4e4, 2.5e5), st.floats(350, 700), st.floats(0.01, 500))
def test_vectorised_td24_equals_scalar_td24(cp, e, tr, q):
    scalar = td24(cp, e, tr, q)
    vec = float(td24_vectorised([cp], [e], [tr], [q])[0])
    if scalar is None:
        assert math.isnan(vec)
    else:
        assert vec == pytest.approx(scalar, rel=1e-10)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.01, 100), st.floats(1.01, 100))
def test_td24_rises_as_the_reference_rate_falls(q, factor):
    assert td24(1800.0, 100e3, 453.15, q / factor) > td24(1800.0, 100e3, 453.15, q)


def test_tmr_shift_reproduces_c3_7_corrected_onset():
    # METHODS.md C3.7 [COMPUTED]: 61.98 min at 150 °C -> 114.6 min at 140.39 °C
    assert tmr_shift_zero_order(61.98 * 60, 423.15, 413.538, 100e3) / 60 == pytest.approx(
        114.6, abs=0.05)


@pytest.mark.parametrize(
    "order, rise, tmr_s, t_max_c",
    [(1.0, 200.0, 36451.3, 256.66), (0.0, 200.0, 34094.5, 280.00),
     (2.0, 200.0, 39265.3, 236.76), (1.0, 50.0, 173384.0, 117.32)],
)
@pytest.mark.parametrize("method", ["quad", "lsoda", "radau"])
def test_numeric_nth_order_tmr_matches_c3_6(order, rise, tmr_s, t_max_c, method):
    # METHODS.md C3.6 [COMPUTED; quadrature, cross-checked by LSODA], tolerance ±0.1 %
    r = tmr_nth_order(353.15, rise, 100e3, 1e9, order, method=method)
    assert r.value == pytest.approx(tmr_s, rel=1e-3)
    assert r.parameters["temperature_at_max_rate_k"] - 273.15 == pytest.approx(t_max_c, abs=0.01)


def test_c3_6_zero_order_formula_and_b_parameter():
    # METHODS.md C3.6 [COMPUTED]: k0 = 1.6189e-6 /s, B = 19.29, Townsend-Tou 32025.6 s
    k0 = 1e9 * math.exp(-100e3 / (R * 353.15))
    assert k0 == pytest.approx(1.6189e-6, rel=1e-4)
    assert b_parameter(100e3, 200.0, 353.15) == pytest.approx(19.29, abs=0.01)
    q0 = 1800.0 * 200.0 * k0  # c_p·ΔT_ad·k0 [W/kg]; c_p cancels
    assert tmr_zero_order(1800.0, 353.15, q0, 100e3) == pytest.approx(32025.6, rel=1e-4)
    assert tmr_zero_order(1800.0, 353.15, 1800.0 * 50.0 * k0, 100e3) / 3600 == pytest.approx(
        35.58, abs=0.01)


def test_small_b_warns_that_zero_order_is_conservative():
    r = tmr_nth_order(353.15, 50.0, 100e3, 1e9, 1.0)
    assert r.parameters["b_parameter"] == pytest.approx(4.82, abs=0.01)
    assert any("B = 4.82 < 10" in w for w in r.warnings)
    assert tmr_nth_order(353.15, 200.0, 100e3, 1e9, 1.0).warnings == ()


@pytest.mark.parametrize("e, a", [(100e3, 1e9), (300e3, 1e30)])
def test_numeric_tmr_approaches_the_zero_order_formula_at_large_b(e, a):
    # [DERIVED] as B -> infinity the nth-order TMR tends to the n = 0 integral, which is the
    # Townsend-Tou formula times 1 + 2/γ + 6/γ² + O(γ⁻³), γ = E/(R·T0): the residual is the
    # Frank-Kamenetskii exponent approximation 1/T0 − 1/T ≈ (T − T0)/T0², not the order
    t0, rise = 353.15, 20000.0
    k0 = a * math.exp(-e / (R * t0))
    formula = tmr_zero_order(1000.0, t0, 1000.0 * rise * k0, e)
    first = tmr_nth_order(t0, rise, e, a, 1.0).value
    zeroth = tmr_nth_order(t0, rise, e, a, 0.0).value
    assert first == pytest.approx(zeroth, rel=1e-3)
    g = R * t0 / e
    assert zeroth / formula == pytest.approx(1 + 2 * g + 6 * g * g, abs=1e-3)
    small_b = tmr_nth_order(t0, 200.0, e, a, 1.0).value
    formula_small_b = formula * rise / 200.0  # the formula scales with 1/ΔT_ad
    assert small_b / formula_small_b > first / formula  # conservative, more so at small B


def test_bad_inputs_raise_calc_input_errors():
    with pytest.raises(CalcInputError, match="temperature_k = -1.0: must be an absolute"):
        tmr_zero_order(1800.0, -1.0, 5.0, 100e3)
    with pytest.raises(CalcInputError, match="heat_release_rate_w_per_kg = nan"):
        tmr_zero_order(1800.0, 400.0, float("nan"), 100e3)
    with pytest.raises(CalcInputError, match="activation_energy_j_per_mol .*greater than 0"):
        td24_vectorised([1800.0], [-1.0], [400.0], [1.0])
    with pytest.raises(CalcInputError, match="phi = 0.5: must be at least 1"):
        tmr_nth_order(353.15, 200.0, 100e3, 1e9, 1.0, phi=0.5)
