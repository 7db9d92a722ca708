"""E(α) by Friedman and Ozawa–Flynn–Wall against their textbook forms and METHODS.md C3.5."""

import math

import numpy as np
import pytest
from scipy.special import exp1

from calcs.constants import R
from calcs.dsc import ConversionCurve
from calcs.isoconversional_profile import e_alpha, isoconversional_points
from tests.calcs.decomposition_data import FIRST_ORDER, analysed, exact_curves


def exact_first_order(beta_k_per_s, e=120e3, a=1e12):
    """α(T) of a first-order reaction under linear heating from the exact temperature integral.

    −ln(1 − α) = (A·E/(β·R))·p(x), p(x) = e^{−x}/x − E₁(x), x = E/(R·T)
    (Doyle 1962; Abramowitz & Stegun 5.1.1 for E₁).
    """
    temp = np.linspace(330.0, 520.0, 40001)
    x = e / (R * temp)
    g = a * e / (beta_k_per_s * R) * (np.exp(-x) / x - exp1(x))
    alpha = -np.expm1(-g)
    rate = a * np.exp(-x) * (1 - alpha)
    return ConversionCurve(beta_k_per_s, (temp - 330) / beta_k_per_s, temp, alpha, rate)


def test_exact_first_order_curves_cross_alpha_half_at_the_tabulated_temperatures():
    # METHODS.md C3.5: T_α=0.5 = 417.968 / 426.060 / 437.237 / 446.077 / 455.273 K
    curves = [exact_first_order(b / 60) for b in (1, 2, 5, 10, 20)]
    _, temps, _ = isoconversional_points(curves, [0.5])
    assert temps[:, 0] == pytest.approx([417.968, 426.060, 437.237, 446.077, 455.273], abs=0.002)


def test_friedman_recovers_e_at_every_conversion_and_ofw_gives_its_textbook_bias():
    # Friedman 1964 is exact for any f(α); OFW with Doyle's 0.4567 gives 120.82 kJ/mol at
    # α = 0.5 (METHODS.md C3.5)
    curves = [exact_first_order(b / 60) for b in (1, 2, 5, 10, 20)]
    fr = e_alpha(curves, "friedman")
    assert fr.activation_energy_j_per_mol == pytest.approx(np.full(19, 120e3), rel=2e-5)
    assert fr.spread < 1e-4 and fr.warnings == ()
    ofw = e_alpha(curves, "ozawa_flynn_wall", [0.5])
    assert ofw.activation_energy_j_per_mol[0] / 1e3 == pytest.approx(120.82, abs=0.05)


def test_e_alpha_from_analysed_scans_stays_near_the_generating_value():
    # generated from METHODS.md C3.4 kinetics; baseline and limits found by the analysis
    profile = e_alpha([s.curve for s in analysed(FIRST_ORDER)], "friedman")
    assert profile.mean_j_per_mol == pytest.approx(120e3, rel=0.005)
    assert profile.spread < 0.02


def test_a_two_step_process_shows_a_varying_e_and_is_warned_about():
    # two independent first-order steps, E = 80 and 160 kJ/mol, equal heat (chosen here):
    # ICTAC 2011: a strongly varying E(α) means multi-step kinetics
    curves = []
    for b in (1, 2, 5, 10):
        c1 = exact_first_order(b / 60, 80e3, math.exp(80e3 / (R * 420)) * 1e-3)
        c2 = exact_first_order(b / 60, 160e3, math.exp(160e3 / (R * 450)) * 1e-3)
        curves.append(
            ConversionCurve(
                b / 60,
                c1.time_s,
                c1.temperature_k,
                (c1.conversion + c2.conversion) / 2,
                (c1.rate_per_s + c2.rate_per_s) / 2,
            )
        )
    profile = e_alpha(curves, "friedman")
    assert profile.spread > 0.2 and profile.trend_j_per_mol > 0
    assert "multi-step" in profile.warnings[-1]


def test_fewer_than_three_heating_rates_are_refused():
    with pytest.raises(ValueError, match="3 or more"):
        e_alpha(exact_curves(FIRST_ORDER, 201)[:2])
