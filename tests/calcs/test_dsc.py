"""One DSC scan: heating rate, baselines, onset, peak and energy against analytic references."""

import math

import numpy as np
import pytest

from calcs.dsc import analyse_scan, heating_rate
from calcs.errors import CalcInputError
from tests.calcs.decomposition_data import (
    ENERGY_J_PER_KG,
    FIRST_ORDER,
    MASS_KG,
    RATES_K_PER_MIN,
    analysed,
    heat_flow,
)


def gaussian_scan(step_w=0.0):
    t = np.linspace(0, 3000, 3001)
    peak = 1e-3 * np.exp(-(((t - 1500) / 100) ** 2))
    alpha = np.cumsum(peak) / peak.sum()
    return t, 300 + t / 60, 2e-4 + peak + step_w * alpha


def test_heating_rate_is_read_from_the_temperature_column():
    # exact for a straight line (common practice, no source)
    t = np.linspace(0, 3600, 500)
    beta, warnings = heating_rate(t, 320 + 5 / 60 * t)
    assert beta == pytest.approx(5 / 60, rel=1e-12) and warnings == ()


def test_a_heating_rate_that_changes_is_warned_about():
    t = np.linspace(0, 3600, 500)
    _, warnings = heating_rate(t, 320 + 5 / 60 * t + 1e-5 * t**2)
    assert "not constant" in warnings[0]


def test_energy_of_a_gaussian_peak_is_its_analytic_integral():
    # ∫ h·exp(−((t − t_p)/s)²) dt = h·s·√π (Gaussian integral, textbook)
    t, temp, hf = gaussian_scan()
    for baseline in ("linear", "sigmoidal"):
        a = analyse_scan(t, temp, hf, MASS_KG, baseline=baseline)
        assert a.energy_j_per_kg == pytest.approx(
            1e-3 * 100 * math.sqrt(math.pi) / MASS_KG, rel=2e-3
        )
        assert a.peak_k == pytest.approx(325.0, abs=0.02)


def test_extrapolated_onset_is_the_tangent_at_the_inflection_meeting_the_baseline():
    # Gaussian: steepest at t_p − s/√2, where the tangent meets zero at t_p − √2·s (derived)
    t, temp, hf = gaussian_scan()
    a = analyse_scan(t, temp, hf, MASS_KG)
    assert a.onset_k == pytest.approx(300 + (1500 - math.sqrt(2) * 100) / 60, abs=0.05)
    assert a.first_deviation_k < a.onset_k < a.peak_k


def test_sigmoidal_baseline_follows_a_heat_capacity_step_the_linear_one_does_not():
    # ICTAC 2011 (Vyazovkin et al.) [MEMORY]: the sigmoidal baseline for a c_p step over the event
    t, temp, hf = gaussian_scan(step_w=2e-4)
    exact = 1e-3 * 100 * math.sqrt(math.pi) / MASS_KG
    sig = analyse_scan(t, temp, hf, MASS_KG, baseline="sigmoidal")
    lin = analyse_scan(t, temp, hf, MASS_KG, baseline="linear")
    assert sig.energy_j_per_kg == pytest.approx(exact, rel=3e-3)
    assert abs(lin.energy_j_per_kg / exact - 1) > 3 * abs(sig.energy_j_per_kg / exact - 1)


def test_first_order_scans_give_the_tabulated_peaks_energy_and_heating_rates():
    # METHODS.md C3.4: T_p = 421.5638 / 429.7805 / 441.1322 / 450.1136 K at 1 / 2 / 5 / 10 K/min
    scans = analysed(FIRST_ORDER)
    for scan, beta, tp in zip(
        scans, RATES_K_PER_MIN, (421.5638, 429.7805, 441.1322, 450.1136), strict=True
    ):
        assert scan.heating_rate_k_per_s == pytest.approx(beta / 60, rel=1e-9)
        assert scan.peak_k == pytest.approx(tp, abs=0.1)
        assert scan.energy_j_per_kg == pytest.approx(ENERGY_J_PER_KG, rel=0.01)
        assert scan.curve.conversion[-1] == pytest.approx(1.0)
        assert scan.onset_k < scan.peak_k
        assert scan.baseline_w.shape == (3001,)


def test_limits_can_be_set_and_must_lie_inside_the_scan():
    t, temp, hf = gaussian_scan()
    a = analyse_scan(t, temp, hf, MASS_KG, limits_k=(315.0, 335.0))
    assert a.limits_k == pytest.approx((315.0, 335.0), abs=0.02)
    with pytest.raises(CalcInputError, match="limits_k"):
        analyse_scan(t, temp, hf, MASS_KG, limits_k=(335.0, 315.0))


def test_a_scan_without_an_exotherm_is_refused_naming_the_heat_flow():
    t = np.linspace(0, 600, 601)
    with pytest.raises(CalcInputError, match="heat_flow"):
        analyse_scan(t, 300 + t / 60, -1e-3 * np.exp(-(((t - 300) / 30) ** 2)), MASS_KG)


def test_noise_does_not_end_the_event_early_and_bias_the_energy_low():
    # first-order law of METHODS.md C3.4 with 800 J/g generated and white noise of 1 % of the
    # peak heat flow: the energy of each scan within 1.5 % (the limits read on the raw signal
    # gave 755-777 J/g, 3-6 % low, with the tail taken into the post-event baseline)
    for i, b in enumerate(RATES_K_PER_MIN):
        a = analyse_scan(*heat_flow(FIRST_ORDER, b, 3001, 0.01, seed=i), MASS_KG)
        assert a.energy_j_per_kg == pytest.approx(800e3, rel=0.015)
