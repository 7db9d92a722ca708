"""DSC screening estimates are labelled as such and reproduce METHODS.md C3.3 and C7.1."""

import pytest

from calcs.errors import CalcInputError
from calcs.screening import (
    SCREENING_ACTIVATION_ENERGY_J_PER_MOL,
    SCREENING_HEAT_RELEASE_RATE_W_PER_KG,
    decomposition_energy_screens,
    onset_margin_rule,
    oxygen_balance,
    td24_from_dsc_onset,
    tmr_at_onset_minus_margin,
    yoshida_explosive_propagation,
    yoshida_shock_sensitivity,
)

# METHODS.md C3.3 [COMPUTED]: onset °C -> TD24 °C for c_p 1000 / 1800 / 2000, TMR at onset−100 K
C3_3 = [
    (100, 13.85, 23.05, 24.77, 113.2),
    (150, 46.11, 57.69, 59.86, 35.3),
    (200, 77.58, 91.77, 94.45, 17.45),
    (250, 108.34, 125.42, 128.66, 11.26),
    (300, 138.51, 158.72, 162.57, 8.55),
]


@pytest.mark.parametrize("onset_c, td_1000, td_1800, td_2000, tmr_h", C3_3)
def test_td24_from_a_single_onset_matches_c3_3(onset_c, td_1000, td_1800, td_2000, tmr_h):
    # METHODS.md C3.3 [COMPUTED], ±0.05 K; inputs stated explicitly (E 50 kJ/mol, q 20 W/kg)
    onset = onset_c + 273.15
    for cp, expected in ((1000.0, td_1000), (1800.0, td_1800), (2000.0, td_2000)):
        r = td24_from_dsc_onset(onset, cp, 50e3, 20.0)
        assert r.value - 273.15 == pytest.approx(expected, abs=0.05)
    tmr = tmr_at_onset_minus_margin(onset, 1800.0, 100.0, 50e3, 20.0) / 3600
    assert tmr == pytest.approx(tmr_h, rel=5e-3)


@pytest.mark.parametrize("onset_c, expected_c", [(150, 92.63), (200, 132.19), (250, 171.35)])
def test_higher_activation_energy_raises_td24(onset_c, expected_c):
    # METHODS.md C3.3 [COMPUTED] with E_a = 100 kJ/mol, c_p = 1800
    r = td24_from_dsc_onset(onset_c + 273.15, 1800.0, 100e3, 20.0)
    assert r.value - 273.15 == pytest.approx(expected_c, abs=0.05)


def test_screening_defaults_are_documented_memory_values_and_labelled():
    # [MEMORY] per METHODS.md §3.3 (Keller et al. 1997 parameters, not confirmed)
    assert SCREENING_ACTIVATION_ENERGY_J_PER_MOL == 50e3
    assert SCREENING_HEAT_RELEASE_RATE_W_PER_KG == 20.0
    r = td24_from_dsc_onset(473.15, 1800.0)
    assert r.method == "td24.dsc_onset_screening"
    assert r.parameters["label"] == "screening estimate"
    assert r.warnings == ("TD24 is a screening estimate from a single DSC onset "
                          "(assumed Ea 50 kJ/mol, q 20 W/kg at onset)",)
    assert "keller1997" in r.references


def test_onset_minus_100k_is_not_conservative_above_about_174_degc():
    # METHODS.md C3.3 [COMPUTED]: breakeven onset 174.3 °C for c_p = 1.8 kJ/(kg K)
    assert tmr_at_onset_minus_margin(174.0 + 273.15, 1800.0) > 86400.0
    assert tmr_at_onset_minus_margin(174.6 + 273.15, 1800.0) < 86400.0


def test_onset_rules_are_reported_as_screens_with_their_criticism():
    dsc = onset_margin_rule(373.15, 523.15, 100.0, "dsc")
    assert dsc.value is True and dsc.method == "screen.onset_minus_100k"
    assert "criticised" in dsc.warnings[0]
    arc = onset_margin_rule(400.15, 423.15, 50.0, "arc")
    assert arc.value is False and arc.method == "screen.onset_minus_50k"


@pytest.mark.parametrize(
    "q_j_per_g, t_c, ep, ss",
    [(1000, 150, -0.088, -0.111), (2000, 150, 0.213, 0.190), (500, 200, -0.445, -0.518),
     (3000, 250, 0.292, 0.182), (300, 100, -0.527, -0.475)],
)
def test_yoshida_indices_match_c7_1(q_j_per_g, t_c, ep, ss):
    # METHODS.md C7.1 [COMPUTED]; correlation [MEMORY] per METHODS.md (Yoshida et al. 1995)
    assert yoshida_explosive_propagation(q_j_per_g * 1e3, t_c + 273.15) == pytest.approx(ep,
                                                                                        abs=1e-3)
    assert yoshida_shock_sensitivity(q_j_per_g * 1e3, t_c + 273.15) == pytest.approx(ss, abs=1e-3)


def test_yoshida_needs_an_onset_above_25_degc():
    with pytest.raises(CalcInputError, match="onset_temperature_k = 290.0: must be above 25"):
        yoshida_shock_sensitivity(1e6, 290.0)


def test_decomposition_energy_screens_at_300_and_500_joules_per_gram():
    # CLP Annex I 2.8.4.2(b) [READ]; 500 J/g: UN MTC App. 6 [MEMORY] / common practice
    assert decomposition_energy_screens(299e3) == {"below_300_j_per_g": True,
                                                   "at_or_above_500_j_per_g": False}
    assert decomposition_energy_screens(500e3)["at_or_above_500_j_per_g"] is True


def test_oxygen_balance_of_tnt():
    # METHODS.md §7.2 [COMPUTED]: C7H5N3O6, M = 227.132 g/mol, OB = −73.97 %
    assert oxygen_balance(7, 5, 3, 6) == pytest.approx(-73.97, abs=0.005)
    assert oxygen_balance(7, 5, 3, 6, 227.132) == pytest.approx(-73.97, abs=0.005)
