"""The dossier's fixed units print the same numbers whichever way they are converted.

Expected texts: the dossier's output before its conversions went through
hazards.quantities (each SI value divided by the exact size of the unit, then rounded to
DISPLAY_DIGITS significant digits). The boundary values were chosen where the last bit of
a floating-point conversion decides the rounding (found by comparing x/1000 with pint's
x·0.001 path): pint's plain float path prints 10.08 kW for 10 075 W, 1.001 bar for
100 050 Pa and 102.6 min for 6 159 s, the exact factor 10.07, 1 and 102.7. Common
practice, no source, for the rounding rule (round half to even of the binary value).
"""

import pytest

from hazards.dossier import view

INDICATOR_CASES = [
    # key, SI value, printed value, unit
    ("cooling_capacity_w", 999.95, "1", "kW"),
    ("cooling_capacity_w", 10075.0, "10.07", "kW"),
    ("plant_peak_heat_release_w", 100350.0, "100.3", "kW"),
    ("mtsr_k", 373.15, "100", "°C"),
    ("mtt_k", 273.15, "0", "°C"),
    ("td24_k", 0.0, "-273.1", "°C"),
    ("tmr_ad_at_mtsr_s", 1800.0, "0.5", "h"),
    ("tmr_ad_at_mtsr_s", 3599.82, "1", "h"),
    ("minimum_dosing_time_s", 6159.0, "102.7", "min"),
    ("mtsr_time_s", 29.97, "0.4995", "min"),
    ("end_pressure_pa", 100050.0, "1", "bar abs"),
    ("end_pressure_pa", 1001.5, "0.01001", "bar abs"),
    ("adiabatic_temperature_rise_k", 49.99995, "50", "K"),
]


def _indicator(key, value):
    step = view._step({"id": 1, "snapshot": {"values": {key: value}, "inputs": {}}}, {})
    label = next(label for k, label, _, _ in view.INDICATORS if k == key)
    return next(row for row in step["indicators"] if row["label"].startswith(label))


@pytest.mark.parametrize(("key", "si", "text", "unit"), INDICATOR_CASES)
def test_indicators_print_in_the_dossier_units_as_before(key, si, text, unit):
    row = _indicator(key, si)
    assert (row["value"], row["unit"]) == (text, unit)


INPUT_CASES = [
    ("specific_reaction_heat_j_per_kg", 10075.0, "10.07", "kJ/kg"),
    ("specific_heat_capacity_j_per_kg_k", 1850.5, "1.851", "kJ/(kg·K)"),
    ("activation_energy_j_per_mol", 100350.0, "100.3", "kJ/mol"),
    ("operating_pressure_pa", 100050.0, "1", "bar abs"),
    ("dosing_time_s", 6159.0, "102.7", "min"),
    ("max_accumulation", 0.12345, "12.35", "%"),
    ("initial_mass_fraction", 0.8, "80", "%"),
    ("process_temperature_k", 303.15, "30", "°C"),
]


@pytest.mark.parametrize(("key", "si", "text", "unit"), INPUT_CASES)
def test_inputs_print_in_the_dossier_units_as_before(key, si, text, unit):
    step = view._step({"id": 1, "snapshot": {"values": {}, "inputs": {key: si}}}, {})
    label = next(label for k, label, _, _ in view.INPUTS if k == key)
    row = next(row for row in step["inputs"] if row["label"] == label)
    assert (row["value"], row["unit"]) == (text, unit)


PARAMETER_CASES = [
    ("rate_constant_from_accumulation_per_s", 0.1 / 60, "0.1", "1/min"),
    ("arc_detection_rate_k_per_s", 0.02 / 60, "0.02", "K/min"),
    ("lab_dosing_time_s", 6159.0, "102.7", "min"),
    ("pad_pressure_at_process_temperature_pa", 100050.0, "1", "bar abs"),
    ("dosing_activation_energy_j_per_mol", 10075.0, "10.07", "kJ/mol"),
    ("td24_extrapolation_k", 12.34567, "12.35", "K"),
    ("lab_temperature_k", 373.15, "100", "°C"),
]


@pytest.mark.parametrize(("key", "si", "text", "unit"), PARAMETER_CASES)
def test_parameters_print_in_the_dossier_units_as_before(key, si, text, unit):
    row = view.parameter_row(key, si)
    assert (row["value"], row["unit"]) == (text, unit)


def test_curve_figures_print_as_before():
    dsc = {"curves": [{"file_name": "a.csv", "sha256": "0" * 64, "sample_mass_kg": 2.5e-6,
                       "derived": {"kind": "dsc", "heating_rate_k_per_s": 1 / 12,
                                   "onset_k": 373.15, "first_deviation_k": 363.15,
                                   "peak_k": 400.0, "energy_j_per_kg": 10075.0,
                                   "baseline": "linear"}},
                      {"file_name": "b.csv", "sha256": "1" * 64, "sample_mass_kg": 0.0025,
                       "derived": {"kind": "arc", "phi": 1.5, "onset_k": 373.15,
                                   "measured_tmr_s": 6159.0,
                                   "corrected": {"onset_k": 363.15, "tmr_at_onset_s": 6159.0},
                                   "max_pressure_pa": 100050.0,
                                   "gas": {"mol_per_kg": 0.25}}}]}
    out = view._decomposition_view(dsc)
    assert out["curves"][0]["figures"] == (
        "5 K/min; onset 100 °C (first deviation 90 °C); peak 126.9 °C; 10.07 kJ/kg "
        "(linear baseline)")
    assert out["curves"][0]["sample_mass"] == "2.5"
    assert out["curves"][1]["figures"] == (
        "φ 1.5; onset 100 °C at 0.02 K/min; measured TMR 102.7 min; φ-corrected onset 90 °C, "
        "TMR there 102.7 min; max pressure 1 bar; gas after cooling 0.25 mol/kg")
    assert out["curves"][1]["sample_mass"] == "2500"
