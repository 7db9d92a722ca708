"""assess_step picks the best method the data allow, names it, and classifies the step."""

import dataclasses
import json
import math
import time

import numpy as np
import pytest

from calcs.constants import R
from calcs.errors import CalcInputError
from calcs.pressure import closed_vessel_pressure
from calcs.scenario import (
    AntoineInputs,
    Assessment,
    AssessmentSettings,
    SeriesInputs,
    StepInputs,
    assess_step,
)
from calcs.vapour import antoine_from_chemicals, antoine_vapour_pressure

K = 273.15
CP = 2000.0
TOLUENE = "108-88-3"


def kinetics_with_td24(td24_c, e=100e3, cp=CP):
    """Kinetic data whose zero-order TD24 is exactly td24_c (q_ref chosen at T_ref = TD24)."""
    t = td24_c + K
    return dict(activation_energy_j_per_mol=e, reference_temperature_k=t,
                heat_release_rate_at_reference_w_per_kg=cp * R * t * t / (e * 86400.0))


def step(mtsr_c, mtt_c, td24_c, tp_c=30.0, **extra):
    fields = dict(specific_reaction_heat_j_per_kg=(mtsr_c - tp_c) * CP, mtt_override_k=mtt_c + K,
                  **kinetics_with_td24(td24_c))
    fields.update(extra)
    return StepInputs("batch", tp_c + K, 1000.0, CP, "open", None, None, **fields)


@pytest.mark.parametrize(
    "mtsr, mtt, td24, expected",
    [(80, 110, 150, 1), (80, 160, 120, 2), (130, 110, 150, 3), (180, 110, 150, 4),
     (140, 150, 120, 5)],
)
def test_each_class_follows_from_stated_inputs(mtsr, mtt, td24, expected):
    # METHODS.md C4.1 orderings [COMPUTED]
    a = assess_step(step(mtsr, mtt, td24))
    assert a.mtsr_k - K == pytest.approx(mtsr)
    assert a.td24_k - K == pytest.approx(td24, abs=1e-6)
    assert a.criticality_class == expected
    assert a.methods["mtsr"] == "mtsr.batch" and a.methods["td24"] == "td24.kinetic"
    assert a.methods["mtt"] == "mtt.override"


def test_missing_decomposition_data_gives_no_class_and_says_why():
    a = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", None, None,
                               specific_reaction_heat_j_per_kg=100e3, mtt_override_k=383.15))
    assert a.td24_k is None and a.criticality_class is None
    assert "no decomposition data: TD24 unknown, no class can be assigned" in a.warnings
    assert a.mtsr_k == pytest.approx(353.15)


def test_missing_calorimetry_gives_no_rise_and_says_why():
    a = assess_step(StepInputs("batch", 303.15, None, CP, "open", None, None,
                               **kinetics_with_td24(150)))
    assert a.adiabatic_temperature_rise_k is None and a.mtsr_k is None
    assert "no calorimetry run: adiabatic temperature rise unknown" in a.warnings
    assert a.criticality_class is None


def test_td24_method_follows_data_availability():
    base = dict(specific_reaction_heat_j_per_kg=100e3, mtt_override_k=383.15)
    dsc = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", None, None,
                                 onset_temperature_k=473.15, decomposition_method="dsc", **base))
    assert dsc.methods["td24"] == "td24.dsc_onset_screening"
    assert ("TD24 is a screening estimate from a single DSC onset (assumed Ea 50 kJ/mol, "
            "q 20 W/kg at onset)") in dsc.warnings
    assert dsc.parameters["screening_activation_energy_j_per_mol"] == 50e3
    assert dsc.parameters["td24_label"] == "screening estimate"
    assert "keller1997" in dsc.references

    arc = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", None, None,
                                 onset_temperature_k=473.15, decomposition_method="adiabatic",
                                 phi_factor=1.8, activation_energy_j_per_mol=100e3, **base))
    assert arc.methods["td24"] == "td24.adiabatic_phi_corrected"
    assert arc.parameters["corrected_onset_k"] < 473.15
    assert "fisher_goetz1991" in arc.references

    kinetic = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", None, None,
                                     onset_temperature_k=473.15, decomposition_method="dsc",
                                     **kinetics_with_td24(150), **base))
    assert kinetic.methods["td24"] == "td24.kinetic"
    assert not any("screening" in w for w in kinetic.warnings)

    peaks = tuple((b / 60, t) for b, t in zip((1, 2, 5, 10, 20), (421.5638, 429.7805, 441.1322,
                                                                  450.1136, 459.4571),
                                              strict=True))
    fitted = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", None, None,
                                    peak_temperatures=peaks, decomposition_energy_j_per_kg=500e3,
                                    **base))
    assert fitted.methods["td24"] == "td24.kinetic_kissinger"
    assert fitted.parameters["kissinger_activation_energy_j_per_mol"] == pytest.approx(120e3,
                                                                                      rel=1e-5)
    # q(T) = Q_d·A·exp(−E/RT) for first order at α = 0: TD24 from that q
    assert fitted.td24_k is not None and fitted.tmr_ad_at_mtsr_s > 0


def test_tmr_at_mtsr_uses_the_same_heat_release_law():
    a = assess_step(step(80, 110, 150))
    e, t = 100e3, 150 + K
    q_ref = CP * R * t * t / (e * 86400.0)
    q_mtsr = q_ref * math.exp(-(e / R) * (1 / (80 + K) - 1 / t))
    assert a.tmr_ad_at_mtsr_s == pytest.approx(CP * R * (80 + K) ** 2 / (e * q_mtsr))
    assert a.probability == "low" and a.severity == "medium"
    assert a.risk_cell == "acceptable"
    assert "organisational choice" in a.parameters["risk_matrix"]


def test_td24_at_or_below_process_temperature_is_flagged():
    a = assess_step(step(80, 110, 25))
    assert a.td24_below_process_temperature
    assert "TD24 at or below the process temperature" in a.warnings


def test_open_system_mtt_is_the_boiling_point_from_chemicals_or_an_entered_set():
    # Poling et al. via chemicals: toluene 110.611 °C at 1 atm (METHODS.md C5.1 [COMPUTED])
    common = dict(specific_reaction_heat_j_per_kg=100e3, **kinetics_with_td24(150))
    a = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", 101325.0, None,
                               solvent_cas=TOLUENE, **common))
    assert a.mtt_k - K == pytest.approx(110.611, abs=1e-3)
    assert a.methods["mtt"] == "mtt.boiling_point.chemicals"
    assert a.criticality_class == 1
    entered = AntoineInputs(9.05043, 1327.62, -55.525, "10", "Pa", "K", 286.44, 409.61)
    b = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", 301325.0, None,
                               solvent_antoine=entered, **common))
    assert b.methods["mtt"] == "mtt.boiling_point.antoine"
    assert b.mtt_k - K == pytest.approx(154.112, abs=1e-3)
    assert any(w.startswith("solvent vapour-pressure correlation extrapolated beyond its "
                            "validity range (") for w in b.warnings)


def test_closed_system_mtt_is_where_the_vessel_reaches_its_relief_set_pressure():
    s = StepInputs("batch", 303.15, 1000.0, CP, "closed", 101325.0, None, solvent_cas=TOLUENE,
                   vessel_relief_set_pressure_pa=4e5, vessel_headspace_m3=1.0,
                   gas_release_mol_per_kg=0.02, specific_reaction_heat_j_per_kg=100e3,
                   **kinetics_with_td24(150))
    a = assess_step(s)
    assert a.methods["mtt"] == "mtt.closed_vessel_relief"
    tol = antoine_from_chemicals(TOLUENE)
    pad = 101325.0 - antoine_vapour_pressure(303.15, tol)
    assert closed_vessel_pressure(a.mtt_k, antoine_vapour_pressure(a.mtt_k, tol), pad, 303.15,
                                  20.0, 1.0) == pytest.approx(4e5, rel=1e-9)
    expected_end = closed_vessel_pressure(a.mtsr_k, antoine_vapour_pressure(a.mtsr_k, tol), pad,
                                          303.15, 20.0, 1.0)
    assert a.end_pressure_pa == pytest.approx(expected_end)
    assert a.methods["end_pressure"] == "pressure.closed_vessel_at_mtsr"
    design = assess_step(dataclasses.replace(s, vessel_relief_set_pressure_pa=None,
                                             vessel_design_pressure_pa=6e5))
    assert design.methods["mtt"] == "mtt.closed_vessel_design" and design.mtt_k > a.mtt_k


def c17_series(**kw):
    # METHODS.md C1.7 19-row table [COMPUTED]
    q = [0.0, 10.5353, 14.4111, 15.8369, 16.3614, 16.5544, 16.6254, 6.1161, 2.2500, 0.8277,
         0.3045, 0.1120, 0.0412, 0.0152, 0.0056, 0.0021, 0.0008, 0.0003, 0.0001]
    t = np.arange(19) * 600.0
    return SeriesInputs(t.tolist(), q, np.minimum(t / 3600.0, 1.0).tolist(), None, 0.40, 0.10,
                        **kw)


def test_semi_batch_mtsr_comes_from_the_series_with_the_mass_present():
    # METHODS.md C1.7 [COMPUTED]: 41.423 °C at 30 min; ΔT_ad 60 K from Q′ = 120 kJ/kg
    a = assess_step(StepInputs("semi_batch", 303.15, 5000.0, CP, "open", None, 3600.0,
                               series=c17_series(), mtt_override_k=383.15,
                               vessel_u_w_per_m2_k=350.0, vessel_heat_transfer_area_m2=12.0,
                               vessel_coolant_temperature_k=283.15, **kinetics_with_td24(150)))
    assert a.methods["mtsr"] == "mtsr.semi_batch.series"
    assert a.adiabatic_temperature_rise_k == pytest.approx(60.0, rel=1e-6)
    assert a.mtsr_k - K == pytest.approx(41.423, abs=1e-3)
    assert a.mtsr_time_s == 1800.0
    # METHODS.md C2.2 [COMPUTED]: 84 kW against 33.25 W/kg × 5000 kg; t_d,min = 7143 s
    assert a.cooling_capacity_w == pytest.approx(84e3)
    assert a.plant_peak_heat_release_w == pytest.approx(33.25 * 5000, rel=1e-3)
    assert a.cooling_margin == pytest.approx(84e3 / (33.25 * 5000), rel=1e-3)
    assert a.minimum_dosing_time_s == pytest.approx(7143, abs=1)
    assert "cooling capacity below the plant peak heat release" in a.warnings
    assert ("dosing time shorter than the minimum dosing time at the plant cooling capacity"
            in a.warnings)


def test_semi_batch_without_series_uses_the_maximum_accumulation():
    a = assess_step(StepInputs("semi_batch", 303.15, 1000.0, CP, "open", None, None,
                               specific_reaction_heat_j_per_kg=120e3, max_accumulation=0.166254,
                               mtt_override_k=383.15))
    assert a.methods["mtsr"] == "mtsr.semi_batch.max_accumulation"
    assert a.mtsr_k - K == pytest.approx(39.975, abs=1e-3)  # METHODS.md C1.7 [COMPUTED]


def test_settings_select_the_finer_scales():
    cfg = AssessmentSettings(severity_scale="4-level", probability_scale="6-level")
    a = assess_step(step(180, 110, 150), settings=cfg)
    assert a.severity == "medium" and a.probability in {"frequent", "probable", "occasional",
                                                        "seldom", "remote", "almost impossible"}


def test_to_dict_is_json_safe():
    a = assess_step(step(80, 110, 150))
    d = json.loads(json.dumps(a.to_dict()))
    assert d["criticality_class"] == 1 and isinstance(d["warnings"], list)
    # Every field, except barrier checks of a step without measures: such a step keeps the
    # snapshot shape it had before measures existed (the inputs hash and stored snapshots).
    assert set(d) == {f.name for f in dataclasses.fields(Assessment)} - {"barrier_checks"}


@pytest.mark.parametrize(
    "change, argument",
    [(dict(process_temperature_k=-5.0), "process_temperature_k"),
     (dict(specific_heat_capacity_j_per_kg_k=float("nan")), "specific_heat_capacity_j_per_kg_k"),
     (dict(max_accumulation=1.5), "max_accumulation"),
     (dict(operation_mode="continuous"), "operation_mode"),
     (dict(phi_factor=0.5), "phi_factor"),
     (dict(series=SeriesInputs([0, 60], [0, 1], [0, -0.2], None, 1.0, 0.1)),
      "series.dosed_fraction")],
)
def test_invalid_inputs_raise_errors_naming_the_argument(change, argument):
    with pytest.raises(CalcInputError) as e:
        assess_step(dataclasses.replace(step(80, 110, 150), **change))
    assert e.value.argument == argument
    assert argument in str(e.value) and e.value.rule in str(e.value)


def test_a_scalar_assessment_takes_well_under_two_milliseconds():
    s = StepInputs("semi_batch", 303.15, 5000.0, CP, "closed", 101325.0, 7200.0,
                   solvent_cas=TOLUENE, vessel_relief_set_pressure_pa=4e5,
                   vessel_headspace_m3=2.0, specific_reaction_heat_j_per_kg=120e3,
                   max_accumulation=0.2, onset_temperature_k=473.15, decomposition_method="dsc")
    assess_step(s)  # warm the CAS cache
    n = 200
    t0 = time.perf_counter()
    for _ in range(n):
        assess_step(s)
    assert (time.perf_counter() - t0) / n < 2e-3
