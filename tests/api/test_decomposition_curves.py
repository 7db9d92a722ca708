"""Decomposition curves through the API contract of issue 16 item 7.

Scans are generated from the extended Prout–Tompkins rate law (Prout & Tompkins 1944;
parameters chosen here, tests/calcs/decomposition_data.py) and written in the lab's units:
`time [min]`, `temperature [degC]`, `heat_flow [mW]`, sample 2.0 mg, 800 J/g.
"""

from __future__ import annotations

import hashlib

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from hazards import models as m
from hazards.services.curves import parse_curve
from tests.calcs.decomposition_data import PROUT_TOMPKINS, RATES_K_PER_MIN, heat_flow
from tests.factories import CalorimetryRunFactory, StepFactory


def csv_scan(beta, points=1500, sign=1.0) -> bytes:
    t, temp, hf = heat_flow(PROUT_TOMPKINS, beta, points)
    rows = "".join(
        f"{a / 60:.6f},{b - 273.15:.5f},{sign * c * 1e3:.8f}\n"
        for a, b, c in zip(t, temp, hf, strict=True)
    )
    return ("time [min],temperature [degC],heat_flow [mW]\n" + rows).encode()


def upload(api, test, raw, **fields):
    data = {
        "sample_mass": "2.0 mg",
        **fields,
        "file": SimpleUploadedFile("scan.csv", raw, content_type="text/csv"),
    }
    return api.post(f"/api/v1/decomposition-tests/{test}/curves/", data, format="multipart")


@pytest.mark.django_db
def test_four_scans_give_onset_energy_kinetics_and_simulated_td24_without_typing_a_number(api):
    step = StepFactory(specific_heat_capacity_j_per_kg_k=2000.0)
    CalorimetryRunFactory(step=step)  # gives the MTSR
    created = api.post(
        "/api/v1/decomposition-tests/", {"step": step.pk, "method": "dsc"}, format="json"
    )
    assert created.status_code == 201, created.json()
    test = created.json()["id"]
    assert created.json()["onset_temperature"] is None
    assert created.json()["kinetics"] == {"status": "no curves"}
    snap = m.IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snap.values["td24_k"] is None
    assert any("no decomposition data" in w for w in snap.warnings)

    for i, beta in enumerate(RATES_K_PER_MIN):
        raw = csv_scan(beta)
        resp = upload(api, test, raw)
        assert resp.status_code == 201, resp.json()
        body = resp.json()
        # the scan's heating rate is read from its temperature column
        assert body["heating_rate"]["value"] == pytest.approx(beta, rel=1e-4)
        assert body["heating_rate"]["unit"] == "K/min"
        # 800 J/g generated (tests/calcs/decomposition_data.py), baseline found by the analysis
        assert body["decomposition_energy"]["value"] == pytest.approx(800.0, rel=0.02)
        assert body["onset_temperature"]["value"] < body["peak_temperature"]["value"]
        assert body["sha256"] == hashlib.sha256(raw).hexdigest()
        if i == 1:
            pending = api.get(f"/api/v1/decomposition-tests/{test}/").json()["kinetics"]
            assert "3 or more heating rates" in pending["status"]

    got = api.get(f"/api/v1/decomposition-tests/{test}/").json()
    assert got["onset_temperature"]["unit"] == "degC"
    assert got["decomposition_energy"]["value"] == pytest.approx(800.0, rel=0.02)
    k = got["kinetics"]
    assert k["status"] == "fitted" and k["model"] == "autocatalytic"
    e = k["parameters"]["activation_energy_j_per_mol"]
    assert e["unit"] == "J/mol" and e["value"] == pytest.approx(130e3, rel=0.03)
    assert e["stderr"] > 0
    assert k["autocatalysis_screen"]["autocatalytic"] is True
    assert k["comparison"]["delta_aic"] > 10
    assert set(k["statistics"]) >= {"aic", "ssr", "points", "r_squared"}

    step_body = api.get(f"/api/v1/steps/{step.pk}/").json()
    snap = m.IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snap.methods["td24"] == "td24.adiabatic_simulation.autocatalytic"
    assert snap.methods["tmr_ad_at_mtsr"] == "tmr.adiabatic_simulation.autocatalytic"
    assert snap.values["td24_k"] is not None and snap.values["tmr_ad_at_mtsr_s"] is not None
    assert snap.parameters["decomposition_curves_sha256"] == k["files_sha256"]
    assert len(k["files_sha256"]) == 4
    assert "td24_band_k" in snap.parameters
    # a 90 % band from the fit's and the scans' covariance with Student's t, 3 degrees of
    # freedom (calcs.adiabatic_sim.td_uncertainty; coverage in tests/calcs/test_adiabatic_sim)
    assert snap.parameters["td24_band_level"] == 0.9
    lo, hi = snap.parameters["td24_band_k"]
    assert lo < snap.values["td24_k"] < hi
    stored = m.DecompositionTest.objects.get(pk=test).kinetics
    assert stored["degrees_of_freedom"] == 3 and stored["energy_stderr_j_per_kg"] > 0
    # the extrapolation distance below the lowest measured temperature (METHODS.md §12.4)
    assert snap.parameters["td24_extrapolation_k"] >= 0
    assert snap.parameters["lowest_measured_temperature_k"] == k["lowest_measured_temperature_k"]
    assert snap.inputs["decomposition_kinetics"]["model"] == "autocatalytic"
    assert step_body["indicators"]["td24"] is not None


@pytest.mark.django_db
def test_a_bad_curve_is_refused_whole_with_row_and_column(api):
    test = api.post(
        "/api/v1/decomposition-tests/", {"step": StepFactory().pk, "method": "dsc"}, format="json"
    ).json()["id"]
    raw = b"time [min],temperature [degC],heat_flow [mW]\n0,30,0.1\n1,31,abc\n2,32,0.1\n"
    resp = upload(api, test, raw)
    assert resp.status_code == 400
    assert resp.json()["code"] == "series_rejected" if "code" in resp.json() else True
    errors = resp.json()["errors"]
    assert {(e["row"], e["column"]) for e in errors} == {(3, "heat_flow [mW]")}
    assert not m.DecompositionCurve.objects.exists()
    missing = upload(api, test, csv_scan(5.0), sample_mass="")
    assert missing.status_code == 400
    assert not m.DecompositionCurve.objects.exists()


def test_the_parser_takes_lab_units_and_refuses_what_the_series_parser_refuses():
    # NIST SP 811: 1 min = 60 s, T/K = t/°C + 273.15, 1 mW = 1e-3 W
    ok = parse_curve(
        b"time [min],temperature [degC],heat_flow [mW]\n0,25,1\n0.5,30,2\n", kind="dsc"
    )
    assert ok.ok
    assert ok.series.data == {
        "time_s": [0.0, 30.0],
        "temperature_k": pytest.approx([298.15, 303.15]),
        "heat_flow_w": pytest.approx([1e-3, 2e-3]),
    }
    bad = parse_curve(b"time [min],temperature [degC]\n0,25\n0,30\n", kind="dsc")
    assert {(p.row, p.column, p.code) for p in bad.problems} == {(1, "heat_flow", "missing_column")}
    run = parse_curve(
        b"time [s],temperature [K],pressure [bar]\n0,300,1\n1,301,-1\n", kind="adiabatic"
    )
    assert [(p.row, p.column, p.code) for p in run.problems] == [
        (3, "pressure [bar]", "out_of_range")
    ]


@pytest.mark.django_db
def test_a_negative_exotherm_instrument_is_declared_with_a_form_field(api):
    test = api.post(
        "/api/v1/decomposition-tests/", {"step": StepFactory().pk, "method": "dsc"}, format="json"
    ).json()["id"]
    flipped = upload(api, test, csv_scan(5.0, sign=-1.0), exotherm_positive="false")
    assert flipped.status_code == 201, flipped.json()
    assert flipped.json()["decomposition_energy"]["value"] == pytest.approx(800.0, rel=0.02)


@pytest.mark.django_db
def test_a_calorimetry_run_may_be_created_before_its_series(api):
    step = StepFactory()
    resp = api.post("/api/v1/calorimetry-runs/", {"step": step.pk}, format="json")
    assert resp.status_code == 201, resp.json()
    assert resp.json()["specific_reaction_heat"] is None
    snap = m.IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snap.values["adiabatic_temperature_rise_k"] is None
    assert np.isfinite(step.process_temperature_k)
