"""One operating point, one answer: a semi-batch step's indicators at the plant's dosing
time, temperature and fill, whatever the lab series was measured at (issue 21, item 3).

Expected values: METHODS.md C1.7 (the lab run: k = 0.1 1/min, 60 min feed, m_0/m_f = 0.8,
Q′ = 120 kJ/kg, c_p = 2000) and C2.2 (the plant: U·A·ΔT = 84 kW, 5000 kg) [COMPUTED there];
the model's closed forms [DERIVED] checked on a dense grid here; the modes and their
conservative bound after Stoessel 2008, Thermal Safety of Chemical Processes, ch. 7
(semi-batch reactors: the accumulation sets MTSR, the feed rate bounds the heat release).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from calcs import operating_point as op
from calcs.scenario import SeriesInputs, StepInputs, assess_step
from calcs.semibatch import accumulated_fraction

K = 0.1 / 60  # METHODS.md C1.7
LAB_TD = 3600.0  # the lab doses over 60 min
PLANT_TD = 10800.0  # the plant over 180 min


def c17_series(temperature_k=303.15, k=K, td=LAB_TD):
    t = np.arange(0.0, 180 * 60.0 + 1, 60.0)
    q = 60e3 * k * accumulated_fraction(t, k, td)
    return SeriesInputs(t.tolist(), q.tolist(), np.minimum(t / td, 1.0).tolist(),
                        [temperature_k] * t.size, 0.4, 0.1)


def plant_step(dosing_time_s=PLANT_TD, **changes):
    """METHODS.md C2.2 plant (U 350 W/(m²K), A 12 m², coolant 10 °C, 5000 kg, c_p 2000)
    running the C1.7 reaction; Q′ and the lab peak 33.25 W/kg entered as the run gave them."""
    s = StepInputs("semi_batch", 303.15, 5000.0, 2000.0, "open", 101325.0, dosing_time_s,
                   mtt_override_k=383.15, vessel_heat_transfer_area_m2=12.0,
                   vessel_u_w_per_m2_k=350.0, vessel_coolant_temperature_k=283.15,
                   specific_reaction_heat_j_per_kg=120e3, max_accumulation=0.166254,
                   max_heat_release_rate_w_per_kg=33.25, series=c17_series())
    return replace(s, **changes)


def dense_mtsr_c(td, r0=0.8, tp_c=30.0, d_t=60.0):
    """max_t T_p + a(t)·ΔT_ad·m_f/m(t) on a 1 s grid (METHODS.md §1.1 note): independent of
    the Newton solution in calcs.semibatch."""
    t = np.arange(0.0, td + 1.0, 1.0)
    m_rel = r0 + (1 - r0) * t / td
    return tp_c + float(np.max(accumulated_fraction(t, K, td) / m_rel)) * d_t


# --- the defect ----------------------------------------------------------------------------

def test_a_plant_dosing_over_180_min_is_evaluated_at_180_min_not_at_the_labs_60():
    a = assess_step(plant_step())
    # slower feed, less accumulation: 33.88 °C at 180 min against 40.58 °C at the lab's 60
    assert a.mtsr_k - 273.15 == pytest.approx(dense_mtsr_c(PLANT_TD), abs=2e-3)
    assert a.mtsr_k - 273.15 == pytest.approx(33.879, abs=2e-3)
    # peak Q′·(1 − e^(−k·t_d))/t_d · m = 120e3·(1 − e^(−18))/10800 · 5000 = 55.56 kW (C2.2
    # plant), the lab's 33.25 W/kg belongs to a 60 min feed
    assert a.plant_peak_heat_release_w == pytest.approx(55555.55, rel=2e-3)
    assert a.cooling_margin == pytest.approx(84000 / 55555.55, rel=2e-3)
    assert a.parameters["operating_point_mode"] == "model"
    assert a.methods["mtsr"] == "mtsr.semi_batch.dosing_model"
    assert a.methods["plant_peak_heat_release"] == "cooling.dosing_model_peak_times_mass"
    assert any("lab and plant differ in dosing time (lab 60 min, plant 180 min)" in w
               for w in a.warnings), a.warnings


def test_the_lab_basis_is_recorded_beside_the_plants_point():
    p = assess_step(plant_step()).parameters
    assert p["lab_dosing_time_s"] == pytest.approx(LAB_TD)
    assert p["lab_temperature_k"] == pytest.approx(303.15)
    assert p["lab_initial_mass_fraction"] == pytest.approx(0.8)
    assert p["plant_dosing_time_s"] == pytest.approx(PLANT_TD)
    assert p["operating_point_differences"] == "dosing time"
    assert "180 min" in p["operating_point_basis"]


# --- the modes -----------------------------------------------------------------------------

def test_when_lab_and_plant_agree_the_series_is_used_as_measured():
    a = assess_step(plant_step(LAB_TD * 1.04))  # within 5 %: common practice, no source
    assert a.parameters["operating_point_mode"] == "series"
    assert a.methods["mtsr"] == "mtsr.semi_batch.series"
    # the trapezoid series on a 1 min grid, close to the analytic 40.584 °C of C1.7
    assert a.mtsr_k - 273.15 == pytest.approx(40.584, abs=0.1)
    assert a.plant_peak_heat_release_w == pytest.approx(33.25 * 5000)  # entered × plant mass
    assert not any("lab and plant differ" in w for w in a.warnings)


def test_a_small_temperature_difference_shifts_the_series_and_says_so():
    base = assess_step(plant_step(LAB_TD))
    a = assess_step(plant_step(LAB_TD, process_temperature_k=303.45))  # 0.3 K: within 0.5 K
    assert a.parameters["operating_point_mode"] == "series"
    assert a.parameters["temperature_shift_k"] == pytest.approx(0.3)
    assert a.mtsr_k == pytest.approx(base.mtsr_k + 0.3, abs=1e-9)


def test_another_fill_is_evaluated_through_the_model():
    # plant charges half the final mass first (final/initial 2.0 against the lab's 1.25)
    a = assess_step(plant_step(LAB_TD, initial_mass_fraction=0.5))
    assert a.parameters["operating_point_mode"] == "model"
    assert a.parameters["operating_point_differences"] == "fill"
    assert a.mtsr_k - 273.15 == pytest.approx(dense_mtsr_c(LAB_TD, r0=0.5), abs=2e-3)


def test_without_a_model_the_plant_gets_no_credit_for_reaction_during_dosing():
    # 40 °C plant, 30 °C lab, no activation energy of the desired reaction: k at 40 °C unknown
    a = assess_step(plant_step(process_temperature_k=313.15))
    assert a.parameters["operating_point_mode"] == "no_credit"
    assert a.methods["mtsr"] == "mtsr.semi_batch.no_credit"
    assert a.mtsr_k == pytest.approx(313.15 + 60.0)  # T_p + ΔT_ad: all of the feed accumulated
    # the lab's 33.25 W/kg exceeds the dosing-controlled bound 120e3/10800 = 11.1 W/kg
    assert a.plant_peak_heat_release_w == pytest.approx(33.25 * 5000)
    assert any("no credit for reaction during dosing" in w and "activation energy" in w
               for w in a.warnings)


@pytest.mark.parametrize("ea", [20e3, 60e3, 120e3, 200e3])
def test_the_no_credit_bound_is_never_below_a_model_answer(ea):
    bound = assess_step(plant_step(process_temperature_k=313.15))
    model = assess_step(plant_step(process_temperature_k=313.15,
                                   dosing_activation_energy_j_per_mol=ea))
    assert model.parameters["operating_point_mode"] == "model"
    assert bound.mtsr_k >= model.mtsr_k
    # the model's peak Q′·(1 − e^(−k·t_d))/t_d never exceeds Q′/t_d, part of the bound
    assert bound.plant_peak_heat_release_w >= model.plant_peak_heat_release_w
    assert bound.cooling_margin <= model.cooling_margin


def test_an_entered_accumulation_without_a_series_is_taken_at_the_plants_point():
    a = assess_step(plant_step(LAB_TD, series=None, initial_mass_fraction=0.8))
    assert a.parameters["operating_point_mode"] == "lab_accumulation"
    assert a.mtsr_k - 273.15 == pytest.approx(40.584, abs=2e-3)  # METHODS.md C1.7


def test_an_accumulation_on_the_mass_present_is_used_as_given():
    a = assess_step(plant_step(series=None, accumulation_on_mass_present=0.0646,
                               accumulation_time_s=2609.0))
    assert a.mtsr_k == pytest.approx(303.15 + 0.0646 * 60.0)
    assert a.mtsr_time_s == 2609.0
    assert a.methods["mtsr"] == "mtsr.semi_batch.accumulation_on_mass_present"


# --- the module's functions ------------------------------------------------------------------

def test_slower_dosing_lowers_the_accumulation_and_mtsr():
    m = op.model_from_accumulation(0.166254, LAB_TD, 303.15, 0.8)
    fast = op.inputs_at(m, 120e3, LAB_TD, 303.15)
    slow = op.inputs_at(m, 120e3, PLANT_TD, 303.15)
    # METHODS.md C1.7: max MTSR 40.584 °C at 33.44 min for the 60 min feed
    assert 30 + 60 * fast.accumulation_on_mass_present == pytest.approx(40.584, abs=1e-3)
    assert fast.accumulation_time_s / 60 == pytest.approx(33.44, abs=0.01)
    assert slow.accumulation_at_end_of_dosing == pytest.approx((1 - np.exp(-18)) / 18, rel=1e-5)
    assert slow.accumulation_on_mass_present < fast.accumulation_on_mass_present


@pytest.mark.parametrize(("td", "t", "r0", "expected"), [
    (3600 * 1.049, 303.15, 0.8, ()),
    (3600 * 1.051, 303.15, 0.8, ("dosing time",)),
    (3600.0, 303.64, 0.8, ()),
    (3600.0, 303.66, 0.8, ("temperature",)),
    (3600.0, 303.15, 1 / 1.29, ()),
    (3600.0, 303.15, 1 / 1.31, ("fill",)),
    (None, 303.15, None, ()),
])
def test_the_tolerances_of_lab_against_plant(td, t, r0, expected):
    # 5 % of the dosing time, 0.5 K, 0.05 of final/initial mass: common practice, no source
    assert op.differences(op.LabBasis(3600.0, 303.15, 0.8), td, t, r0) == expected


def test_the_fitted_model_reads_the_lab_basis_from_the_series():
    s = c17_series()
    m = op.model_from_series(s.time_s, s.heat_release_rate_w, s.dosed_fraction, 0.4, 0.1,
                             s.reactor_temperature_k)
    assert m.rate_constant_per_s == pytest.approx(K, rel=1e-6)
    assert m.lab == op.LabBasis(pytest.approx(LAB_TD), pytest.approx(303.15), pytest.approx(0.8))
    assert m.peak_scale == pytest.approx(1.0, abs=2e-3)
