"""The portfolio: every visible step with class, indicators, approval state and due date,
filters and sorts in the URL, roll-ups per process and site, CSV and spreadsheet exports;
one query for the rows of a page whatever the number of steps."""

from __future__ import annotations

import csv
import io
import zipfile
from xml.etree import ElementTree

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from hazards.models import IndicatorSnapshot
from hazards.review.models import ProcessRole
from hazards.web.xlsx import column_name, stream_xlsx
from tests.factories import ProcessFactory, SiteFactory, StepFactory

pytestmark = pytest.mark.django_db
NS = {"m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main"}


def _set(step, **values):
    """Give a step's current snapshot known class and values (SI), as a recompute would."""
    snap = IndicatorSnapshot.objects.get(step=step, is_current=True)
    klass = values.pop("klass", snap.criticality_class)
    IndicatorSnapshot.objects.filter(pk=snap.pk).update(
        criticality_class=klass, values={**snap.values, **values}
    )


def _other_process(people, name="Nitration of PZ-7", site_code="brenholm", klass=5):
    site = SiteFactory(code=site_code, name="Brenholm plant")
    process = ProcessFactory(name=name, site=site)
    step = StepFactory(process=process, sequence=1, name="Nitration")
    ProcessRole.objects.create(process=process, user=people["reviewer"], role="reviewer")
    _set(step, klass=klass, mtsr_k=420.15)
    return process, step


def test_the_portfolio_shows_each_step_in_display_units_with_its_approval_state(
    people, process, step, client_as
):
    # 323.15 K is 50 °C; 7200 s is 2 h (exact unit definitions, NIST SP 811).
    _set(step, klass=3, mtsr_k=323.15, tmr_ad_at_mtsr_s=7200.0, cooling_margin=1.25)
    page = client_as(people["reviewer"]).get("/portfolio/")
    html = page.content.decode()
    assert page.status_code == 200
    assert "Sulfonation in water" in html and "50 °C" in html and "2 h" in html
    assert "1.25" in html and "No revision opened" in html
    assert "support and do not replace a qualified" in html.replace("\n    ", " ")


def test_an_outsider_sees_no_step_and_the_filters_narrow_the_rows(people, process, step, client_as):
    _other_process(people)
    assert "Sulfonation" not in client_as(people["outsider"]).get("/portfolio/").content.decode()
    reviewer = client_as(people["reviewer"])
    both = reviewer.get("/portfolio/").content.decode()
    assert "Sulfonation in water" in both and "1. Nitration" in both
    only5 = reviewer.get("/portfolio/?klass=5").content.decode()
    assert "1. Nitration" in only5 and "1. Sulfonation in water" not in only5
    site = reviewer.get("/portfolio/?site=varnholt").content.decode()
    assert "1. Sulfonation in water" in site and "1. Nitration" not in site
    drafts = reviewer.get("/portfolio/?approval=in_force").content.decode()
    assert "1. Sulfonation in water" not in drafts and "No step matches" in drafts


def test_sorting_by_mtsr_puts_the_hottest_step_first(people, process, step, client_as):
    _set(step, klass=2, mtsr_k=330.0)
    _other_process(people)  # MTSR 420.15 K
    html = client_as(people["reviewer"]).get("/portfolio/?sort=-mtsr").content.decode()
    assert html.index("1. Nitration") < html.index("1. Sulfonation in water")
    html = client_as(people["reviewer"]).get("/portfolio/?sort=process").content.decode()
    assert html.index("1. Nitration") < html.index("1. Sulfonation in water")  # N before S


def test_roll_ups_name_the_worst_class_per_site_and_process(people, process, step, client_as):
    _set(step, klass=2)
    StepFactory(process=process, sequence=2, name="Quench")
    _set(process.steps.get(sequence=2), klass=4)
    response = client_as(people["reviewer"]).get("/portfolio/")
    sites = {r["code"]: r for r in response.context["rollups"]["sites"]}
    assert sites["varnholt"]["worst"] == 4 and sites["varnholt"]["steps"] == 2
    assert sites["varnholt"]["class_2"] == 1 and sites["varnholt"]["class_4"] == 1
    (row,) = response.context["rollups"]["processes"]
    assert row["worst"] == 4 and row["process_name"] == "Sulfonation of QX-4"


def test_the_rows_of_a_page_are_one_query_whatever_the_number_of_steps(
    people, process, step, client_as
):
    client = client_as(people["reviewer"])

    def row_queries():
        with CaptureQueriesContext(connection) as ctx:
            client.get("/portfolio/")
        return [q["sql"] for q in ctx.captured_queries if "hazards_indicatorsnapshot" in q["sql"]]

    few = row_queries()
    for i in range(6):
        _other_process(people, name=f"Route {i}", site_code=f"s{i}", klass=i % 5 + 1)
    many = row_queries()
    assert len(many) == len(few)
    assert len(many) <= 4  # rows, bounded count, site and process roll-ups


def test_the_csv_export_streams_numbers_in_display_units(people, process, step, client_as):
    _set(step, klass=3, mtsr_k=323.15, tmr_ad_at_mtsr_s=7200.0)
    response = client_as(people["reviewer"]).get("/portfolio/export.csv")
    assert response.streaming and response["Content-Type"].startswith("text/csv")
    text = b"".join(response.streaming_content).decode("utf-8-sig")
    header, row = list(csv.reader(io.StringIO(text)))
    assert header[4] == "MTSR [°C]" and header[7] == "TMRad at MTSR [h]"
    assert float(row[4]) == pytest.approx(50.0) and float(row[7]) == pytest.approx(2.0)
    assert row[2] == "1. Sulfonation in water" and row[3] == "3"


def test_the_spreadsheet_export_is_a_workbook_with_numbers_as_numbers(
    people, process, step, client_as
):
    _set(step, klass=3, mtsr_k=323.15)
    response = client_as(people["reviewer"]).get("/portfolio/export.xlsx")
    assert response.streaming
    data = b"".join(response.streaming_content)
    archive = zipfile.ZipFile(io.BytesIO(data))
    assert archive.testzip() is None
    assert {"[Content_Types].xml", "xl/workbook.xml", "xl/worksheets/sheet1.xml"} <= set(
        archive.namelist()
    )
    sheet = ElementTree.fromstring(archive.read("xl/worksheets/sheet1.xml"))
    rows = sheet.findall(".//m:row", NS)
    assert len(rows) == 2
    mtsr = rows[1].find("m:c[@r='E2']", NS)
    assert mtsr.get("t") is None and float(mtsr.find("m:v", NS).text) == pytest.approx(50.0)
    assert rows[0].find("m:c[@r='E1']/m:is/m:t", NS).text == "MTSR [°C]"


def test_the_spreadsheet_writer_names_columns_and_escapes_text():
    assert [column_name(i) for i in (0, 25, 26, 701, 702)] == ["A", "Z", "AA", "ZZ", "AAA"]
    data = b"".join(stream_xlsx(["a<b"], [["x & y\x01", 1.5, None]] * 500))
    sheet = ElementTree.fromstring(
        zipfile.ZipFile(io.BytesIO(data)).read("xl/worksheets/sheet1.xml")
    )
    assert len(sheet.findall(".//m:row", NS)) == 501
    assert sheet.find(".//m:c[@r='A2']/m:is/m:t", NS).text == "x & y"
