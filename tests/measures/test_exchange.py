"""Measures travel in the process exchange document and come back whole (issue 17 item 1);
a bad measure in a document is refused at its path with nothing saved."""

from __future__ import annotations

import datetime as dt

import pytest

from hazards.api.exchange import ExchangeRejected, export_process, import_process
from hazards.models import Measure, Process
from hazards.services import measures as svc

pytestmark = pytest.mark.django_db


def test_measures_are_exported_and_imported(process, author, admin_user):
    step = process.steps.get()
    svc.measure_create(
        step=step,
        data={
            "kind": "emergency_relief",
            "acts_on": "bursting disc BD-1",
            "owner": author,
            "status": "proven",
            "evidence_reference": "ERS-12",
            "test_date": dt.date(2026, 3, 1),
            "due_date": dt.date(2026, 4, 1),
            "set_pressure_pa": 4e5,
            "vent_area_m2": 0.0123,
            "relief_system": "vapour",
            "vapour_molar_mass_kg_per_mol": 0.09214,
            "condenser_ua_w_per_k": 5000.0,
            "liquid_density_kg_per_m3": 780.0,
        },
    )
    doc = export_process(process)
    [m] = doc["steps"][0]["measures"]
    assert m["vent_area"] == {"value": 0.0123, "unit": "m**2"}
    assert m["condenser_ua"] == {"value": 5000.0, "unit": "W/K"}
    assert m["liquid_density"] == {"value": 780.0, "unit": "kg/m**3"}
    assert m["status"] == "proven" and "owner" not in m
    doc["process"]["name"] = "Imported copy"
    copy = import_process(doc, owner=admin_user)
    got = Measure.objects.get(step__process=copy)
    assert (got.kind, got.vent_area_m2, got.test_date, got.owner) == (
        "emergency_relief",
        0.0123,
        dt.date(2026, 3, 1),
        admin_user,
    )
    # a relief's area in the document in cm² converts, a negative one is refused by path
    doc["process"]["name"] = "Bad copy"
    doc["steps"][0]["measures"][0]["vent_area"] = {"value": -3, "unit": "cm**2"}
    with pytest.raises(ExchangeRejected) as err:
        import_process(doc, owner=admin_user)
    assert any(e["field"] == "steps.0.measures.0.vent_area" for e in err.value.errors)
    assert not Process.objects.filter(name="Bad copy").exists()
