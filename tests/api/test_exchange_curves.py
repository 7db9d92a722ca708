"""Decomposition curves in the exchange document: exported with their bytes and SHA-256,
imported through the same analysis as an upload, same kinetics and indicators.

Scans from the extended Prout–Tompkins law (tests/calcs/decomposition_data.py, parameters
chosen there); the adiabatic run from first-order kinetics at φ = 2
(tests/api/test_adiabatic_curves.py).
"""

from __future__ import annotations

import base64
import copy
import hashlib

import pytest

from hazards import models as m
from hazards.api.exchange import portable_inputs_hash
from tests.api.test_adiabatic_curves import arc_file
from tests.api.test_adiabatic_curves import upload as upload_run
from tests.api.test_decomposition_curves import csv_scan, upload
from tests.calcs.decomposition_data import RATES_K_PER_MIN
from tests.factories import CalorimetryRunFactory, ProcessFactory, StepFactory

pytestmark = pytest.mark.django_db


@pytest.fixture
def process(api):
    process = ProcessFactory(name="Nitro residue", site__code="east")
    first = StepFactory(process=process, sequence=1, specific_heat_capacity_j_per_kg_k=2000.0)
    CalorimetryRunFactory(step=first, is_basis=True)
    dsc = api.post(
        "/api/v1/decomposition-tests/", {"step": first.pk, "method": "dsc"}, format="json"
    ).json()["id"]
    for beta in RATES_K_PER_MIN:
        assert upload(api, dsc, csv_scan(beta)).status_code == 201
    second = StepFactory(
        process=process,
        sequence=2,
        vessel=first.vessel,
        solvent=first.solvent,
        specific_heat_capacity_j_per_kg_k=2000.0,
    )
    CalorimetryRunFactory(step=second, is_basis=True)
    arc = api.post(
        "/api/v1/decomposition-tests/", {"step": second.pk, "method": "adiabatic"}, format="json"
    ).json()["id"]
    raw, _, _ = arc_file(3001)
    assert upload_run(api, arc, raw, phi_factor="2.0", free_volume="10 mL").status_code == 201
    return process


def _current(step_id):
    return m.IndicatorSnapshot.objects.get(step_id=step_id, is_current=True)


def test_curves_round_trip_with_their_bytes_and_give_the_same_kinetics_and_indicators(api, process):
    doc = api.get(f"/api/v1/processes/{process.pk}/export/").json()
    tests = [t for s in doc["steps"] for t in s["decomposition_tests"]]
    assert [len(t["curves"]) for t in tests] == [4, 1]
    for t in tests:
        for c in t["curves"]:
            assert hashlib.sha256(base64.b64decode(c["original_base64"])).hexdigest() == c["sha256"]
    assert tests[0]["curves"][0]["sample_mass"] == {"value": 2e-6, "unit": "kilogram"}
    assert tests[1]["curves"][0]["phi_factor"] == {"value": 2.0, "unit": "dimensionless"}
    assert tests[1]["activation_energy_from_curves"] is True

    doc["process"]["name"] = "Nitro residue (copy)"
    resp = api.post("/api/v1/processes/import/", doc, format="json")
    assert resp.status_code == 201, resp.json()
    new = m.Process.objects.get(pk=resp.json()["process"])
    for original, copied in zip(
        process.steps.order_by("sequence"), new.steps.order_by("sequence"), strict=True
    ):
        a_test, b_test = original.decomposition_tests.get(), copied.decomposition_tests.get()
        a_curves, b_curves = list(a_test.curves.all()), list(b_test.curves.all())
        assert [c.sha256 for c in a_curves] == [c.sha256 for c in b_curves]
        assert [bytes(c.original) for c in a_curves] == [bytes(c.original) for c in b_curves]
        # derived again from the bytes: the same model, parameters and E source
        for key in ("model", "parameters", "files_sha256", "activation_energy_source"):
            assert a_test.kinetics.get(key) == b_test.kinetics.get(key), key
        assert a_test.activation_energy_j_per_mol == b_test.activation_energy_j_per_mol
        a, b = _current(original.pk), _current(copied.pk)
        assert a.values == b.values and a.methods == b.methods
        assert portable_inputs_hash(a.inputs) == portable_inputs_hash(b.inputs)
    assert _current(new.steps.get(sequence=1).pk).methods["td24"] == (
        "td24.adiabatic_simulation.autocatalytic"
    )


def test_a_curve_whose_bytes_do_not_match_its_hash_is_refused_and_nothing_is_created(api, process):
    doc = api.get(f"/api/v1/processes/{process.pk}/export/").json()
    counts = (m.Process.objects.count(), m.DecompositionCurve.objects.count())
    bad = copy.deepcopy(doc)
    bad["process"]["name"] = "Tampered"
    curve = bad["steps"][0]["decomposition_tests"][0]["curves"][2]
    raw = bytearray(base64.b64decode(curve["original_base64"]))
    raw[-3] = ord("9") if raw[-3] != ord("9") else ord("8")
    curve["original_base64"] = base64.b64encode(bytes(raw)).decode("ascii")
    resp = api.post("/api/v1/processes/import/", bad, format="json")
    assert resp.status_code == 400
    assert resp.json()["errors"][0]["field"] == "steps.0.decomposition_tests.0.curves.2.sha256"
    assert resp.json()["errors"][0]["code"] == "hash_mismatch"

    broken = copy.deepcopy(doc)
    broken["process"]["name"] = "Broken"
    curve = broken["steps"][0]["decomposition_tests"][0]["curves"][1]
    text = base64.b64decode(curve["original_base64"]).replace(b"\n", b"\nx,1,2\n", 1)
    curve["original_base64"] = base64.b64encode(text).decode("ascii")
    curve["sha256"] = hashlib.sha256(text).hexdigest()
    resp = api.post("/api/v1/processes/import/", broken, format="json")
    assert resp.status_code == 400
    err = resp.json()["errors"][0]
    assert err["field"] == "steps.0.decomposition_tests.0.curves.1.original_base64"
    assert err["rule"].startswith("row 2, column time")
    assert (m.Process.objects.count(), m.DecompositionCurve.objects.count()) == counts
