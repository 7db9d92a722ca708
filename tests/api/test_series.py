"""Calorimeter series: the CSV parser (pure) and the upload endpoint (stores and derives)."""

from __future__ import annotations

import hashlib

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from hazards import models as m
from hazards.services.series import parse_series
from tests.factories import CalorimetryRunFactory

HEADER = "time [min],heat_release_rate [W],dosed_mass [g],reactor_temperature [degC]\n"
# Worked by hand (trapezoid rule, METHODS.md §1.2 steps 1-6): Q_tot = ½·10 W·600 s · 2 = 6000 J;
# at t = 10 min X_th = 0.5 and f = 1, so X_ac = 0.5; Q′ = 6000 J / 0.5 kg = 12 kJ/kg;
# MTSR(10 min) = 30 °C + 0.5 · 6000 J / (0.5 kg · 2000 J/(kg K)) = 33 °C.
GOOD = (HEADER + "0,0,0,30\n10,10,100,30\n20,0,100,30\n").encode()


def _problems(raw: bytes, **kw):
    result = parse_series(raw, feed_mass_kg=kw.pop("feed_mass_kg", 0.1), **kw)
    assert result.series is None
    return [(p.row, p.column, p.code) for p in result.problems]


def test_a_good_file_becomes_si_columns():
    result = parse_series(GOOD, feed_mass_kg=0.1)
    assert result.ok and not result.problems
    s = result.series
    assert s.time_s == [0.0, 600.0, 1200.0]  # NIST SP 811 B.8: 1 min = 60 s
    assert s.dosed_fraction == [0.0, 1.0, 1.0]  # 100 g of a 0.1 kg feed
    assert s.reactor_temperature_k == pytest.approx([303.15] * 3, abs=1e-12)  # T/K = t/°C + 273.15
    assert s.columns == {"time": "min", "heat_release_rate": "W", "dosed_mass": "g",
                         "reactor_temperature": "degC"}
    assert s.sha256 == hashlib.sha256(GOOD).hexdigest() and s.rows == 3


def test_units_bom_crlf_and_fractions_in_percent_are_accepted():
    raw = ("\ufefftime [h],heat_release_rate [mW],dosed_fraction [%]\r\n"
           "0,0,0\r\n0.5,1500,50\r\n1,0,100\r\n").encode()
    s = parse_series(raw).series
    assert s.time_s == [0.0, 1800.0, 3600.0]  # NIST SP 811 B.8: 1 h = 3600 s
    assert s.heat_release_rate_w == pytest.approx([0.0, 1.5, 0.0])  # 1 mW = 1e-3 W (SI prefix)
    assert s.dosed_fraction == pytest.approx([0.0, 0.5, 1.0])  # 1 % = 0.01 (ISO 80000-1)
    assert s.reactor_temperature_k is None
    degf = parse_series(b"time [s],heat_release_rate [W],dosed_fraction [-],"
                        b"reactor_temperature [degF]\n0,1,0,77\n1,1,1,212\n").series
    # NIST SP 811 B.8: T/K = (t/°F + 459.67)/1.8: 77 °F = 298.15 K, 212 °F = 373.15 K.
    assert degf.reactor_temperature_k == pytest.approx([298.15, 373.15], abs=1e-9)


@pytest.mark.parametrize(
    ("cell", "code"),
    [("nan", "not_finite"), ("NaN", "not_finite"), ("inf", "not_finite"),
     ("-Infinity", "not_finite"), ("1e309", "not_finite"), ("", "empty"),
     ("=SUM(A1:A3)", "formula"), ("@A1", "formula"), ("+A2", "formula"),
     ("12,5", "not_a_number"), ("1 234", "not_a_number"), ("abc", "not_a_number"),
     ("0x10", "not_a_number")],
)
def test_a_bad_cell_is_refused_with_its_row_and_column(cell, code):
    raw = (HEADER + "0,0,0,30\n10,10,100,30\n" + f'20,"{cell}",100,30\n').encode()
    assert _problems(raw) == [(4, "heat_release_rate [W]", code)]


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        (b"", [(None, None, "empty_file")]),
        (HEADER.encode(), [(2, None, "no_rows")]),
        (b"PK\x03\x04rest-of-a-workbook", [(None, None, "not_csv")]),
        # UTF-16, Latin-1 and semicolons are read (tests/api/test_instrument_exports.py):
        # these files get as far as their rows.
        ("time [min],heat_release_rate [W],dosed_fraction [-]\n0,1,0\n".encode("utf-16"),
         [(3, None, "no_rows")]),
        (b"time [min],heat_release_rate [W],dosed_fraction [-]\n0,1,0\n1,\xb0,1\n",
         [(3, "heat_release_rate [W]", "not_a_number")]),  # Latin-1 degree sign in a cell
        (b"time [min];heat_release_rate [W];dosed_fraction [-]\n0;1;0\n",
         [(3, None, "no_rows")]),
        (b"time,heat_release_rate [W],dosed_fraction [-]\n0,1,0\n1,1,1\n",
         [(1, "time", "missing_unit")]),
        (b"time [min],heat_release_rate [zorkmid],dosed_fraction [-]\n0,1,0\n1,1,1\n",
         [(1, "heat_release_rate [zorkmid]", "unknown_unit")]),
        (b"time [min],heat_release_rate [J],dosed_fraction [-]\n0,1,0\n1,1,1\n",
         [(1, "heat_release_rate [J]", "wrong_dimension")]),
        (b"time [min],dosed_fraction [-],colour [-]\n0,0,1\n1,1,1\n",
         [(1, "colour [-]", "unknown_column"), (1, "heat_release_rate", "missing_column")]),
        (b"time [min],heat_release_rate [W],dosed_fraction [-]\n0,1,0\n1,1,1\n1,1,1\n0.5,1,1\n",
         [(4, "time [min]", "not_increasing"), (5, "time [min]", "not_increasing")]),
        (b"time [min],heat_release_rate [W],dosed_fraction [-]\n0,1,0\n1,1,4.5\n",
         [(3, "dosed_fraction [-]", "out_of_range")]),
        (b"time [min],heat_release_rate [W],dosed_fraction [-]\n0,1,0\n1,1\n2,1,1\n",
         [(3, None, "ragged_row")]),
    ],
)
def test_a_bad_file_is_refused_as_a_whole_naming_every_problem(raw, expected):
    assert _problems(raw) == expected


def test_limits_on_bytes_and_rows_are_enforced():
    rows = "".join(f"{i},1,1,30\n" for i in range(1, 12))
    raw = (HEADER + "0,0,0,30\n" + rows).encode()
    assert _problems(raw, max_rows=10) == [(12, None, "too_many_rows")]
    assert _problems(raw, max_bytes=100) == [(None, None, "too_large")]
    needs_feed = parse_series(GOOD, feed_mass_kg=None).problems
    assert [p.code for p in needs_feed] == ["needs_feed_mass"]


def _upload(api, run, raw, **fields):
    data = {"initial_mass": "400 g", "feed_mass": "100 g", **fields,
            "file": SimpleUploadedFile("run-7.csv", raw, content_type="text/csv")}
    return api.post(f"/api/v1/calorimetry-runs/{run.pk}/series/", data, format="multipart")


@pytest.mark.django_db
def test_the_upload_stores_the_file_derives_the_run_and_returns_the_mtsr_curve(api):
    run = CalorimetryRunFactory(step__process_temperature_k=303.15,
                                step__specific_heat_capacity_j_per_kg_k=2000.0,
                                specific_reaction_heat_j_per_kg=1.0, max_accumulation=None)
    resp = _upload(api, run, GOOD)
    assert resp.status_code == 201, resp.json()
    body = resp.json()
    assert body["derived"]["specific_reaction_heat"] == {"value": pytest.approx(12.0),
                                                         "unit": "kJ/kg"}
    assert body["derived"]["max_accumulation"]["value"] == pytest.approx(0.5)
    assert body["derived"]["max_mtsr"] == {"value": pytest.approx(33.0), "unit": "degC"}
    assert body["derived"]["max_mtsr_time"] == {"value": pytest.approx(10.0), "unit": "min"}
    assert body["mtsr_curve"]["time"] == {"unit": "min", "values": [0.0, 10.0, 20.0]}
    assert body["mtsr_curve"]["mtsr"]["values"] == pytest.approx([30.0, 33.0, 30.0])
    assert body["sha256"] == hashlib.sha256(GOOD).hexdigest()

    series = m.CalorimetrySeries.objects.get(run=run)
    assert bytes(series.original) == GOOD and series.sha256 == body["sha256"]
    assert series.initial_mass_kg == pytest.approx(0.4) and series.feed_mass_kg == pytest.approx(0.1)
    run.refresh_from_db()
    assert run.specific_reaction_heat_j_per_kg == pytest.approx(12000.0)
    assert run.max_accumulation == pytest.approx(0.5)
    assert body["run_version"] == run.version == 2
    snapshot = m.IndicatorSnapshot.objects.get(step=run.step, is_current=True)
    assert snapshot.inputs["series_sha256"] == series.sha256

    again = api.get(f"/api/v1/calorimetry-runs/{run.pk}/series/")
    assert again.status_code == 200 and again.json()["derived"] == body["derived"]
    assert _upload(api, run, GOOD).status_code == 409  # one series per run


@pytest.mark.django_db
def test_a_bad_upload_stores_nothing_and_lists_every_problem(api):
    run = CalorimetryRunFactory()
    before = (run.version, run.specific_reaction_heat_j_per_kg)
    raw = (HEADER + "0,0,0,30\n10,nan,100,30\n20,=SUM(B2:B3),100,1e309\n").encode()
    resp = _upload(api, run, raw)
    assert resp.status_code == 400
    body = resp.json()
    assert body["code"] == "series_rejected"
    assert [(e["row"], e["column"], e["code"]) for e in body["errors"]] == [
        (3, "heat_release_rate [W]", "not_finite"), (4, "heat_release_rate [W]", "formula"),
        (4, "reactor_temperature [degC]", "not_finite")]
    assert not m.CalorimetrySeries.objects.exists()
    run.refresh_from_db()
    assert (run.version, run.specific_reaction_heat_j_per_kg) == before

    bad_mass = _upload(api, run, raw, feed_mass="-3 g")
    assert bad_mass.status_code == 400 and bad_mass.json()["code"] == "validation_error"
    fields = [e["field"] for e in bad_mass.json()["errors"]]
    assert fields[0] == "feed_mass" and fields.count("file") == 3
    missing = api.post(f"/api/v1/calorimetry-runs/{run.pk}/series/",
                       {"initial_mass": "1 g", "feed_mass": "1 g"}, format="multipart")
    assert missing.status_code == 400 and missing.json()["errors"][0]["field"] == "file"
    assert api.get(f"/api/v1/calorimetry-runs/{run.pk}/series/").status_code == 404
    guarded = api.post(f"/api/v1/calorimetry-runs/{run.pk}/series/", {
        "initial_mass": "400 g", "feed_mass": "100 g",
        "file": SimpleUploadedFile("a.csv", GOOD)}, format="multipart",
        HTTP_IF_MATCH=f'"calorimetryrun-{run.pk}-v{run.version + 5}"')
    assert guarded.status_code == 412 and not m.CalorimetrySeries.objects.exists()


def test_a_dosed_fraction_above_one_is_a_surplus_feed_and_is_kept():
    # METHODS.md §1.2 step 4: a feed beyond the stoichiometric amount is accepted (calcs caps
    # it at 1 for the accumulation); more than 3 equivalents is a typing slip (common
    # practice, no source)
    raw = b"time [s],heat_release_rate [W],dosed_fraction [-]\n0,0,0\n600,10,0.6\n1200,0,1.2\n"
    s = parse_series(raw).series
    assert s is not None and s.dosed_fraction == pytest.approx([0.0, 0.6, 1.2])
    bad = parse_series(b"time [s],heat_release_rate [W],dosed_fraction [-]\n0,0,0\n600,10,4\n")
    assert bad.series is None
    assert [(p.row, p.code) for p in bad.problems] == [(3, "out_of_range")]
