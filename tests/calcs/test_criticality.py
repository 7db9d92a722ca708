"""Criticality classes, scales and the risk matrix follow METHODS.md §4 ([MEMORY] wording)."""

import pytest

from calcs.criticality import (
    DEFAULT_RISK_MATRIX,
    PROBABILITY_3,
    PROBABILITY_6,
    SEVERITY_3,
    SEVERITY_4,
    RiskMatrix,
    criticality_class,
    probability,
    risk_cell,
    severity,
    td24_at_or_below_process_temperature,
)

K = 273.15
H = 3600.0


@pytest.mark.parametrize(
    "tp, mtsr, mtt, td24, expected",
    [(30, 80, 110, 150, 1), (30, 80, 160, 120, 2), (30, 130, 110, 150, 3),
     (30, 180, 110, 150, 4), (30, 140, 150, 120, 5), (30, 180, 150, 120, 5)],
)
def test_classes_match_c4_1(tp, mtsr, mtt, td24, expected):
    # METHODS.md C4.1 [COMPUTED]; class wording [MEMORY] per METHODS.md (Stoessel 1993/2008)
    assert criticality_class(tp + K, mtsr + K, mtt + K, td24 + K) == expected


@pytest.mark.parametrize(
    "mtsr, mtt, td24, expected",
    [(110, 110, 150, 3),   # MTSR = MTT -> 3, not 1
     (80, 150, 150, 2),    # MTT = TD24 -> 2, not 1
     (150, 110, 150, 4),   # MTSR = TD24 -> 4, not 3
     (150, 150, 150, 5),   # all equal -> 5
     (180, 120, 120, 5)],  # MTT = TD24 < MTSR -> 5, not 4
)
def test_ties_go_to_the_more_critical_class(mtsr, mtt, td24, expected):
    # METHODS.md §4.1 algorithm [DERIVED]: ties are undefined in the publications
    assert criticality_class(303.15, mtsr + K, mtt + K, td24 + K) == expected


def test_a_missing_temperature_gives_no_class():
    assert criticality_class(303.15, None, 383.15, 423.15) is None
    assert criticality_class(303.15, 353.15, None, 423.15) is None
    assert criticality_class(303.15, 353.15, 383.15, None) is None


def test_td24_at_or_below_process_temperature_is_flagged():
    assert td24_at_or_below_process_temperature(393.15, 393.15)
    assert not td24_at_or_below_process_temperature(393.15, 393.16)
    assert not td24_at_or_below_process_temperature(393.15, None)


@pytest.mark.parametrize(
    "dt, three, four",
    [(0.0, "low", "negligible"), (49.99, "low", "negligible"), (50.0, "medium", "medium"),
     (199.99, "medium", "medium"), (200.0, "high", "critical"), (399.99, "high", "critical"),
     (400.0, "high", "catastrophic"), (1000.0, "high", "catastrophic")],
)
def test_severity_boundaries_of_section_4_2(dt, three, four):
    # METHODS.md §4.2 [MEMORY] per METHODS.md; a boundary value goes to the more severe level
    assert severity(dt) == three
    assert severity(dt, SEVERITY_4) == four


@pytest.mark.parametrize(
    "hours, three, six",
    [(0.5, "high", "frequent"), (1.0, "high", "probable"), (7.99, "high", "probable"),
     (8.0, "medium", "occasional"), (23.99, "medium", "occasional"), (24.0, "low", "seldom"),
     (50.0, "low", "remote"), (100.0, "low", "almost impossible")],
)
def test_probability_boundaries_of_section_4_2(hours, three, six):
    # METHODS.md §4.2 and §8 [MEMORY] per METHODS.md: TMR ≥ 24 h -> low, < 8 h -> high
    assert probability(hours * H) == three
    assert probability(hours * H, PROBABILITY_6) == six


def test_unknown_measures_give_no_level():
    assert severity(None) is None and probability(None) is None
    assert risk_cell(None, "low") is None


def test_default_risk_matrix_is_an_organisational_choice():
    assert "organisational choice, configure per site" in DEFAULT_RISK_MATRIX.label
    assert risk_cell("high", "high") == "unacceptable"
    assert risk_cell("low", "low") == "acceptable"
    assert risk_cell("medium", "medium") == "conditionally acceptable"
    # fine scales map to the 3-level labels of the default matrix
    assert risk_cell("catastrophic", "remote", SEVERITY_4, PROBABILITY_6) == (
        "conditionally acceptable")


def test_a_site_matrix_can_use_the_fine_labels():
    site = RiskMatrix({("critical", "occasional"): "unacceptable"}, label="site A")
    assert risk_cell("critical", "occasional", SEVERITY_4, PROBABILITY_6, site) == "unacceptable"
    assert risk_cell("low", "low", SEVERITY_3, PROBABILITY_3, site) is None
