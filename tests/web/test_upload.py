"""The calorimeter upload flow without a browser: choose, preview, correct a unit, confirm."""

from __future__ import annotations

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from pghistory.models import Context

from hazards.models import CalorimetryRun, CalorimetrySeries
from hazards.web.upload import NOTHING_PENDING, SESSION_KEY
from tests.web.conftest import series_csv

pytestmark = pytest.mark.django_db


def choose(client, step, raw, name="run-42.csv", **extra):
    return client.post(f"/steps/{step.pk}/calorimetry/upload/", {
        "action": "choose", "file": SimpleUploadedFile(name, raw, "text/csv"),
        "initial_mass": "400 g", "feed_mass": "100 g", "instrument": "RC-2", "run_date":
        "2026-06-01", **extra})


def test_a_good_file_is_previewed_then_stored_only_on_confirmation(people, step, client_as):
    client = client_as(people["author"])
    runs_before = CalorimetryRun.objects.filter(step=step).count()
    response = choose(client, step, series_csv())
    assert response.status_code == 302
    preview = client.get(response["Location"])
    html = preview.content.decode()
    assert preview.status_code == 200
    # the detected columns with their units, the first rows, and no problem
    for text in ("time", "heat_release_rate", "dosed_mass", "reactor_temperature", "degC"):
        assert text in html
    assert "<td>10</td>" in html
    assert "No problems: 19 data rows read." in html
    # what the file gives: C1.7 Q_tot 60 kJ over 0.5 kg final mass -> 120 kJ/kg (METHODS.md)
    assert "120 kJ/kg" in html
    assert CalorimetrySeries.objects.count() == 0, "nothing may be stored before confirmation"
    assert CalorimetryRun.objects.filter(step=step).count() == runs_before
    done = client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {})
    assert done.status_code == 302 and done["Location"] == f"/steps/{step.pk}/"
    series = CalorimetrySeries.objects.get()
    assert series.file_name == "run-42.csv" and series.run.step_id == step.pk
    assert series.run.specific_reaction_heat_j_per_kg == pytest.approx(120e3, rel=0.02)
    assert SESSION_KEY not in client.session


def test_every_problem_is_listed_with_its_row_and_column(people, step, client_as):
    client = client_as(people["author"])
    raw = series_csv(bad_cells={(2, 1): "=SUM(A1:A3)", (5, 0): "nan"})
    preview = client.get(choose(client, step, raw)["Location"])
    html = preview.content.decode()
    assert "Problems <span class=\"count\">2</span>" in html
    assert "<td>4</td><td>heat_release_rate [W]</td><td>=SUM(A1:A3)</td>" in html
    assert "spreadsheet formula" in html
    assert "<td>7</td><td>time [min]</td><td>nan</td>" in html
    assert "Confirm and store the file" not in html
    refused = client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {})
    assert refused.status_code == 400
    assert CalorimetrySeries.objects.count() == 0


def test_a_wrong_unit_is_corrected_in_the_preview_and_the_correction_is_audited(people, step,
                                                                               client_as):
    client = client_as(people["author"])
    raw = series_csv(unit_rate="W").replace(b"heat_release_rate [W]", b"heat_release_rate [K]")
    html = client.get(choose(client, step, raw)["Location"]).content.decode()
    assert "wrong dimension for heat_release_rate" in html
    client.post(f"/steps/{step.pk}/calorimetry/upload/preview/",
                {"action": "units", "unit-1": "W"})
    html = client.get(f"/steps/{step.pk}/calorimetry/upload/preview/").content.decode()
    assert "No problems" in html and "corrected" in html
    assert client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {}).status_code == 302
    series = CalorimetrySeries.objects.get()
    assert series.columns["heat_release_rate"] == "W"
    assert Context.objects.filter(metadata__reason__icontains="heat_release_rate: K -> W") \
        .exists()


def test_discarding_stores_nothing_and_a_stale_confirmation_is_refused(people, step, client_as):
    client = client_as(people["author"])
    choose(client, step, series_csv())
    client.post(f"/steps/{step.pk}/calorimetry/upload/preview/", {"action": "cancel"})
    assert CalorimetrySeries.objects.count() == 0
    response = client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {}, follow=True)
    assert NOTHING_PENDING in response.content.decode()


def test_missing_masses_are_asked_for_beside_their_fields(people, step, client_as):
    client = client_as(people["author"])
    response = client.post(f"/steps/{step.pk}/calorimetry/upload/", {
        "action": "choose", "file": SimpleUploadedFile("a.csv", series_csv()),
        "initial_mass": "", "feed_mass": "-1 g"})
    assert response.status_code == 400
    html = response.content.decode()
    assert 'id="err-initial_mass"' in html and "This field is required" in html
    assert "must be greater than zero" in html


def test_after_an_upload_the_page_says_whether_the_indicators_changed(people, step, client_as):
    from hazards.web.diff import UNCHANGED

    client = client_as(people["author"])
    assert choose(client, step, series_csv()).status_code == 302
    done = client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {}, follow=True)
    # The new run is not the step's basis (another run is marked), so nothing moves.
    assert UNCHANGED in done.content.decode()


def test_a_latin1_semicolon_export_is_previewed_in_its_columns_and_corrected(people, step,
                                                                            client_as):
    from tests.api.test_instrument_exports import export

    client = client_as(people["author"])
    raw = export("series_cp1252_semicolon_decimal_comma.csv").replace(b"[W]", b"[K]")
    html = client.get(choose(client, step, raw)["Location"]).content.decode()
    # the columns split at the semicolons, the degree sign read from byte 0xB0, the rows
    # with their decimal commas as written
    assert "reactor_temperature" in html and "°C" in html and "<td>30,0</td>" in html
    assert "wrong dimension for heat_release_rate" in html
    client.post(f"/steps/{step.pk}/calorimetry/upload/preview/",
                {"action": "units", "unit-1": "W"})
    html = client.get(f"/steps/{step.pk}/calorimetry/upload/preview/").content.decode()
    assert "No problems: 3 data rows read." in html
    assert client.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {}).status_code == 302
    series = CalorimetrySeries.objects.get()
    assert series.columns == {"time": "min", "heat_release_rate": "W", "dosed_mass": "g",
                              "reactor_temperature": "°C"}
    assert series.data["heat_release_rate_w"] == [0.0, 10.0, 0.0]  # 10,0 W read as 10 W
