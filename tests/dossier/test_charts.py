"""The step charts: SVG text in the shipped font, labelled axes, grey-scale styles, stable."""

from __future__ import annotations

import re

from hazards.dossier import charts
from tests.dossier.conftest import c17_series

# A semi-batch step's snapshot as the calcs layer stores it (values SI; from METHODS.md C1.7 and
# the DSC screening defaults, rounded; exact numbers do not matter to a chart).
SNAP = {
    "inputs": {"operation_mode": "semi_batch", "process_temperature_k": 303.15,
               "specific_heat_capacity_j_per_kg_k": 2000.0, "reaction_mass_kg": 5000.0,
               "dosing_time_s": 3600.0, "max_accumulation": 0.18,
               "max_heat_release_rate_w_per_kg": 33.25, "decomposition_energy_j_per_kg": 4e5},
    "values": {"mtsr_k": 314.57, "mtt_k": 383.75, "td24_k": 388.15, "tmr_ad_at_mtsr_s": 2.1e6,
               "adiabatic_temperature_rise_k": 60.0, "cooling_capacity_w": 84e3,
               "plant_peak_heat_release_w": 166e3, "cooling_margin": 0.51},
    "methods": {}, "parameters": {"screening_activation_energy_j_per_mol": 50e3,
                                  "td24_label": "screening estimate"},
}
SERIES = {**c17_series(), "initial_mass_kg": 0.4, "feed_mass_kg": 0.1, "file_name": "c17.csv"}


def _texts(svg: str) -> str:
    return " ".join(re.findall(r"<text[^>]*>([^<]*)</text>", svg)) + " " + " ".join(
        re.findall(r"<!-- (.*?) -->", svg))


def test_every_chart_keeps_its_text_as_text_in_the_shipped_font_with_axis_units():
    made = charts.step_charts(SNAP, SERIES)
    assert set(made) == {"cooling_failure", "accumulation", "tmr", "heat_release"}
    for name, svg in made.items():
        assert svg.lstrip().startswith("<?xml"), name
        assert "font-family: 'Exoledger Sans'" in svg, name
        assert "<text" in svg, name  # svg.fonttype none: no glyph paths
        text = _texts(svg)
        assert re.search(r"/ (°C|h|kW|%)", text), (name, text)


def test_lines_differ_by_style_not_only_by_colour():
    svg = charts.cooling_failure_chart(SNAP)
    dashes = set(re.findall(r"stroke-dasharray: ([0-9.,\s]+)", svg))
    assert len(dashes) >= 3


def test_the_same_data_give_the_same_svg_and_batch_steps_get_no_accumulation_chart():
    assert charts.tmr_chart(SNAP) == charts.tmr_chart(SNAP)
    assert "<dc:date>" not in charts.tmr_chart(SNAP)
    batch = {**SNAP, "inputs": {**SNAP["inputs"], "operation_mode": "batch"}}
    assert charts.accumulation_chart(batch) is None


def test_without_a_series_the_accumulation_chart_says_it_is_an_estimate():
    svg = charts.accumulation_chart(SNAP, None)
    assert "estimate from the maximum accumulation 18%" in _texts(svg)


def test_a_chart_without_its_data_says_why_instead_of_drawing():
    empty = {"inputs": {"operation_mode": "batch"}, "values": {}}
    assert "TMRad and TD24 unknown" in _texts(charts.tmr_chart(empty))
