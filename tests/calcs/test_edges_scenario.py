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
