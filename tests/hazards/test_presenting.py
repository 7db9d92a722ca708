"""One presenter of a snapshot (hazards.presenting): the page, the dossier and the API's kinds
come from its one table.

Expected texts: common practice, no source (°C = K − 273.15 by definition, NIST SP 811;
1 kW = 1000 W; the display rule of hazards.quantities.format_number).
"""

from hazards import presenting
from hazards.api import serializers
from hazards.dossier import view
from hazards.quantities import DisplayUnits, display_units

SNAP = {
    "values": {"mtsr_k": 373.15, "mtt_k": 383.15, "td24_k": 423.15, "criticality_class": 2,
               "cooling_capacity_w": 10075.0, "severity": "low"},
    "methods": {"mtsr": "mtsr.batch", "mtt": "mtt.override", "criticality_class":
                "criticality.stoessel"},
    "parameters": {}, "inputs": {},
    "warnings": ["MTT from an override", "cooling capacity from U·A"],
}


def test_the_rows_follow_the_one_table_with_labels_text_methods_and_warnings():
    rows = presenting.present_snapshot(SNAP)
    assert [r.key for r in rows] == [s.key for s in presenting.INDICATORS]
    by_key = {r.key: r for r in rows}
    mtsr = by_key["mtsr_k"]
    assert (mtsr.label, mtsr.si_value, mtsr.kind, mtsr.text, mtsr.method_label) == (
        "MTSR (maximum temperature of the synthesis reaction)", 373.15, "temperature",
        "100 °C", "batch: MTSR = Tp + ΔTad")
    assert by_key["mtt_k"].warnings == ("MTT from an override",)
    assert by_key["cooling_capacity_w"].warnings == ("cooling capacity from U·A",)
    assert by_key["td24_k"].method_label == "—" and by_key["td24_k"].method_key == ""
    assert by_key["severity"].text == "low" and by_key["criticality_class"].text == "2"
    assert by_key["tmr_ad_at_mtsr_s"].text == "—"


def test_the_text_follows_the_persons_units_and_the_dossier_keeps_its_own():
    with display_units(DisplayUnits(temperature="degF", power="kilowatt")):
        rows = {r.key: r for r in presenting.present_snapshot(SNAP)}
        step = view._step({"id": 1, "snapshot": SNAP}, {})
    assert rows["mtsr_k"].text == "212 °F"  # 100 °C = 212 °F by definition
    assert rows["cooling_capacity_w"].text == "10.07 kW"
    dossier = {r["label"]: (r["value"], r["unit"]) for r in step["indicators"]}
    assert dossier["MTSR"] == ("100", "°C")
    assert dossier["Cooling capacity"] == ("10.07", "kW")
    assert [r["label"] for r in step["indicators"]][:3] == [
        "Adiabatic temperature rise ΔTad", "MTSR", "MTT"]


def test_the_dossier_and_the_api_take_labels_and_kinds_from_the_table():
    assert [(k, label) for k, label, _, _ in view.INDICATORS] == [
        (s.key, s.short_label) for s in presenting.INDICATORS]
    for key, kind in serializers.INDICATOR_FIELDS.values():
        assert presenting.SPECS[key].kind == kind
