"""The pseudo-first-order semi-batch model, its fit to a series and the operating window.

Expected values: METHODS.md C1.7, C2.2 and C4.1 [COMPUTED there], the closed forms of the
model [DERIVED], and series generated here from a known model (with and without noise).
"""

import math
from dataclasses import replace

import numpy as np
import pytest

from calcs import criticality
from calcs.errors import CalcInputError
from calcs.scenario import StepInputs, assess_step
from calcs.semibatch import (
    accumulated_fraction,
    accumulation_at_end_of_dosing,
    criticality_classes,
    dosing_profile,
    fit_arrhenius,
    fit_semibatch_series,
    mass_basis_accumulation,
    minimum_dosing_time,
    operating_window,
    peak_specific_heat_release,
    rate_constant_at,
    rate_constant_from_accumulation,
)

K = 0.1 / 60  # METHODS.md C1.7: k = 0.1 min⁻¹
TD = 3600.0  # 60 min
Q_TOT = 60e3  # J


def c17_series(step_s=60.0, end_s=180 * 60.0, k=K, td=TD, noise=0.0, seed=1):
    t = np.arange(0.0, end_s + step_s / 2, step_s)
    q = Q_TOT * k * accumulated_fraction(t, k, td)
    if noise:
        q = q + np.random.default_rng(seed).normal(0.0, noise * q.max(), t.size)
    return t, q, np.minimum(t / td, 1.0)


# --- the model against its closed forms and METHODS.md ----------------------------------

@pytest.mark.parametrize("k_td", [0.05, 1.0, 6.0, 40.0, 500.0])
def test_accumulation_at_end_of_dosing_is_the_closed_form(k_td):
    # [DERIVED] a(t_d) = (1 − e^(−k·t_d))/(k·t_d)
    k = k_td / 5400.0
    assert accumulation_at_end_of_dosing(k, 5400.0) == pytest.approx(
        (1 - math.exp(-k_td)) / k_td, rel=1e-12)


def test_accumulated_fraction_reproduces_the_exact_column_of_c1_7():
    # METHODS.md C1.7 "exact a(t)" column [COMPUTED]
    minutes = [10, 20, 30, 40, 50, 60, 70, 80, 90, 100, 120]
    expected = [0.10535, 0.14411, 0.15837, 0.16361, 0.16554, 0.16625, 0.06116, 0.02250,
                0.00828, 0.00305, 0.00041]
    got = accumulated_fraction(np.array(minutes) * 60.0, K, TD)
    assert got == pytest.approx(expected, abs=6e-6)
    assert accumulation_at_end_of_dosing(K, TD) == pytest.approx(0.166254, abs=1e-6)


def test_heat_release_rate_q_equals_q_tot_k_a_reproduces_the_c1_7_table():
    # METHODS.md C1.7 q column [COMPUTED]: q(t) = Q_tot·k·a(t)
    q = Q_TOT * K * accumulated_fraction(np.array([10, 60, 70, 100]) * 60.0, K, TD)
    assert q == pytest.approx([10.5353, 16.6254, 6.1161, 0.3045], abs=6e-5)
    # peak per kg of final mass: 16.6254 W / 0.5 kg = 33.25 W/kg (C1.7 note)
    assert peak_specific_heat_release(Q_TOT / 0.5, K, TD) == pytest.approx(33.2508, abs=1e-3)


def test_mtsr_with_the_mass_present_peaks_before_the_end_of_dosing():
    # METHODS.md C1.7 analytic reference [COMPUTED]: 40.584 °C at 33.44 min with m(t);
    # 39.975 °C at t_d with the final-mass simplification
    x, t = mass_basis_accumulation(K, TD, 0.8)
    assert 30 + 60 * x == pytest.approx(40.584, abs=1e-3)
    assert t / 60 == pytest.approx(33.44, abs=0.01)
    x1, t1 = mass_basis_accumulation(K, TD, 1.0)
    assert 30 + 60 * x1 == pytest.approx(39.975, abs=1e-3)
    assert t1 == pytest.approx(TD)


def test_mass_basis_accumulation_is_vectorised_and_matches_the_scalar_calls():
    ks = np.array([[K, 2 * K], [0.5 * K, 10 * K]])
    tds = np.array([[1800.0, 3600.0], [7200.0, 900.0]])
    vec, _ = mass_basis_accumulation(ks, tds, 0.7)
    for i in range(2):
        for j in range(2):
            assert vec[i, j] == pytest.approx(mass_basis_accumulation(ks[i, j], tds[i, j],
                                                                      0.7)[0], rel=1e-12)


def test_minimum_dosing_time_and_accumulation_of_c2_2():
    # METHODS.md C2.2 [COMPUTED]: t_d ≥ 119.05 min for 16.8 W/kg, X_ac(t_d) = 0.0840,
    # MTSR at the end of feed 35.04 °C
    t_min = minimum_dosing_time(120e3, K, 16.8)
    assert t_min / 60 == pytest.approx(119.05, abs=0.01)
    assert accumulation_at_end_of_dosing(K, t_min) == pytest.approx(0.0840, abs=1e-4)
    assert 30 + 60 * accumulation_at_end_of_dosing(K, t_min) == pytest.approx(35.04, abs=0.01)
    assert minimum_dosing_time(120e3, K, 300.0) == 0.0  # Q′·k = 200 W/kg < 300 W/kg
    assert minimum_dosing_time(120e3, K, 0.0) is None
    # a fast reaction (k·t_d ≫ 37, where e^(−k·t_d) underflows): t_d,min → Q′/q′_ex
    assert minimum_dosing_time(120e3, 1.0, 16.8) == pytest.approx(120e3 / 16.8, rel=1e-9)


def test_the_rate_constant_inferred_from_an_accumulation_inverts_the_model():
    assert rate_constant_from_accumulation(0.166254, TD) == pytest.approx(K, rel=1e-5)
    for x in (0.01, 0.3, 0.9):
        k = rate_constant_from_accumulation(x, 5000.0)
        assert accumulation_at_end_of_dosing(k, 5000.0) == pytest.approx(x, rel=1e-10)
    with pytest.raises(CalcInputError, match="strictly between 0 and 1"):
        rate_constant_from_accumulation(1.0, TD)


def test_arrhenius_shift_and_its_inverse_fit():
    # [DERIVED] k(T) = k_ref·exp[−E/R (1/T − 1/T_ref)]; the fit must give E back
    temps = np.array([293.15, 303.15, 318.15])
    ks = rate_constant_at(1e-3, 303.15, temps, 72e3)
    fit = fit_arrhenius(temps, ks)
    assert fit.activation_energy_j_per_mol == pytest.approx(72e3, rel=1e-9)
    assert fit.r_squared == pytest.approx(1.0)
    assert fit_arrhenius(temps[:2], ks[:2]).r_squared is None
    with pytest.raises(CalcInputError, match="do not rise with temperature"):
        fit_arrhenius(temps, ks[::-1])
    with pytest.raises(CalcInputError, match="two distinct temperatures"):
        fit_arrhenius([303.15, 303.15], [1e-3, 2e-3])
    assert "poorly determined" in fit_arrhenius([300.0, 305.0], [1e-3, 1.5e-3]).warnings[0]


# --- the fit against series generated from a known model ---------------------------------

def test_the_fit_recovers_k_exactly_from_a_noise_free_c1_7_series():
    t, q, fd = c17_series()
    fit = fit_semibatch_series(t, q, fd, 0.4, 0.1, process_temperature_k=303.15)
    assert fit.rate_constant_per_s == pytest.approx(K, rel=1e-7)
    assert fit.dosing_time_s == TD
    assert fit.r_squared == pytest.approx(1.0, abs=1e-10)
    assert fit.model_total_heat_j == pytest.approx(Q_TOT, rel=1e-6)
    assert fit.model_accumulation_at_end_of_dosing == pytest.approx(0.166254, abs=1e-6)
    assert fit.initial_mass_fraction == pytest.approx(0.8)
    assert fit.k_td == pytest.approx(6.0)
    assert fit.warnings == ()


@pytest.mark.parametrize("k_td", [3.0, 10.0, 30.0])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_the_fit_recovers_k_within_5_percent_with_1_percent_noise(k_td, seed):
    k = k_td / TD
    t, q, fd = c17_series(step_s=30.0, end_s=TD + 8 / k, k=k, noise=0.01, seed=seed)
    fit = fit_semibatch_series(t, q, fd, 0.4, 0.1, process_temperature_k=303.15)
    assert fit.rate_constant_per_s == pytest.approx(k, rel=0.05)
    assert fit.r_squared > 0.98
    assert fit.residuals_w.size == fit.n_points
    assert np.std(fit.residuals_w) == pytest.approx(0.01 * q.max(), rel=0.4)


def test_the_19_row_c1_7_table_fits_k_but_warns_about_few_points():
    # METHODS.md C1.7 table (q rounded to 0.1 mW): four points above 1 % of q_max after t_d
    q = [0.0, 10.5353, 14.4111, 15.8369, 16.3614, 16.5544, 16.6254, 6.1161, 2.2500, 0.8277,
         0.3045, 0.1120, 0.0412, 0.0152, 0.0056, 0.0021, 0.0008, 0.0003, 0.0001]
    t = np.arange(0, 190, 10.0) * 60
    fit = fit_semibatch_series(t, q, np.minimum(t / TD, 1), 0.4, 0.1, process_temperature_k=303.15)
    assert fit.rate_constant_per_s == pytest.approx(K, rel=1e-4)
    assert fit.n_points == 4
    assert any("only 4 post-dosing points" in w for w in fit.warnings)


def test_too_few_post_dosing_points_are_refused():
    t, q, fd = c17_series(step_s=600.0, end_s=TD + 1200.0)
    with pytest.raises(CalcInputError, match="at least 3 points after the end of dosing"):
        fit_semibatch_series(t, q, fd, 0.4, 0.1, process_temperature_k=303.15)


def test_a_non_exponential_decay_is_flagged():
    # second-order-like tail q = q_d/(1 + c·(t − t_d))², same dosing phase
    t, q, fd = c17_series()
    after = t > TD
    q = q.copy()
    q[after] = q[t == TD][0] / (1 + 2.5 * K * (t[after] - TD)) ** 2
    fit = fit_semibatch_series(t, q, fd, 0.4, 0.1, process_temperature_k=303.15)
    assert any("not a single exponential" in w or "R²" in w for w in fit.warnings)


def test_k_td_outside_the_sensible_range_is_flagged():
    t, q, fd = c17_series(k=0.5 / TD, end_s=TD * 15)  # k·t_d = 0.5
    slow = fit_semibatch_series(t, q, fd, 0.4, 0.1, process_temperature_k=303.15)
    assert any("k·t_d = 0.5 < 1" in w for w in slow.warnings)
    t, q, fd = c17_series(step_s=5.0, k=200 / TD, end_s=TD + 400)  # k·t_d = 200
    fast = fit_semibatch_series(t, q, fd, 0.4, 0.1, process_temperature_k=303.15)
    assert any("> 100" in w for w in fast.warnings)


def test_a_lagging_signal_gives_negative_accumulation_and_a_warning():
    # heat recorded ahead of the feed (a dosing record late by 10 min) shows X_ac < 0
    t, q, _ = c17_series()
    late_feed = np.clip((t - 600.0) / TD, 0.0, 1.0)
    fit = fit_semibatch_series(t, q, late_feed, 0.4, 0.1, process_temperature_k=303.15)
    assert any("negative accumulation" in w for w in fit.warnings)


def test_the_fit_temperature_is_the_mean_reactor_temperature_of_the_tail():
    t, q, fd = c17_series()
    tr = np.full(t.size, 303.15)
    tr[t > TD] = 304.15
    fit = fit_semibatch_series(t, q, fd, 0.4, 0.1, reactor_temperature_k=tr)
    assert fit.temperature_k == pytest.approx(304.15)


# --- the window -------------------------------------------------------------------------

def test_vectorised_classes_equal_the_scalar_classes_of_calcs_criticality():
    # METHODS.md C4.1 rows, then every ordering of a small set of values including ties
    rows = [(80, 110, 150, 1), (80, 160, 120, 2), (130, 110, 150, 3), (180, 110, 150, 4),
            (140, 150, 120, 5), (180, 150, 120, 5)]
    got = criticality_classes(*(np.array([r[i] for r in rows]) + 273.15 for i in range(3)))
    assert got.tolist() == [r[3] for r in rows]
    vals = np.array([300.0, 350.0, 400.0])
    m, t, d = np.meshgrid(vals, vals, vals, indexing="ij")
    vec = criticality_classes(m, t, d)
    for idx in np.ndindex(m.shape):
        assert vec[idx] == criticality.criticality_class(300.0, m[idx], t[idx], d[idx])
    assert criticality_classes(np.nan, 400.0, 450.0) == 0


WINDOW = dict(rate_constant_per_s=K, reference_temperature_k=303.15,
              activation_energy_j_per_mol=60e3, specific_heat_j_per_kg=120e3,
              specific_heat_capacity_j_per_kg_k=2000.0, reaction_mass_kg=5000.0,
              heat_transfer_capacity_w_per_k=4200.0, coolant_temperature_k=283.15,
              mtt_k=383.15, td24_k=363.15, minimum_cooling_margin=1.3,
              initial_mass_fraction=0.8)


def test_every_window_cell_equals_the_scenario_assessment_of_that_point():
    """The vectorised grid and calcs.scenario.assess_step agree cell by cell."""
    td = np.linspace(1800.0, 4 * 3600.0, 7)
    temps = np.array([293.15, 303.15, 318.15])
    w = operating_window(td, temps, **WINDOW)
    base = StepInputs("semi_batch", 303.15, 5000.0, 2000.0, "open", None, TD,
                      mtt_override_k=383.15, vessel_heat_transfer_area_m2=12.0,
                      vessel_u_w_per_m2_k=350.0, vessel_coolant_temperature_k=283.15,
                      specific_reaction_heat_j_per_kg=120e3, activation_energy_j_per_mol=80e3,
                      reference_temperature_k=363.15,
                      heat_release_rate_at_reference_w_per_kg=2000.0 * 8.314462618 * 363.15**2
                      / (86400 * 80e3))
    for i, temp in enumerate(temps):
        for j, t_d in enumerate(td):
            k = rate_constant_at(K, 303.15, temp, 60e3)
            eff, _ = mass_basis_accumulation(k, t_d, 0.8)
            a = assess_step(replace(base, process_temperature_k=temp, dosing_time_s=t_d,
                                    max_accumulation=eff,
                                    max_heat_release_rate_w_per_kg=peak_specific_heat_release(
                                        120e3, k, t_d)))
            assert a.td24_k == pytest.approx(363.15, abs=1e-3)
            assert w.mtsr_k[i, j] == pytest.approx(a.mtsr_k, abs=1e-9)
            assert w.cooling_margin[i, j] == pytest.approx(a.cooling_margin, rel=1e-9)
            assert w.criticality_class[i, j] == a.criticality_class
    assert w.safe.any() and not w.safe.all()


def test_the_fastest_safe_dosing_time_is_the_first_safe_column_and_brackets_the_exact_one():
    td = np.linspace(1800.0, 6 * 3600.0, 30)
    w = operating_window(td, [303.15], **{**WINDOW, "td24_k": 500.0})
    j = int(np.argmax(w.safe[0]))
    assert w.fastest_safe_dosing_time_s[0] == td[j]
    assert not w.safe[0, :j].any() and w.safe[0, j:].all()
    # C2.2 plant with margin 1.3: the exact cooling limit lies inside the grid step
    exact = w.cooling_limited_dosing_time_s[0]
    assert exact == pytest.approx(minimum_dosing_time(120e3, K, 16.8, 1.3))
    assert td[j - 1] < exact <= td[j]


def test_a_site_rule_replaces_the_default_acceptance():
    td = np.array([3600.0, 7200.0, 14400.0])
    strict = operating_window(td, [303.15], **WINDOW,
                              rule=lambda cls, margin, mtsr: (cls == 1) & (margin >= 2.0))
    default = operating_window(td, [303.15], **WINDOW)
    assert strict.safe.sum() < default.safe.sum()
    assert np.isnan(operating_window(td, [303.15], **{
        **WINDOW, "minimum_cooling_margin": 99.0}).fastest_safe_dosing_time_s[0])


def test_without_an_activation_energy_only_the_run_temperature_is_evaluated():
    w = operating_window([3600.0], [303.15], **{**WINDOW, "activation_energy_j_per_mol": None})
    assert w.rate_constant_per_s[0] == K
    with pytest.raises(CalcInputError, match="activation_energy_j_per_mol"):
        operating_window([3600.0], [313.15], **{**WINDOW, "activation_energy_j_per_mol": None})


def test_the_dosing_profile_peaks_at_the_mass_basis_maximum():
    t, a, mtsr = dosing_profile(K, TD, 303.15, 60.0, 0.8, points=2001)
    assert a.max() == pytest.approx(0.166254, abs=1e-6)
    assert mtsr.max() - 273.15 == pytest.approx(40.584, abs=1e-3)
    assert t[-1] == pytest.approx(TD + 1800.0)  # 3/k = 30 min after the end of dosing


# Cases built here to hit every tie of METHODS.md §4.1 ("ties to the more critical class");
# the expected class of each cell is calcs.criticality.criticality_class, the one rule.
TIE_VALUES = (340.0, 350.0, 360.0, math.nan)


@pytest.mark.parametrize("process_temperature_k", [300.0, 340.0, 350.0])
def test_the_window_classes_follow_the_one_rule_on_a_grid_with_ties(process_temperature_k):
    m, t, d = np.meshgrid(TIE_VALUES, TIE_VALUES, TIE_VALUES, indexing="ij")
    vec = criticality_classes(m, t, d)
    for idx in np.ndindex(m.shape):
        args = [None if math.isnan(v) else float(v) for v in (m[idx], t[idx], d[idx])]
        assert vec[idx] == (criticality.criticality_class(process_temperature_k, *args) or 0)
    # ties by construction: each class appears, and MTSR = TD24 is 4 or 5, never 1-3
    assert set(vec.ravel().tolist()) == {0, 1, 2, 3, 4, 5}
    assert set(vec[m == d].tolist()) <= {0, 4, 5}


def test_a_window_with_mtt_and_td24_equal_to_a_cells_mtsr_classes_each_cell_by_the_one_rule():
    td = np.array([1800.0, 3600.0, 7200.0])
    temps = np.array([303.15, 313.15])
    first = operating_window(td, temps, **WINDOW)
    tie = float(first.mtsr_k[1, 1])  # a cell's own MTSR, so that cell sits on the boundary
    for mtt, td24 in [(tie, 500.0), (383.15, tie), (tie, tie), (np.array([tie, 383.15]), tie)]:
        w = operating_window(td, temps, **{**WINDOW, "mtt_k": mtt, "td24_k": td24})
        mtt_rows = np.broadcast_to(np.asarray(mtt, dtype=float), temps.shape)
        for i, j in np.ndindex(w.mtsr_k.shape):
            expected = criticality.criticality_class(
                float(temps[i]), float(w.mtsr_k[i, j]), float(mtt_rows[i]), float(td24))
            assert w.criticality_class[i, j] == expected, (mtt, td24, i, j)
        assert w.mtsr_k[1, 1] == tie
    on_boundary = operating_window(td, temps, **{**WINDOW, "mtt_k": 383.15, "td24_k": tie})
    assert tie < 383.15  # so MTSR = TD24 < MTT: class 5 (METHODS.md §4.1, tie to the worse)
    assert on_boundary.criticality_class[1, 1] == 5
    assert on_boundary.criticality_class[1, 2] == 2  # the next cell, MTSR just below TD24

