"""The step page shows the decomposition evidence: scans with baselines and fit, E(α), TMR(T).

Scans from the extended Prout–Tompkins rate law (Prout & Tompkins 1944; parameters chosen
here, tests/calcs/decomposition_data.py).
"""

from __future__ import annotations

import base64

from hazards.dossier.charts import tmr_chart
from hazards.services.curves_store import curve_attach
from tests.api.test_decomposition_curves import csv_scan
from tests.calcs.decomposition_data import RATES_K_PER_MIN


def test_the_step_page_shows_scans_fit_e_alpha_and_the_simulated_tmr_line(people, step, client_as):
    test = step.decomposition_tests.get()
    for beta in RATES_K_PER_MIN[:3]:
        curve_attach(
            test=test, file_name=f"scan-{beta:g}.csv", raw=csv_scan(beta, 800), sample_mass_kg=2e-6
        )
    page = client_as(people["reviewer"]).get(f"/steps/{step.pk}/").content.decode()
    assert "DSC scans with baselines and the fitted model" in page
    assert "Activation energy against conversion (Friedman, OFW)" in page
    assert "Chosen model: <strong>autocatalytic</strong>" in page
    assert "3 curves" in page
    snapshot = step.snapshots.get(is_current=True)
    assert snapshot.methods["td24"] == "td24.adiabatic_simulation.autocatalytic"
    svg = tmr_chart(snapshot)
    assert "TMRad, simulated (autocatalytic fit)" in svg
    assert "TD24 95 % band" in svg
    images = [p.split('"')[0] for p in page.split('src="data:image/svg+xml;base64,')[1:]]
    drawn = [base64.b64decode(i).decode() for i in images]
    assert any("fitted model" in d for d in drawn)
