"""The guided upload of four DSC scans in the browser (issue 16 item 6), then the step page.

Scans from the extended Prout–Tompkins law (tests/calcs/decomposition_data.py, parameters
chosen there: E 130 kJ/mol, z 0.01), 2.0 mg, 800 J/g, written in min / °C / mW.
"""

from __future__ import annotations

import re

import pytest
from playwright.sync_api import expect

from tests.api.test_decomposition_curves import csv_scan
from tests.calcs.decomposition_data import RATES_K_PER_MIN
from tests.e2e.conftest import shoot, sign_in

pytestmark = pytest.mark.e2e


def test_four_scans_uploaded_in_the_browser_give_onset_energy_kinetics_and_td24(
    world, live_server, page, artifacts, tmp_path
):
    from hazards.models import DecompositionCurve, DecompositionTest, IndicatorSnapshot

    step = world["step"]
    step.specific_heat_capacity_j_per_kg_k = 2000.0
    step.save()
    step.decomposition_tests.all().delete()
    test = DecompositionTest.objects.create(step=step, method="dsc", is_basis=True)
    sign_in(page, live_server.url, "author")
    for i, beta in enumerate(RATES_K_PER_MIN):
        path = tmp_path / f"scan-{beta:g}-K-per-min.csv"
        path.write_bytes(csv_scan(beta))
        page.goto(f"{live_server.url}/steps/{step.pk}/")
        page.get_by_role("link", name="add a curve file").click()
        page.get_by_label("Curve file (CSV)").set_input_files(str(path))
        page.get_by_label("Sample mass").fill("2.0 mg")
        page.get_by_role("button", name="Read the file").click()
        # preview: nothing stored yet, the scan's figures and chart
        expect(page.get_by_text("Nothing has been stored yet.")).to_be_visible()
        expect(page.get_by_role("heading", name="What the scan gives")).to_be_visible()
        expect(page.locator("img[alt^='The scan with its baseline']")).to_be_visible()
        energy = page.locator("dt:text-is('Energy') + dd").inner_text()
        assert float(re.match(r"([\d.]+) kJ/kg", energy).group(1)) == pytest.approx(800, rel=0.03)
        assert DecompositionCurve.objects.count() == i
        if i == 0:
            shoot(page, artifacts, "curve-preview")
        page.get_by_role("button", name="Confirm and store the curve").click()
        page.wait_for_url(f"{live_server.url}/steps/{step.pk}/")
    assert DecompositionCurve.objects.filter(test=test).count() == 4

    # the step page: onset and energy of the test, the kinetics, TD24 from the simulation
    body = page.locator("main").inner_text()
    assert re.search(r"onset [\d.]+ °C, energy [\d.]+ kJ/kg, .*4 curves", body)
    assert "Chosen model: autocatalytic" in body
    assert "Autocatalysis screen: autocatalytic" in body
    # the kinetics with their uncertainty (fit and scan-to-scan jackknife)
    e = re.search(r"activation energy j per mol = ([\d.]+) ± ([\d.]+) J/mol", body)
    assert float(e.group(1)) == pytest.approx(130e3, rel=0.05) and float(e.group(2)) > 0
    expect(page.locator("img[alt*='DSC scans']").or_(
        page.get_by_text("DSC scans with baselines and the fitted model")).first).to_be_visible()
    snap = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snap.methods["td24"] == "td24.adiabatic_simulation.autocatalytic"
    assert snap.values["td24_k"] is not None and "td24_band_k" in snap.parameters
    shown = re.search(r"TD24 \(TMRad = 24 h\)\s+(-?[\d.]+) °C", body)
    assert float(shown.group(1)) == pytest.approx(snap.values["td24_k"] - 273.15, abs=0.06)
    shoot(page, artifacts, "curve-step-page")
