"""TMRad and TD24 by adiabatic simulation against METHODS.md C3.6, an independent ODE solution,
the quadrature of the exact integral and the existing nth-order route."""

import math

import numpy as np
import pytest
from scipy import integrate, optimize

from calcs.adiabatic_sim import td_simulated, td_uncertainty, tmr_line, tmr_simulated
from calcs.constants import DAY, R
from calcs.dsc import analyse_scan
from calcs.kinetic_fit import fit_rate_model, scan_jackknife_covariance
from calcs.tmr import tmr_zero_order
from calcs.tmr_numeric import tmr_nth_order
from tests.calcs.decomposition_data import (
    ENERGY_J_PER_KG,
    FIRST_ORDER,
    MASS_KG,
    PROUT_TOMPKINS,
    RATES_K_PER_MIN,
    T_REF,
    heat_flow,
)


def c36(n):
    return (100e3, math.log(1e9) - 100e3 / (R * 353.15), n)


@pytest.mark.parametrize(
    "order, rise, expected, t_max_c",
    [
        (1.0, 200.0, 36451.3, 256.66),
        (0.0, 200.0, 34094.5, 280.00),
        (2.0, 200.0, 39265.3, 236.76),
        (1.0, 50.0, 173384.0, 117.32),
    ],
)
def test_nth_order_tmr_matches_the_tabulated_values(order, rise, expected, t_max_c):
    # METHODS.md C3.6 (quadrature, cross-checked by LSODA)
    r = tmr_simulated("nth_order", c36(order), 353.15, 353.15, rise)
    assert r.value == pytest.approx(expected, rel=1e-4)
    assert r.parameters["temperature_at_max_rate_k"] - 273.15 == pytest.approx(t_max_c, abs=0.02)


def test_first_order_td24_equals_the_existing_nth_order_route():
    # brentq over calcs.tmr_numeric.tmr_nth_order (quadrature), the existing route
    def g(t0):
        return math.log(tmr_nth_order(t0, 200.0, 100e3, 1e9, 1.0).value / DAY)

    existing = optimize.brentq(g, 300.0, 400.0, xtol=1e-7)
    assert td_simulated("nth_order", c36(1.0), 353.15, 200.0).value == pytest.approx(
        existing, abs=0.005
    )


def independent_tmr(model, p, t0, rise):
    """Max of dT/dt on a fine grid of an odeint (LSODA, Fortran ODEPACK) solution of [α, T]."""
    e, lnk, n, log_z = p
    z = 10**log_z

    def rhs(y, _t):
        a = min(max(y[0], 0.0), 1.0)
        r = math.exp(lnk - e / R * (1 / y[1] - 1 / T_REF)) * (1 - a) ** n * (a + z)
        return [r, rise * r]

    t = np.linspace(0, 3e5, 300001)
    y = integrate.odeint(rhs, [0.0, t0], t, rtol=1e-10, atol=1e-12)
    return t[np.argmax(np.gradient(y[:, 1], t))]


def test_autocatalytic_tmr_agrees_with_an_independent_ode_solution_and_the_quadrature():
    model, p = PROUT_TOMPKINS
    t0, rise = 380.0, 400.0
    sim = tmr_simulated(model, p, T_REF, t0, rise).value
    assert sim == pytest.approx(independent_tmr(model, p, t0, rise), rel=2e-4)
    # TMR = ∫₀^{α*} dα / (k(T(α))·f(α)) (METHODS.md §3.6, derived)
    e, lnk, n, log_z = p
    z = 10**log_z

    def rate(a):
        return math.exp(lnk - e / R * (1 / (t0 + rise * a) - 1 / T_REF)) * (1 - a) ** n * (a + z)

    def grows(a):
        temp = t0 + rise * a
        return (
            e / R * rise / temp**2 * (1 - a) ** n * (a + z)
            + (1 - a) ** n
            - n * (1 - a) ** (n - 1) * (a + z)
        )

    a_star = optimize.brentq(grows, 0.0, 0.999)
    quad, _ = integrate.quad(lambda a: 1 / rate(a), 0.0, a_star, epsrel=1e-11, limit=500)
    assert sim == pytest.approx(quad, rel=1e-5)


def test_zero_order_tmr_from_the_initial_rate_overstates_an_autocatalytic_tmr():
    # METHODS.md §12.4 [DERIVED]: the initial rate is A·e^{−E/RT₀}·z, so the zero-order formula
    # from it is non-conservative (too long), by a factor that grows as z falls
    model, p = PROUT_TOMPKINS
    t0, rise, cp = 380.0, 400.0, 1000.0
    k0 = math.exp(p[1] - p[0] / R * (1 / t0 - 1 / T_REF))
    ratios = []
    for log_z in (-2.0, -3.0):
        zero = tmr_zero_order(cp, t0, cp * rise * k0 * 10**log_z, p[0])
        ratios.append(zero / tmr_simulated(model, (*p[:3], log_z), T_REF, t0, rise).value)
    assert 2.0 < ratios[0] < ratios[1]


def test_zero_order_limit_is_the_exact_integral_and_townsend_tou_its_leading_term():
    # n = 0: TMR = ∫ dT / (ΔT_ad·k(T)) over [T₀, T₀ + ΔT_ad] (METHODS.md §3.6, derived);
    # Townsend–Tou c_p·R·T₀²/(q₀·E) is its leading term, short by about 2·R·T₀/E
    p = (100e3, math.log(1e9) - 100e3 / (R * 353.15), 0.0)
    rise = 20000.0
    sim = tmr_simulated("nth_order", p, 353.15, 353.15, rise).value
    exact, _ = integrate.quad(
        lambda t: 1 / (rise * 1e9 * math.exp(-100e3 / (R * t))),
        353.15,
        353.15 + rise,
        epsrel=1e-10,
        limit=500,
    )
    assert sim == pytest.approx(exact, rel=1e-5)
    q0 = 1000.0 * rise * 1e9 * math.exp(-100e3 / (R * 353.15))
    townsend_tou = tmr_zero_order(1000.0, 353.15, q0, 100e3)
    assert sim / townsend_tou - 1 == pytest.approx(2 * R * 353.15 / 100e3, rel=0.15)


def test_td24_is_where_the_tmr_line_crosses_24_hours():
    model, p = PROUT_TOMPKINS
    td = td_simulated(model, p, T_REF, 400.0).value
    line = tmr_line(model, p, T_REF, 400.0, [td - 5, td, td + 5])
    assert line[1] == pytest.approx(DAY, rel=1e-3)
    assert line[0] > DAY > line[2]


def test_extrapolation_far_below_the_measured_range_is_warned_about():
    model, p = PROUT_TOMPKINS
    near = td_simulated(model, p, T_REF, 400.0, lowest_measured_k=400.0)
    far = td_simulated(model, p, T_REF, 400.0, lowest_measured_k=450.0)
    assert near.parameters["extrapolation_k"] == pytest.approx(400.0 - near.value)
    assert near.warnings == () and "extrapolated" in far.warnings[0]


def test_td_uncertainty_scales_with_the_parameter_uncertainty():
    # law of propagation (GUM): σ scales with the square root of the covariance
    model, p = PROUT_TOMPKINS
    cov = np.diag([500.0, 0.02, 0.02, 0.05]) ** 2
    one = td_uncertainty(model, p, cov, T_REF, 400.0)
    four = td_uncertainty(model, p, 4 * cov, T_REF, 400.0)
    assert four.value == pytest.approx(2 * one.value, rel=0.05)
    # a direct check of one term: shifting log10 z by its σ moves TD by about g·σ
    shifted = list(p)
    shifted[3] += 0.05
    only_z = td_uncertainty(model, p, np.diag([0, 0, 0, 0.05]) ** 2, T_REF, 400.0).value
    moved = abs(td_simulated(model, shifted, T_REF, 400.0).value - one.parameters["td_k"])
    assert only_z == pytest.approx(moved, rel=0.1)


def _noisy_fit(law, seed, noise=0.01):
    """Four scans of `law` with white noise of 1 % of the peak heat flow, analysed and fitted
    as the curves service does (tests/calcs/decomposition_data.py)."""
    scans = [
        analyse_scan(*heat_flow(law, b, 3001, noise, seed=100 * seed + i), MASS_KG)
        for i, b in enumerate(RATES_K_PER_MIN)
    ]
    conv = [a.curve for a in scans]
    fit = fit_rate_model(conv, law[0])
    q = np.array([a.energy_j_per_kg for a in scans])
    return fit, conv, q


def test_the_td24_band_covers_the_true_td24_at_its_stated_level():
    # first-order law of METHODS.md C3.4/C3.5 (E 120 kJ/mol, A 1e12 1/s), 800 J/g, c_p
    # 2 kJ/(kg·K); the true TD24 is the simulation of the true law. 20 seeds: a 90 % band
    # should hold about 18 (binomial sd 1.3). Measured: 19 of 20, median width 1.06 K; the
    # fit's own covariance with the normal quantile (the band before) held 6 of 20, median
    # width 0.08 K
    model, p = FIRST_ORDER
    cp = 2000.0
    true = td_simulated(model, p, T_REF, ENERGY_J_PER_KG / cp).value
    covered = covered_fit_only = 0
    for seed in range(20):
        fit, conv, q = _noisy_fit(FIRST_ORDER, seed)
        rise, q_se = q.mean() / cp, q.std(ddof=1) / math.sqrt(len(q)) / cp
        cov = fit.covariance + scan_jackknife_covariance(conv, fit)
        band = td_uncertainty(model, fit.parameters, cov, fit.reference_temperature_k, rise,
                              rise_stderr_k=q_se, dof=len(conv) - 1, level=0.9)
        lo, hi = band.parameters["band_k"]
        covered += lo <= true <= hi
        old = td_uncertainty(model, fit.parameters, fit.covariance, fit.reference_temperature_k,
                             rise, level=0.9)
        lo, hi = old.parameters["band_k"]
        covered_fit_only += lo <= true <= hi
    assert covered >= 16, covered
    assert covered_fit_only <= 10, covered_fit_only


def test_the_autocatalytic_band_errs_on_the_safe_side():
    # extended Prout–Tompkins law (tests/calcs/decomposition_data.py): the induction heat
    # below the noise is cut by the integration limits, so TD24 comes out low; the band's
    # lower end must stay below the true TD24 (never above it: that would be unsafe)
    model, p = PROUT_TOMPKINS
    cp = 2000.0
    true = td_simulated(model, p, T_REF, ENERGY_J_PER_KG / cp).value
    for seed in range(5):
        fit, conv, q = _noisy_fit(PROUT_TOMPKINS, seed)
        cov = fit.covariance + scan_jackknife_covariance(conv, fit)
        band = td_uncertainty(model, fit.parameters, cov, fit.reference_temperature_k,
                              q.mean() / cp, dof=len(conv) - 1, level=0.9)
        assert band.parameters["band_k"][0] <= true
        assert band.parameters["td_k"] < true + 1.0


def test_e_and_ln_a_are_strongly_correlated_and_the_band_uses_the_full_covariance():
    fit, conv, _ = _noisy_fit(FIRST_ORDER, 3)
    cov = fit.covariance + scan_jackknife_covariance(conv, fit)
    # ln A = ln k_ref + E/(R·T_ref): E and ln A are almost collinear (METHODS.md §12.3,
    # why the fit writes k at T_ref); in the fitted coordinates much less so
    jac = np.eye(len(fit.parameters))
    jac[1, 0] = 1.0 / (R * fit.reference_temperature_k)
    cov_a = jac @ cov @ jac.T
    assert abs(cov_a[0, 1] / math.sqrt(cov_a[0, 0] * cov_a[1, 1])) > 0.99
    assert abs(cov[0, 1] / math.sqrt(cov[0, 0] * cov[1, 1])) < 0.99
    # the delta method against sampling the multivariate normal of the full covariance
    # (independent check: 150 simulated TD24, their spread)
    full = td_uncertainty(fit.model, fit.parameters, cov, fit.reference_temperature_k, 400.0)
    rng = np.random.default_rng(7)
    tds = [
        td_simulated(fit.model, q, fit.reference_temperature_k, 400.0).value
        for q in rng.multivariate_normal(fit.parameters, cov, 150)
    ]
    assert full.value == pytest.approx(float(np.std(tds, ddof=1)), rel=0.2)
