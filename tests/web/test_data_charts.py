"""The uploaded calorimeter record plotted on the step and run pages: heat release, reactor
temperature, dosing and thermal conversion on one page-width chart, drawn once per file."""

from __future__ import annotations

import base64
import re

import numpy as np
import pytest

from hazards.dossier import series_charts
from hazards.models import CalorimetrySeries
from hazards.web import data_charts
from tests.web.conftest import series_csv
from tests.web.test_upload import choose

pytestmark = pytest.mark.django_db


@pytest.fixture
def uploaded(people, step, client_as):
    client = client_as(people["author"])
    client.get(choose(client, step, series_csv())["Location"])
    assert client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {}).status_code == 302
    return CalorimetrySeries.objects.get()


def _svg(html: str) -> str:
    match = re.search(
        r'<img src="data:image/svg\+xml;base64,([^"]+)" alt="Calorimeter record', html
    )
    assert match, "no calorimeter record chart on the page"
    return base64.b64decode(match.group(1)).decode()


def test_the_run_page_plots_the_uploaded_record(people, uploaded, client_as):
    html = client_as(people["reviewer"]).get(f"/calorimetry/{uploaded.run_id}/").content.decode()
    svg = _svg(html)
    for text in (
        "heat release / W",
        "reactor / °C",
        "dosed fraction",
        "thermal conversion",
        "time / h",
        "run-42.csv",
    ):
        assert text in svg
    assert "support and do not replace a qualified" in html.replace("\n    ", " ")


def test_the_step_page_plots_its_basis_record_and_links_each_run(
    people, step, uploaded, client_as, monkeypatch
):
    client = client_as(people["reviewer"])
    html = client.get(f"/steps/{step.pk}/").content.decode()
    assert "The calorimeter record" in html and _svg(html)
    assert f'href="/calorimetry/{uploaded.run_id}/"' in html
    drawn = []
    monkeypatch.setattr(data_charts, "series_chart", lambda *a, **k: drawn.append(1) or "<svg/>")
    client.get(f"/steps/{step.pk}/")
    assert drawn == [], "the same file and masses must come from the chart cache"


def test_a_run_without_a_file_says_there_is_nothing_to_plot(people, step, client_as):
    run = step.calorimetry_runs.get()
    html = client_as(people["reviewer"]).get(f"/calorimetry/{run.pk}/").content.decode()
    assert "No calorimeter file is attached to this run" in html


def test_an_outsider_cannot_see_a_run(people, step, client_as):
    run = step.calorimetry_runs.get()
    assert client_as(people["outsider"]).get(f"/calorimetry/{run.pk}/").status_code == 404


def test_thinning_keeps_a_one_sample_spike_and_both_ends():
    values = np.zeros(100_000)
    values[54_321] = 7.0  # one sample of a spike a stride would miss (common practice)
    keep = series_charts.thin(values, limit=1000)
    assert len(keep) <= 1002 and 54_321 in keep and keep[0] == 0 and keep[-1] == 99_999


def test_thermal_conversion_is_the_heat_released_so_far_over_the_total():
    # A constant 10 W for 100 s: X_th is t/100 (METHODS.md §1.2, X_th = Q/Q_tot).
    t = np.linspace(0, 100, 101)
    data = {
        "time_s": t.tolist(),
        "heat_release_rate_w": [10.0] * 101,
        "dosed_fraction": (t / 100).tolist(),
    }
    xth = series_charts.thermal_conversion(data, 0.4, 0.1)
    assert xth[50] == pytest.approx(0.5) and xth[-1] == pytest.approx(1.0)
