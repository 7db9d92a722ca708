"""The step charts: SVG text in the shipped font, labelled axes, grey-scale styles, stable."""

from __future__ import annotations

import re
import time

import matplotlib
import pytest

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


def _label_heights(svg: str) -> dict[str, float]:
    """SVG y of each level label ('MTT 111 °C' -> 'MTT'), in points from the top."""
    return {m.group(2): float(m.group(1)) for m in re.finditer(
        r'<text[^>]* y="([-0-9.]+)"[^>]*>((?:Tp|MTSR|MTT|TD24)) -?[0-9]+ °C</text>', svg)}


def test_labels_of_close_levels_are_moved_apart_and_keep_their_order():
    # Layout arithmetic (common practice, no source). MTT and TD24 2 K apart, Tp and MTSR
    # 3 K apart: on a 140 K axis of ~118 pt these labels
    # would sit 1.7 pt and 2.5 pt apart, printed over each other.
    close = {**SNAP, "values": {**SNAP["values"], "mtt_k": 383.75, "td24_k": 385.75,
                                "mtsr_k": 306.15}}
    heights = _label_heights(charts.cooling_failure_chart(close))
    assert set(heights) == {"Tp", "MTSR", "MTT", "TD24"}
    # SVG y grows downwards: a hotter level's label is higher on the page, 8 pt apart at least.
    order = sorted(heights, key=heights.get)
    assert order == ["TD24", "MTT", "MTSR", "Tp"]
    gaps = [heights[b] - heights[a] for a, b in zip(order, order[1:], strict=False)]
    assert min(gaps) >= charts.LABEL_GAP_PT - 0.01, gaps


def test_labels_of_levels_far_apart_stay_at_their_lines():
    # Layout arithmetic (common practice, no source).
    # SNAP: Tp 30, MTSR 41, MTT 111, TD24 115 °C; only MTT/TD24 crowd, so Tp and MTSR keep the
    # height of their own lines. The axis runs from Tp - 15 K to TD24 + 25 K (125 K) over
    # 0.47 x 3.5 in = 118.44 pt, so the 11.42 K from Tp to MTSR are 10.82 pt, more than the gap.
    heights = _label_heights(charts.cooling_failure_chart(SNAP))
    assert heights["Tp"] - heights["MTSR"] == pytest.approx(11.42 * 118.44 / 125.0, abs=0.05)
    assert heights["MTT"] - heights["TD24"] == pytest.approx(charts.LABEL_GAP_PT, abs=0.01)


def test_spread_moves_only_crowded_labels_and_stays_inside_the_plot():
    # Arithmetic of the layout rule (common practice, no source).
    assert charts._spread([0.0, 20.0, 40.0], 8.0, -8.0, 100.0) == [0.0, 20.0, 40.0]
    assert charts._spread([10.0, 11.0, 12.0], 8.0, -8.0, 100.0) == [10.0, 18.0, 26.0]
    # At the top the stack is pushed down instead of out of the plot.
    assert charts._spread([99.0, 100.0], 8.0, -8.0, 100.0) == [92.0, 100.0]


def test_a_short_synthesis_does_not_print_time_ticks_into_each_other():
    # A rise of 0.12 h next to a runaway drawn over 1 h: ticks 0 and 0.1 h would be 11 pt apart.
    short = {**SNAP, "inputs": {**SNAP["inputs"], "max_heat_release_rate_w_per_kg": 53.0}}
    svg = charts.cooling_failure_chart(short)
    ticks = re.findall(r'<g id="xtick_\d+">.*?<text[^>]*>([^<]*)</text>', svg, re.DOTALL)
    assert "0.1" not in ticks and "0" in ticks, ticks


def test_charts_of_many_steps_are_the_same_bytes_on_several_processes_as_on_one(monkeypatch):
    batch = {**SNAP, "inputs": {**SNAP["inputs"], "operation_mode": "batch"}}
    items = [(SNAP, SERIES), (batch, None), (SNAP, None), (batch, SERIES), (SNAP, SERIES)]
    serial = charts.charts_of_steps(items, processes=1)
    forked = []
    real = charts.multiprocessing.get_context
    monkeypatch.setattr(charts.multiprocessing, "get_context",
                        lambda method: forked.append(method) or real(method))
    assert charts.charts_of_steps(items, processes=2) == serial
    assert forked == ["fork"]  # the pool really drew them
    assert [set(c) for c in serial][:2] == [
        {"cooling_failure", "accumulation", "tmr", "heat_release"},
        {"cooling_failure", "tmr", "heat_release"}]


def _hangs(item):
    time.sleep(30)


def test_charts_past_their_time_are_stopped_with_a_timeout(monkeypatch):
    # Forked processes run the patched function; the pool is killed, not waited for 30 s.
    monkeypatch.setattr(charts, "_step_charts_of", _hangs)
    started = time.monotonic()
    with pytest.raises(TimeoutError, match="longer than 0.5 s"):
        charts.charts_of_steps([(SNAP, None)] * 4, processes=2, timeout=0.5)
    assert time.monotonic() - started < 10


def _level_labels(svg: str) -> list[tuple[str, float, str]]:
    """(label, x in points, text-anchor) of each level label of a chart."""
    return [(m.group(3), float(m.group(2)), m.group(1)) for m in re.finditer(
        r'<text style="[^"]*text-anchor: (\w+)[^"]*" x="([-0-9.]+)"[^>]*>((?:MTT|TD24) '
        r'-?[0-9]+ °C)</text>', svg)]


def test_accumulation_levels_are_labelled_inside_clear_of_the_right_axis_and_of_the_curve():
    # MTT 38 °C and TD24 40 °C near MTSR(t) (30-41 °C, METHODS.md C1.7 series). The right edge
    # of the plot, where MTSR(t)'s tick labels are, is at (0.15 + 0.62) x 3.9 in = 216.2 pt.
    near = {**SNAP, "values": {**SNAP["values"], "mtt_k": 311.15, "td24_k": 313.15}}
    labels = _level_labels(charts.accumulation_chart(near, SERIES))
    assert sorted(label for label, _, _ in labels) == ["MTT 38 °C", "TD24 40 °C"]
    for label, x, anchor in labels:
        # The C1.7 MTSR(t) climbs steeply through 38-40 °C in the first half hour (left), so
        # the labels go to the right end, right-aligned inside the plot.
        assert anchor == "end", label
        assert 200.0 < x < 216.2, (label, x)


def test_the_freer_side_is_the_one_without_the_curve():
    # Geometry of a made-up curve (common practice, no source).
    with matplotlib.rc_context(charts._RC):
        fig, ax = charts._figure("t")
        ax.plot([0.0, 0.4, 0.6], [10.0, 10.0, 0.0])  # at the label's height on the left only
        ax.set_xlim(0, 1)
        ax.set_ylim(0, 12)
        assert charts._freer_side(ax, 9.5, 1.5, "MTT 10 °C") == "right"
        ax.lines[0].set_data([0.4, 0.6, 1.0], [0.0, 10.0, 10.0])  # the mirror image
        assert charts._freer_side(ax, 9.5, 1.5, "MTT 10 °C") == "left"


def test_huge_and_tiny_numbers_print_with_powers_of_ten_never_as_e_notation():
    from hazards.dossier.view import _number
    from hazards.quantities import scientific

    # Arithmetic of the notation (common practice, no source).
    assert scientific(2.39e10) == "2.39·10¹⁰"
    assert scientific(1e12) == "10¹²"
    assert scientific(1e-5) == "10⁻⁵"
    assert scientific(9.996e9) == "10¹⁰"  # rounds up into the next power
    assert _number(2.39e10) == "2.39·10¹⁰" and _number(591.4) == "591.4"
    # A step whose decomposition starts far above MTSR: TMRad at MTSR of ~2.7 million years
    # (the demo's esterification: TD24 217 °C, MTSR 75 °C, Ea 213 kJ/mol).
    far = {**SNAP, "inputs": {**SNAP["inputs"], "process_temperature_k": 343.15},
           "values": {**SNAP["values"], "mtsr_k": 348.15, "td24_k": 490.15,
                      "tmr_ad_at_mtsr_s": 8.6e13},
           "parameters": {"screening_activation_energy_j_per_mol": 213e3}}
    for svg in (charts.tmr_chart(far), charts.cooling_failure_chart(far)):
        text = _texts(svg)
        assert "e+" not in text, text
    assert "·10" in _texts(charts.cooling_failure_chart(far))  # "+2.39·10¹⁰" and its legend
    assert "10¹⁰" in _texts(charts.tmr_chart(far))  # a tick of the log axis


def test_tmrad_beyond_a_decade_is_marked_at_the_top_instead_of_stretching_the_axis():
    # The demo's esterification: TD24 217 °C, MTSR 75 °C, Ea 213 kJ/mol -> TMRad at MTSR of
    # 2.39·10¹⁰ h. The axis stops at 1.5 x 10⁵ h; the MTSR point is an arrow at the top edge.
    far = {**SNAP, "inputs": {**SNAP["inputs"], "process_temperature_k": 343.15},
           "values": {**SNAP["values"], "mtsr_k": 348.15, "td24_k": 490.15},
           "parameters": {"screening_activation_energy_j_per_mol": 213e3}}
    text = _texts(charts.tmr_chart(far))
    assert "h (above the plot)" in text
    ticks = re.findall(r'<g id="ytick_\d+">.*?<text[^>]*>([^<]*)</text>',
                       charts.tmr_chart(far), re.DOTALL)
    assert "10⁵" in ticks and "10⁶" not in ticks and "10000" not in ticks, ticks
    # A step whose MTSR is within the plot keeps its point and its time (SNAP: 591 h).
    assert "above the plot" not in _texts(charts.tmr_chart(SNAP))


# The same step whose plant doses over 180 min while its lab series was dosed over 60 min: the
# snapshot records the dosing model at the plant's point (calcs.operating_point; issue 21).
PLANT = {**SNAP, "values": {**SNAP["values"], "mtsr_k": 307.03,
                            "plant_peak_heat_release_w": 55555.6, "cooling_margin": 1.512},
         "parameters": {**SNAP["parameters"], "operating_point_mode": "model",
                        "plant_dosing_time_s": 10800.0, "lab_dosing_time_s": 3600.0,
                        "plant_initial_mass_fraction": 0.8,
                        "dosing_model_rate_constant_per_s": 0.1 / 60,
                        "dosing_model_peak_scale": 1.0}}


def test_a_plant_dosing_at_another_time_is_drawn_on_the_plants_time_axis():
    power = _texts(charts.heat_release_chart(PLANT, SERIES))
    assert "time from start of dosing at the plant / h" in power
    assert "dosing model at plant scale" in power
    assert "heat release scaled to plant mass" not in power  # the lab record is not the plant
    assert "plant dosing 180 min" in power
    accumulation = _texts(charts.accumulation_chart(PLANT, SERIES))
    assert "dosing model at the plant's 180 min dosing" in accumulation.replace("&#x27;", "'")
    # METHODS.md C2.2 plant, C1.7 reaction: peak 120e3·(1 − e^(−18))/10800·5000 = 55.56 kW at
    # the end of the 180 min feed [COMPUTED]
    curves = charts.plant_dosing_curves(PLANT)
    assert curves["heat_release_w"].max() == pytest.approx(55555.6, rel=1e-4)
    assert curves["time_s"][curves["heat_release_w"].argmax()] == pytest.approx(10800.0)


def test_without_a_model_the_plant_power_is_not_drawn_on_the_labs_time_axis():
    snap = {**PLANT, "parameters": {**PLANT["parameters"], "operating_point_mode": "no_credit"}}
    power = _texts(charts.heat_release_chart(snap, SERIES))
    assert "heat release scaled to plant mass" not in power
    assert "peak heat release at plant scale" in power
    accumulation = _texts(charts.accumulation_chart(snap, SERIES))
    assert "no credit for reaction during dosing" in accumulation


def test_the_cooling_failure_rise_uses_the_plants_peak_not_the_labs():
    # plant 55.56 kW / 5000 kg = 11.1 W/kg against the lab's 33.25 W/kg: a rise of MTSR − Tp =
    # 3.88 K at 11.1/2000 K/s takes 0.19 h, at the lab's rate 0.065 h [COMPUTED here]
    # the same snapshot read as if lab and plant agreed draws the lab's rate: only the mode
    # differs, so equal drawings would mean the plant's peak was ignored
    as_lab = {**PLANT, "parameters": {**PLANT["parameters"], "operating_point_mode": "series"}}
    assert charts.cooling_failure_chart(as_lab) != charts.cooling_failure_chart(PLANT)
