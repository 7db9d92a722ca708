"""The decomposition curve upload without a browser: choose, preview, move the limits, confirm.

Scan from the extended Prout–Tompkins rate law (Prout & Tompkins 1944; parameters chosen here,
tests/calcs/decomposition_data.py), 800 J/g generated.
"""

from __future__ import annotations

import re

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from hazards.models import DecompositionCurve, DecompositionTest
from hazards.web.curve_upload import SESSION_KEY
from tests.api.test_adiabatic_curves import arc_file
from tests.api.test_decomposition_curves import csv_scan

pytestmark = pytest.mark.django_db


def choose(client, test, raw):
    return client.post(
        f"/decomposition/{test.pk}/curves/new/",
        {
            "file": SimpleUploadedFile("scan-5.csv", raw, "text/csv"),
            "sample_mass": "2.0 mg",
            "exotherm_positive": "on",
        },
    )


def test_a_scan_is_previewed_with_its_baseline_then_stored_only_on_confirmation(
    people, step, client_as
):
    client = client_as(people["author"])
    test = step.decomposition_tests.get()
    response = choose(client, test, csv_scan(5.0, 800))
    assert response.status_code == 302, response.content.decode()[:500]
    html = client.get(response["Location"]).content.decode()
    assert "No problems: 800 data rows read." in html
    assert "Extrapolated onset" in html and "Scan and baseline" in html
    energy = re.search(r"<dt>Energy</dt><dd>([\d.]+) kJ/kg</dd>", html)
    assert float(energy.group(1)) == pytest.approx(800.0, rel=0.03)  # 800 kJ/kg generated
    assert DecompositionCurve.objects.count() == 0, "nothing may be stored before confirmation"
    moved = client.post(
        f"/decomposition/{test.pk}/curves/preview/",
        {
            "action": "limits",
            "baseline": "linear",
            "limit_low": "130 degC",
            "limit_high": "230 degC",
        },
    )
    assert moved.status_code == 302
    assert client.session[SESSION_KEY]["baseline"] == "linear"
    assert client.session[SESSION_KEY]["limit_low_k"] == pytest.approx(403.15)
    done = client.post(f"/decomposition/{test.pk}/curves/confirm/", {})
    assert done.status_code == 302 and done["Location"] == f"/steps/{step.pk}/"
    curve = DecompositionCurve.objects.get()
    assert curve.baseline == "linear" and curve.limit_low_k == pytest.approx(403.15)
    assert curve.derived["energy_j_per_kg"] == pytest.approx(800e3, rel=0.03)
    assert SESSION_KEY not in client.session


def test_a_bad_scan_lists_row_and_column_and_cannot_be_confirmed(people, step, client_as):
    client = client_as(people["author"])
    test = step.decomposition_tests.get()
    raw = b"time [min],temperature [degC],heat_flow [mW]\n0,30,0.1\n1,31,=A1\n2,32,0.1\n"
    html = client.get(choose(client, test, raw)["Location"]).content.decode()
    assert "<td>3</td><td>heat_flow [mW]</td><td>=A1</td>" in html
    assert "Confirm and store the curve" not in html
    refused = client.post(f"/decomposition/{test.pk}/curves/confirm/", {})
    assert refused.status_code == 400
    assert DecompositionCurve.objects.count() == 0


def test_an_adiabatic_run_is_previewed_with_its_figures_then_stored_on_confirmation(
    people, step, client_as
):
    # first-order run at φ = 2, E = 100 kJ/mol (tests/api/test_adiabatic_curves.py)
    client = client_as(people["author"])
    step.decomposition_tests.all().delete()
    test = DecompositionTest.objects.create(step=step, method="adiabatic")
    raw, _, _ = arc_file(3001)
    response = client.post(
        f"/decomposition/{test.pk}/curves/new/",
        {
            "file": SimpleUploadedFile("arc.csv", raw, "text/csv"),
            "sample_mass": "5 g",
            "phi_factor": "2",
            "free_volume": "10 mL",
        },
    )
    assert response.status_code == 302, response.content.decode()[:800]
    html = client.get(response["Location"]).content.decode()
    assert "What the adiabatic run gives" in html
    e = re.search(r"<dt>Activation energy \([^)]*\)</dt><dd>([\d.]+) kJ/mol</dd>", html)
    assert float(e.group(1)) == pytest.approx(100.0, rel=0.02)  # simulated 100 kJ/mol
    assert "φ-corrected onset" in html and "Non-condensable gas after cooling" in html
    assert DecompositionCurve.objects.count() == 0, "nothing may be stored before confirmation"
    done = client.post(f"/decomposition/{test.pk}/curves/confirm/", {"reason": "ARC run"})
    assert done.status_code == 302, done.content.decode()[:800]
    curve = DecompositionCurve.objects.get()
    assert curve.free_volume_m3 == pytest.approx(1e-5)
    assert curve.derived["gas"]["mol_per_kg"] > 0
    page = client.get(f"/steps/{step.pk}/").content.decode()
    assert "Adiabatic runs: self-heat rate, measured and φ-corrected" in page
    # the test's onset, φ and E are marked as derived; its kinetics JSON is not dumped raw
    assert "derived from 1 curve file" in page and "files_sha256" not in page
