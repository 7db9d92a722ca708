"""Kissinger, ASTM E698 and isoconversional methods recover the model of METHODS.md C3.4/C3.5."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from calcs.constants import R
from calcs.errors import CalcInputError
from calcs.isoconversional import (
    activation_energy_variation,
    friedman,
    kissinger_akahira_sunose,
    ozawa_flynn_wall,
)
from calcs.kinetics import astm_e698, e698_pre_exponential, kissinger

E, A = 120e3, 1e12  # METHODS.md C3.4 generating model, first order
BETA_K_PER_MIN = np.array([1.0, 2.0, 5.0, 10.0, 20.0])
T_ALPHA_05 = [417.968, 426.060, 437.237, 446.077, 455.273]  # METHODS.md C3.5 [COMPUTED]


def exact_peak(beta_k_per_s):
    # [DERIVED] first-order maximum-rate condition β·E/(R·T²) = A·exp(−E/(R·T))
    return brentq(lambda t: beta_k_per_s * E / (R * t * t) - A * math.exp(-E / (R * t)), 300, 700,
                  xtol=1e-12)


def test_exact_peaks_reproduce_the_c3_4_table():
    # METHODS.md C3.4 [COMPUTED]
    peaks = [exact_peak(b / 60) for b in BETA_K_PER_MIN]
    np.testing.assert_allclose(peaks, [421.5638, 429.7805, 441.1322, 450.1136, 459.4571],
                               atol=1e-4)


def test_kissinger_recovers_e_and_a_from_exact_peaks():
    # METHODS.md C3.4 [COMPUTED]: E = 120.000 kJ/mol, A = 1.000e12 /s, ln A = 27.631
    peaks = [exact_peak(b / 60) for b in BETA_K_PER_MIN]
    fit = kissinger(BETA_K_PER_MIN / 60, peaks)
    assert fit.activation_energy_j_per_mol == pytest.approx(120e3, rel=1e-6)
    assert fit.pre_exponential_per_s == pytest.approx(1e12, rel=1e-5)
    assert math.log(fit.pre_exponential_per_s) == pytest.approx(27.631, abs=1e-3)
    assert fit.activation_energy_stderr_j_per_mol < 1.0
    assert fit.warnings == ()


def test_kissinger_heating_rate_unit_is_handled():
    # METHODS.md C3.4: β in K/min left unconverted gives A = 6.000e13 /min
    peaks = [exact_peak(b / 60) for b in BETA_K_PER_MIN]
    per_min = kissinger(BETA_K_PER_MIN, peaks, heating_rate_unit="K/s")
    assert per_min.pre_exponential_per_s == pytest.approx(6e13, rel=1e-5)
    converted = kissinger(BETA_K_PER_MIN, peaks, heating_rate_unit="K/min")
    assert converted.pre_exponential_per_s == pytest.approx(1e12, rel=1e-5)


def test_kissinger_on_rounded_peaks_gives_realistic_uncertainty():
    # METHODS.md C3.4 [COMPUTED]: E 120.05 kJ/mol, A 1.015e12 /s; E ±0.5 %, A within ×1.2
    fit = kissinger(BETA_K_PER_MIN / 60, [421.6, 429.8, 441.1, 450.1, 459.5])
    assert fit.activation_energy_j_per_mol == pytest.approx(120.05e3, rel=5e-3)
    assert 1e12 / 1.2 < fit.pre_exponential_per_s < 1.2e12
    assert fit.activation_energy_stderr_j_per_mol > 10.0
    assert fit.ln_pre_exponential_stderr > 0.0


def test_e698_starts_from_doyle_and_iterates_to_convergence():
    # METHODS.md C3.4: the Doyle first approximation gives 121.09 kJ/mol (+0.9 %) [COMPUTED];
    # the iteration (Senum-Yang in place of E698's table, see calcs.kinetics) converges near 120
    peaks = [exact_peak(b / 60) for b in BETA_K_PER_MIN]
    slope = np.polyfit(1 / np.array(peaks), np.log10(BETA_K_PER_MIN), 1)[0]
    assert -2.19 * R * slope == pytest.approx(121.09e3, abs=10)
    fit = astm_e698(BETA_K_PER_MIN, peaks, heating_rate_unit="K/min")
    assert fit.iterations > 1
    assert fit.activation_energy_j_per_mol == pytest.approx(120e3, rel=5e-3)
    assert fit.pre_exponential_per_s == pytest.approx(1e12, rel=0.1)


def test_e698_pre_exponential_at_5_k_per_min():
    # METHODS.md C3.4 [COMPUTED]: Z = 1.000e12 /s
    assert e698_pre_exponential(5 / 60, exact_peak(5 / 60), 120e3) == pytest.approx(1e12,
                                                                                     rel=1e-6)


def test_isoconversional_methods_match_c3_5():
    # METHODS.md C3.5 [COMPUTED], ±0.05 kJ/mol
    assert ozawa_flynn_wall(BETA_K_PER_MIN, T_ALPHA_05, "K/min").activation_energy_j_per_mol == (
        pytest.approx(120.82e3, abs=50))
    assert kissinger_akahira_sunose(BETA_K_PER_MIN, T_ALPHA_05, "K/min") \
        .activation_energy_j_per_mol == pytest.approx(119.80e3, abs=50)
    rates = [A * math.exp(-E / (R * t)) * 0.5 for t in T_ALPHA_05]  # dα/dt at α = 0.5
    assert friedman(rates, T_ALPHA_05).activation_energy_j_per_mol == pytest.approx(120.0e3,
                                                                                    abs=50)


def test_variation_of_e_with_conversion_warns_above_threshold():
    assert activation_energy_variation([0.2, 0.5, 0.8], [118e3, 120e3, 121e3])[1] == ()
    spread, warnings = activation_energy_variation([0.2, 0.5, 0.8], [90e3, 120e3, 150e3], 0.2)
    assert spread == pytest.approx(0.5)
    assert "multi-step" in warnings[0]


def test_fewer_than_three_heating_rates_are_refused():
    with pytest.raises(CalcInputError, match="heating_rates = .*needs at least 3 values"):
        kissinger([1 / 60, 2 / 60], [421.6, 429.8])


def test_few_rates_and_temperatures_outside_e2890_range_warn():
    fit = kissinger([1 / 60, 2 / 60, 5 / 60], [950.0, 970.0, 1000.0])
    assert any("at least 4" in w for w in fit.warnings)
    assert any("300-900 K" in w for w in fit.warnings)
    with pytest.raises(CalcInputError, match="peak_temperatures_k .*above 0 K"):
        kissinger([1, 2, 3], [400.0, -1.0, 420.0])
