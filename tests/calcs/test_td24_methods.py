"""The TD24 method table (calcs.td24_methods) is the scenario's choice: for each kind of typed
decomposition data, the first method of td24_methods is the method assess_step names, and
td24(..., method=...) gives the TD24 it reports."""

from __future__ import annotations

import pytest

from calcs import td24_methods as tm
from calcs.scenario import StepInputs, assess_step

CP = 2000.0
BASE = dict(specific_reaction_heat_j_per_kg=100e3, mtt_override_k=383.15)
# Kissinger peaks of an invented first-order decomposition, E = 120 kJ/mol (the same set as
# tests/calcs/test_scenario.py, computed there)
PEAKS = tuple((b / 60, t) for b, t in zip((1, 2, 5, 10, 20),
                                          (421.5638, 429.7805, 441.1322, 450.1136, 459.4571),
                                          strict=True))

CASES = {
    "dsc onset": dict(onset_temperature_k=473.15, decomposition_method="dsc"),
    "adiabatic onset, phi": dict(onset_temperature_k=473.15, decomposition_method="adiabatic",
                                 phi_factor=1.8, activation_energy_j_per_mol=100e3),
    "adiabatic onset, no phi": dict(onset_temperature_k=473.15,
                                    decomposition_method="adiabatic"),
    "dsc peaks": dict(peak_temperatures=PEAKS, decomposition_energy_j_per_kg=500e3,
                      onset_temperature_k=473.15, decomposition_method="dsc"),
    "typed kinetics": dict(activation_energy_j_per_mol=100e3, reference_temperature_k=400.0,
                           heat_release_rate_at_reference_w_per_kg=0.5,
                           onset_temperature_k=473.15, decomposition_method="dsc"),
}
EXPECTED = {"dsc onset": tm.DSC_ONSET_SCREENING,
            "adiabatic onset, phi": tm.ADIABATIC_PHI_CORRECTED,
            "adiabatic onset, no phi": tm.ADIABATIC_UNCORRECTED,
            "dsc peaks": tm.KINETIC_KISSINGER, "typed kinetics": tm.KINETIC}


@pytest.mark.parametrize("case", list(CASES))
def test_the_scenario_takes_the_first_method_of_the_table(case):
    data = CASES[case]
    a = assess_step(StepInputs("batch", 303.15, 1000.0, CP, "open", None, None, **BASE, **data))
    inputs = {k: v for k, v in data.items() if k != "decomposition_method"}
    methods = tm.td24_methods(onset_adiabatic=data["decomposition_method"] == "adiabatic",
                              **inputs)
    assert methods[0] == EXPECTED[case] == a.methods["td24"]
    by_method = tm.td24(CP, method=methods[0], **inputs)
    assert by_method is not None and by_method == pytest.approx(a.td24_k, rel=1e-12)


def test_the_table_lists_every_method_the_data_allow_best_first():
    both = tm.td24_methods(**{k: v for k, v in CASES["typed kinetics"].items()
                              if k != "decomposition_method"}, peak_temperatures=PEAKS,
                           decomposition_energy_j_per_kg=500e3)
    assert both == [tm.KINETIC, tm.KINETIC_KISSINGER, tm.DSC_ONSET_SCREENING]
    assert tm.td24_methods(peak_temperatures=PEAKS[:2], decomposition_energy_j_per_kg=500e3) == []


def test_an_adiabatic_onset_without_cp_gives_no_td24_and_an_unknown_method_is_named():
    assert tm.td24_model(tm.ADIABATIC_UNCORRECTED, onset_temperature_k=450.0) \
        .heat_release_rate_at_reference_w_per_kg is None
    with pytest.raises(ValueError, match="td24.arrhenius.*known: td24.kinetic"):
        tm.td24(CP, method="td24.arrhenius", onset_temperature_k=450.0)
