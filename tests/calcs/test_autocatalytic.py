"""Model-based kinetics on all scans at once, model choice and the autocatalysis screen.

Curves are generated from published rate laws (tests/calcs/decomposition_data.py): first order
with METHODS.md C3.4 kinetics, and the extended Prout–Tompkins law (Prout & Tompkins 1944).
"""

import math

import numpy as np
import pytest

from calcs.autocatalytic import autocatalysis_screen, choose_model
from calcs.isoconversional_profile import e_alpha
from calcs.kinetic_fit import fit_rate_model
from calcs.rate_models import master_plot_maximum, pre_exponential
from tests.calcs.decomposition_data import FIRST_ORDER, PROUT_TOMPKINS, analysed, exact_curves


def both(curves):
    return [fit_rate_model(curves, m) for m in ("nth_order", "autocatalytic")]


def test_first_order_parameters_are_recovered_from_exact_curves():
    fit = fit_rate_model(exact_curves(FIRST_ORDER), "nth_order")
    e, _, n = fit.parameters
    assert e == pytest.approx(120e3, rel=1e-4) and n == pytest.approx(1.0, abs=1e-3)
    assert pre_exponential(fit.parameters, fit.reference_temperature_k) == pytest.approx(
        1e12, rel=0.01
    )
    assert fit.r_squared > 0.9999


def test_prout_tompkins_parameters_are_recovered_from_exact_curves():
    fit = fit_rate_model(exact_curves(PROUT_TOMPKINS), "autocatalytic")
    e, _, n, log_z = fit.parameters
    assert e == pytest.approx(130e3, rel=1e-3)
    assert n == pytest.approx(1.2, abs=0.01) and log_z == pytest.approx(-2.0, abs=0.02)
    assert pre_exponential(fit.parameters, fit.reference_temperature_k) == pytest.approx(
        1e13, rel=0.05
    )


def test_from_noisy_heat_flow_the_autocatalytic_decomposition_is_recognised():
    # 1 % white noise on the heat flow, sloped baseline, default limits (chosen here)
    curves = [s.curve for s in analysed(PROUT_TOMPKINS, noise=0.01)]
    fits = both(curves)
    chosen, evidence = choose_model(fits)
    assert chosen.model == "autocatalytic" and evidence["delta_aic"] > 10
    e, _, n, log_z = chosen.parameters
    assert e == pytest.approx(130e3, rel=0.03) and n == pytest.approx(1.2, abs=0.15)
    # the conversion before the lower limit is lost to the baseline: z comes out larger
    assert -2.2 < log_z < -1.4
    screen = autocatalysis_screen(curves, fits, e_alpha(curves))
    assert screen["autocatalytic"] is True
    # Málek 1992: α_M = (1 − n·z)/(n + 1) = 0.45 for n = 1.2, z = 0.01 (derived)
    assert screen["alpha_at_master_plot_maximum"] == pytest.approx([0.45] * 4, abs=0.05)


def test_a_first_order_decomposition_is_not_called_autocatalytic():
    curves = [s.curve for s in analysed(FIRST_ORDER, noise=0.01)]
    fits = both(curves)
    chosen, _ = choose_model(fits)
    # the autocatalytic fit may win on AIC by taking up noise and baseline error, but its
    # f(α) does not accelerate, so the stated criterion keeps nth order
    assert chosen.model == "nth_order"
    screen = autocatalysis_screen(curves, fits, e_alpha(curves))
    assert screen["autocatalytic"] is False and "not inside" in screen["reason"]


def test_master_plot_maximum_matches_the_prout_tompkins_formula():
    # y(α) ∝ (1 − α)ⁿ(α + z) has its maximum at (1 − n·z)/(n + 1) (derived)
    a = np.linspace(0, 1, 20001)
    for n, z in ((1.0, 0.01), (1.5, 0.05), (0.8, 0.001)):
        y = (1 - a) ** n * (a + z)
        assert master_plot_maximum(a, y, np.full_like(a, 400.0), 1e5) == pytest.approx(
            (1 - n * z) / (n + 1), abs=1e-4
        )


def test_the_report_carries_units_uncertainties_and_statistics():
    fit = fit_rate_model(exact_curves(PROUT_TOMPKINS, 801), "autocatalytic")
    report = fit.report()
    assert report["parameters"]["activation_energy_j_per_mol"]["unit"] == "J/mol"
    assert report["parameters"]["order"]["stderr"] >= 0
    assert set(report["statistics"]) >= {"points", "ssr", "aic", "bic", "r_squared"}
    assert report["z"] == pytest.approx(0.01, rel=0.05)
    assert math.isfinite(report["pre_exponential_per_s"])


def test_extra_parameters_are_taken_only_past_the_stated_aic_margin():
    # Burnham & Anderson 2002: ΔAIC > 10
    fits = both(exact_curves(PROUT_TOMPKINS, 801))
    a, b = fits
    shifted = type(b)(**{**b.__dict__, "aic": a.aic - 9.0})
    assert choose_model([a, shifted])[0].model == "nth_order"
    shifted = type(b)(**{**b.__dict__, "aic": a.aic - 11.0})
    assert choose_model([a, shifted])[0].model == "autocatalytic"
