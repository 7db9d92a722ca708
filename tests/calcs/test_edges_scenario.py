"""Edges of the cooling-failure scenario (issue 15 items 1, 2, 3, 4, 6, 7)."""

import dataclasses

import pytest

from calcs.constants import R
from calcs.scenario import SeriesInputs, StepInputs, assess_step

K = 273.15
CP = 2000.0
TOLUENE = "108-88-3"


def kinetics_with_td24(td24_c, e=100e3, cp=CP):
    """Kinetic data whose zero-order TD24 is exactly td24_c (q_ref chosen at T_ref = TD24)."""
    t = td24_c + K
    return dict(
        activation_energy_j_per_mol=e,
        reference_temperature_k=t,
        heat_release_rate_at_reference_w_per_kg=cp * R * t * t / (e * 86400.0),
    )


def batch(tp_c=30.0, q=100e3, **extra):
    fields = dict(specific_reaction_heat_j_per_kg=q, mtt_override_k=110 + K)
    fields.update(kinetics_with_td24(150))
    fields.update(extra)
    return StepInputs("batch", tp_c + K, 1000.0, CP, "open", None, None, **fields)


# ---- item 4: endothermic and mistyped inputs ---------------------------------------------


def test_an_endothermic_reaction_gives_no_rise_and_the_step_says_so():
    # METHODS.md §1.1 [DERIVED]: ΔT_ad = Q'/c_p is a rise from heat released; an endothermic
    # reaction (Q' < 0) cools, so a cooling failure adds nothing: MTSR = T_p, never below.
    # T_p 100 °C above TD24 90 °C: the honest class is 5 (MTSR >= TD24), not the class 1 that
    # an MTSR of 75 °C (T_p + Q'/c_p) would give.
    a = assess_step(batch(tp_c=100.0, q=-50e3, **kinetics_with_td24(90)))
    assert a.adiabatic_temperature_rise_k == 0.0
    assert a.mtsr_k == pytest.approx(100 + K)
    assert a.criticality_class == 5
    assert any("endothermic" in w and "-50 kJ/kg" in w for w in a.warnings)
    assert a.methods["adiabatic_temperature_rise"] == "adiabatic.endothermic_no_rise"


@pytest.mark.parametrize(
    "change, field, slip",
    [
        # METHODS.md §10: "a factor of 1000 error is easy" (E_a in J/mol against kJ/mol)
        (dict(activation_energy_j_per_mol=100.0), "activation_energy_j_per_mol", "J/mol"),
        # METHODS.md §10 J against kJ: 100 MJ/kg would be ΔT_ad = 50 000 K
        (dict(specific_reaction_heat_j_per_kg=100e6), "specific_reaction_heat_j_per_kg", "J/kg"),
        (dict(specific_reaction_heat_j_per_kg=100.0), "specific_reaction_heat_j_per_kg", "kJ/kg"),
        # METHODS.md §10 J g⁻¹ K⁻¹ = kJ kg⁻¹ K⁻¹: 2.0 typed into a J/(kg K) field
        (dict(specific_heat_capacity_j_per_kg_k=2.0), "specific_heat_capacity_j_per_kg_k", "kJ"),
        # METHODS.md §10 °C against K: 30 typed into a kelvin field
        (dict(process_temperature_k=30.0), "process_temperature_k", "°C entered as kelvin"),
        # METHODS.md §10 K/min heating rates
        (
            dict(peak_temperatures=((5.0, 441.1), (10.0, 450.1), (20.0, 459.5))),
            "peak_temperatures heating rate",
            "K/min entered as K/s",
        ),
        # METHODS.md §10 bar(g) against bar(a)
        (dict(vessel_relief_set_pressure_pa=1e5), "vessel_relief_set_pressure_pa", "gauge"),
    ],
)
def test_unit_slips_warn_naming_field_value_and_slip(change, field, slip):
    a = assess_step(dataclasses.replace(batch(), **change))
    hits = [w for w in a.warnings if w.startswith(f"plausibility: {field} = ")]
    assert len(hits) == 1, a.warnings
    assert slip in hits[0] and "likely slip" in hits[0]


def test_td24_near_room_temperature_warns_of_an_ea_slip():
    # METHODS.md §10 (E_a factor 1000) through TD24: E_a 1000x too small gives TD24 ~ ambient
    a = assess_step(batch(**kinetics_with_td24(10)))
    assert any(
        w.startswith("plausibility: td24_k = ") and "J/mol against kJ/mol" in w for w in a.warnings
    )


def test_an_ordinary_step_has_no_plausibility_warning():
    # METHODS.md C3.2 inputs (q_ref 50 W/kg at 180 °C, E_a 100 kJ/mol) and C1.4 (400 kJ/kg)
    a = assess_step(
        StepInputs(
            "batch",
            303.15,
            1000.0,
            2000.0,
            "open",
            101325.0,
            None,
            mtt_override_k=383.15,
            specific_reaction_heat_j_per_kg=400e3,
            activation_energy_j_per_mol=100e3,
            reference_temperature_k=453.15,
            heat_release_rate_at_reference_w_per_kg=50.0,
        )
    )
    assert not [w for w in a.warnings if w.startswith("plausibility")]
    assert a.adiabatic_temperature_rise_k == pytest.approx(200.0)


# ---- item 3: feeds above the stoichiometric amount; records that stop early -------------


def test_a_feed_above_stoichiometric_is_accepted_and_capped_at_one():
    # METHODS.md §1.2 steps 1-6, worked by hand: Q = [0, 3000, 9000, 12000] J (trapezoid),
    # X_th = [0, .25, .75, 1], f = min(f_d, 1) = [0, .6, 1, 1] (step 4 caps a 1.2-equivalent
    # feed), X_ac = [0, .35, .25, 0]; m = 0.4 + 0.12·f_d/1.2 = [.40, .46, .52, .52] kg (0.12 kg
    # is the whole feed, dosed by 1.2 equivalents); MTSR(600 s) = T_p + .35·12000/(.46·2000).
    series = SeriesInputs([0, 600, 1200, 1800], [0, 10, 10, 0], [0, 0.6, 1.2, 1.2], None, 0.4, 0.12)
    a = assess_step(
        StepInputs("semi_batch", 303.15, 1000.0, CP, "open", None, 1200.0, series=series,
                   mtt_override_k=383.15, **kinetics_with_td24(150))
    )
    assert a.methods["mtsr"] == "mtsr.semi_batch.series"
    assert a.mtsr_k - 303.15 == pytest.approx(0.35 * 12000 / (0.46 * 2000), rel=1e-12)
    assert a.mtsr_time_s == 600.0
    assert any("1.2 equivalents" in w and "capped at 1" in w for w in a.warnings)


def test_a_record_that_stops_before_the_feed_ends_does_not_get_the_whole_feed_mass():
    # METHODS.md §1.2 step 6 with m(t) the mass present: the record stops at f_d = 0.6 of a
    # 0.1 kg feed, so its last point holds 0.4 + 0.06 kg, not 0.5 kg. Worked by hand:
    # Q = [0, 0, 1200] J, X_ac = [0, .3, 0], m(600 s) = 0.43 kg,
    # MTSR(600 s) − T_p = .3·1200/(.43·2000) = 0.41860 K (0.4 K with the whole feed mass).
    from calcs.accumulation import analyse_accumulation

    a = analyse_accumulation([0, 600, 1200], [0, 0, 4], [0, 0.3, 0.6], CP, 0.4, 0.1,
                             process_temperature_k=303.15)
    assert a.mass_kg.tolist() == pytest.approx([0.4, 0.43, 0.46])
    assert a.max_mtsr_k - 303.15 == pytest.approx(0.3 * 1200 / (0.43 * 2000), rel=1e-12)
    assert any("ends at a dosed fraction of 0.6" in w for w in a.warnings)


# ---- item 1: closed vessel without vapour-pressure data ----------------------------------


def closed(**extra):
    fields = dict(vessel_relief_set_pressure_pa=4e5, vessel_headspace_m3=1.0,
                  specific_reaction_heat_j_per_kg=100e3, **kinetics_with_td24(150))
    fields.update(extra)
    return StepInputs("batch", 303.15, 1000.0, CP, "closed", 101325.0, None, **fields)


def test_a_closed_vessel_without_vapour_pressure_data_has_no_mtt_and_no_class():
    # METHODS.md §5.1: P(T) = P_vap(T) + p_pad·T/T_0 + n·R·T/V; without P_vap the sum is the
    # pad gas alone, whose MTT (T_0·P_set/p_pad = 1197 K here) lies far above any liquid's
    # boiling point: not an MTT. It is unknown, and the step names the missing input.
    a = assess_step(closed())
    assert a.mtt_k is None and a.criticality_class is None
    assert "mtt" not in a.methods
    assert any(w.startswith("MTT unknown: the closed vessel has no solvent vapour-pressure "
                            "data") and "non-volatile" in w for w in a.warnings)
    assert a.end_pressure_pa is None


def test_a_recorded_non_volatile_declaration_counts_pad_gas_only():
    # Gay-Lussac (ideal gas at constant volume, p/T constant; common textbook law):
    # MTT = T_0·P_set/p_pad = 303.15 K · 4e5/101325 (no gas released)
    a = assess_step(closed(non_volatile_declared=True))
    assert a.mtt_k == pytest.approx(303.15 * 4e5 / 101325.0, rel=1e-9)
    assert a.methods["mtt"] == "mtt.closed_vessel_relief"
    assert a.parameters["vapour_pressure_source"] == "none: reaction mass declared non-volatile"
    assert any("declared non-volatile" in w for w in a.warnings)
    assert a.criticality_class is not None


# ---- item 6: vacuum ------------------------------------------------------------------------


def test_under_vacuum_mtt_is_the_boiling_point_there_and_the_class_at_1_atm_is_given():
    # CoolProp 8.0.0 PropsSI("T", "P", P, "Q", 0, "Toluene") (METHODS.md §5.2 library):
    # 322.59 K (49.44 °C) at 0.12 bar; 383.75 K (110.60 °C) at 1 atm (C5.1: 110.596 °C).
    from CoolProp.CoolProp import PropsSI

    t_vac = PropsSI("T", "P", 12e3, "Q", 0, "Toluene")
    t_atm = PropsSI("T", "P", 101325.0, "Q", 0, "Toluene")
    s = StepInputs("batch", 303.15, 1000.0, CP, "open", 12e3, None, solvent_cas=TOLUENE,
                   specific_reaction_heat_j_per_kg=100e3, **kinetics_with_td24(150))
    a = assess_step(s)  # MTSR 80 °C, TD24 150 °C
    assert a.mtt_k == pytest.approx(t_vac, abs=0.2)  # ±0.2 K as METHODS.md C5.1 suggests
    assert a.criticality_class == 3  # MTT 49 °C < MTSR 80 °C < TD24
    assert a.mtt_at_ambient_pressure_k == pytest.approx(t_atm, abs=0.2)
    assert a.criticality_class_at_ambient_pressure == 1  # MTSR < MTT(1 atm) < TD24
    assert any("vacuum" in w and "condenser" in w for w in a.warnings)
    plain = assess_step(dataclasses.replace(s, operating_pressure_pa=101325.0))
    assert plain.mtt_at_ambient_pressure_k is None
    assert not any("vacuum" in w for w in plain.warnings)


# ---- item 2: semi-batch with an entered maximum accumulation ------------------------------


def semi(**extra):
    fields = dict(specific_reaction_heat_j_per_kg=120e3, max_accumulation=0.166254,
                  mtt_override_k=383.15)
    fields.update(extra)
    return StepInputs("semi_batch", 303.15, 1000.0, CP, "open", None, 3600.0, **fields)


def test_an_entered_accumulation_is_used_on_the_mass_present():
    # METHODS.md C1.7 [COMPUTED]: X_ac(t_d) = 0.166254 for k·t_d = 6, m_0/m_f = 0.8; the true
    # maximum of MTSR(t) is 40.584 °C at 33.44 min (39.975 °C on the final-mass basis)
    a = assess_step(semi(initial_mass_fraction=0.8))
    assert a.methods["mtsr"] == "mtsr.semi_batch.max_accumulation_mass_basis"
    assert a.mtsr_k - K == pytest.approx(40.584, abs=1e-3)
    assert a.mtsr_time_s / 60 == pytest.approx(33.44, abs=0.01)


def test_without_the_initial_charge_the_basis_is_said_and_warned():
    # METHODS.md §1.1 note: the final-mass basis underestimates MTSR before the end of feed
    a = assess_step(semi())
    assert a.methods["mtsr"] == "mtsr.semi_batch.max_accumulation"
    assert a.mtsr_k - K == pytest.approx(39.975, abs=1e-3)
    assert a.parameters["accumulation_mass_basis"] == "final mass"
    assert any("final mass" in w and "initial charge" in w for w in a.warnings)


# ---- item 7: extrapolation ------------------------------------------------------------------


def test_td24_from_a_dsc_onset_reports_its_extrapolation_and_warns_past_the_limit():
    # METHODS.md §12.4: "state the extrapolation distance (lowest temperature at which the
    # decomposition was measured minus TD24)"; limit 50 K: common practice, no source.
    # METHODS.md C3.3 [COMPUTED]: onset 200 °C, c_p 1800, E_a 50 kJ/mol, 20 W/kg -> 91.77 °C
    a = assess_step(StepInputs("batch", 303.15, 1000.0, 1800.0, "open", None, None,
                               mtt_override_k=383.15, specific_reaction_heat_j_per_kg=100e3,
                               onset_temperature_k=473.15, decomposition_method="dsc"))
    assert a.td24_k - K == pytest.approx(91.77, abs=0.05)
    assert a.parameters["lowest_measured_temperature_k"] == 473.15
    assert a.parameters["td24_extrapolation_k"] == pytest.approx(200 - 91.77, abs=0.05)
    # MTSR = 30 °C + 100 kJ/kg / 1.8 kJ/(kg K) = 85.56 °C
    assert a.parameters["tmr_extrapolation_k"] == pytest.approx(473.15 - (303.15 + 100e3 / 1800))
    assert any(w.startswith("TD24 extrapolates 108 K below the lowest measured temperature")
               for w in a.warnings)


def test_kissinger_extrapolation_starts_at_the_lowest_peak():
    # METHODS.md C3.4 peaks (lowest 421.5638 K at 1 K/min)
    peaks = tuple((b / 60, t) for b, t in zip((1, 2, 5, 10, 20), (421.5638, 429.7805, 441.1322,
                                                                  450.1136, 459.4571),
                                              strict=True))
    a = assess_step(batch(peak_temperatures=peaks, decomposition_energy_j_per_kg=500e3,
                          activation_energy_j_per_mol=None, reference_temperature_k=None,
                          heat_release_rate_at_reference_w_per_kg=None))
    assert a.parameters["lowest_measured_temperature_k"] == 421.5638
    assert a.parameters["td24_extrapolation_k"] == pytest.approx(421.5638 - a.td24_k)


def test_no_extrapolation_warning_within_the_limit():
    # kinetics measured at TD24 itself (T_ref = TD24): no extrapolation
    a = assess_step(batch())
    assert a.parameters["td24_extrapolation_k"] == pytest.approx(0.0, abs=1e-9)
    assert not any(w.startswith("TD24 extrapolates") for w in a.warnings)
