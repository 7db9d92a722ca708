"""Instrument exports as they come: semicolons, decimal commas, Latin-1 and UTF-16 files.

The files under `exports/` are real bytes in those encodings (written once by hand, see
each test). Both uploads read them with the same row reader (`hazards.services.table`).
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from hazards import models as m
from hazards.services.curves import parse_curve
from hazards.services.series import parse_series
from tests.factories import CalorimetryRunFactory, StepFactory

EXPORTS = Path(__file__).parent / "exports"


def export(name: str) -> bytes:
    return (EXPORTS / name).read_bytes()


def test_a_windows_1252_semicolon_export_with_decimal_commas_reads_like_the_utf8_file():
    raw = export("series_cp1252_semicolon_decimal_comma.csv")
    assert b"\xb0C" in raw and b";" in raw and b"30,0" in raw  # the file is what it says
    result = parse_series(raw, feed_mass_kg=0.1)
    assert result.ok, result.problems
    s = result.series
    # The same numbers as tests/api/test_series.py GOOD: NIST SP 811 B.8 (1 min = 60 s,
    # T/K = t/°C + 273.15); 100 g of a 0.1 kg feed is the whole feed.
    assert s.time_s == [0.0, 600.0, 1200.0]
    assert s.heat_release_rate_w == [0.0, 10.0, 0.0]
    assert s.dosed_fraction == [0.0, 1.0, 1.0]
    assert s.reactor_temperature_k == pytest.approx([303.15] * 3, abs=1e-12)
    assert s.columns["reactor_temperature"] == "°C"
    assert s.read_as == "Windows-1252 (Latin-1), semicolon-separated"
    assert s.sha256 == hashlib.sha256(raw).hexdigest()  # of the bytes as uploaded


def test_a_utf16_tab_separated_export_with_decimal_commas_is_read():
    raw = export("series_utf16le_bom_tab_decimal_comma.csv")
    assert raw.startswith(b"\xff\xfe")
    s = parse_series(raw).series
    assert s is not None
    assert s.time_s == [0.0, 1800.0, 3600.0]  # NIST SP 811 B.8: 1 h = 3600 s; 0,5 h = 1800 s
    assert s.heat_release_rate_w == pytest.approx([0.0, 1.5, 0.0])  # 1 mW = 1e-3 W
    assert s.dosed_fraction == pytest.approx([0.0, 0.5, 1.0])  # 1 % = 0.01 (ISO 80000-1)
    assert s.read_as == "UTF-16, tab-separated"


def test_curves_read_latin1_micro_units_and_utf16_without_a_bom():
    latin = parse_curve(export("dsc_latin1_semicolon_micro.csv"), kind="dsc")
    assert latin.ok, latin.problems
    # µW (byte 0xB5 in Latin-1) = 1e-6 W; 0,5 min = 30 s; 25,0 °C = 298.15 K (NIST SP 811)
    assert latin.series.data == {
        "time_s": [0.0, 30.0],
        "temperature_k": pytest.approx([298.15, 303.15]),
        "heat_flow_w": pytest.approx([1e-3, 2e-3]),
    }
    assert latin.series.columns == {"time": "min", "temperature": "°C", "heat_flow": "µW"}
    be = parse_curve(export("dsc_utf16be_no_bom.csv"), kind="dsc")
    assert be.ok, be.problems
    assert be.series.data["time_s"] == [0.0, 30.0]
    assert be.series.read_as == "UTF-16, comma-separated"


def _refusals(raw: bytes):
    series = parse_series(raw, feed_mass_kg=0.1)
    assert series.series is None
    return [(p.row, p.column, p.value, p.code) for p in series.problems], series.problems


def test_two_decimal_marks_in_one_file_are_refused_at_the_cell_not_guessed():
    found, problems = _refusals(export("series_mixed_decimal_marks.csv"))
    # '1.500' after '0,5' may be a thousands separator (1500) or 1.5: never guessed.
    assert found == [(3, "heat_release_rate [W]", "1.500", "decimal_mark")]
    assert "first at row 2, heat_release_rate [W]" in problems[0].rule
    curve = parse_curve(
        b"time [min];temperature [degC];heat_flow [mW]\n0;25,5;1\n1;1.000;2\n", kind="dsc"
    )
    assert [(p.row, p.column, p.code) for p in curve.problems] == [
        (3, "temperature [degC]", "decimal_mark")
    ]


@pytest.mark.parametrize(
    ("name", "expected", "words"),
    [
        # UTF-8 in the header, a Latin-1 degree sign in row 3: two encodings in one file.
        (
            "series_mixed_encodings.csv",
            [(3, "reactor_temperature [°C]", "encoding")],
            "one encoding",
        ),
        ("series_utf32.csv", [(None, None, "encoding")], "UTF-32"),
        ("series_utf16_cut.csv", [(3, None, "encoding")], "UTF-16"),  # cut in row 3
    ],
)
def test_an_encoding_that_cannot_be_read_is_refused_naming_it(name, expected, words):
    found, problems = _refusals(export(name))
    assert [(row, column, code) for row, column, _, code in found] == expected
    assert words in problems[0].rule + str(problems[0].value)


def test_problems_quote_the_file_s_own_units_and_values():
    raw = (
        b"time [min],heat_release_rate [W],dosed_fraction [-],reactor_temperature [degC]\n"
        b"0,1,0,25\n1.5,1,0.5,-300\n1.5,1,1,25\n"
    )
    found, problems = _refusals(raw)
    assert found == [
        (4, "time [min]", "1.5", "not_increasing"),  # as written, not 90.0 (seconds)
        (3, "reactor_temperature [degC]", "-300", "out_of_range"),  # not -26.85 (kelvin)
    ]
    assert "1.5 min" in problems[0].rule
    # 0 K = -273.15 °C (NIST SP 811 B.8), the limit in the column's own unit
    assert problems[1].rule == "must be above absolute zero (-273.15 degC)"
    fahrenheit = parse_curve(
        b"time [s],temperature [degF],heat_flow [mW]\n0,-500,1\n1,70,1\n", kind="dsc"
    )
    assert [(p.row, p.value, p.rule) for p in fahrenheit.problems] == [
        (2, "-500", "must be above absolute zero (-459.67 degF)")
    ]  # NIST SP 811 B.8


def test_a_decimal_comma_in_a_comma_separated_file_is_still_refused():
    raw = b"time [min],heat_release_rate [W],dosed_fraction [-]\n0,0,0\n1,1,5,1\n"
    found, problems = _refusals(raw)
    assert found == [(3, None, "1,1,5,1", "ragged_row")]
    assert "decimal comma" in problems[0].rule


@pytest.mark.django_db
def test_both_uploads_take_the_exports_and_keep_the_original_bytes(api):
    run = CalorimetryRunFactory(
        step__process_temperature_k=303.15,
        step__specific_heat_capacity_j_per_kg_k=2000.0,
        specific_reaction_heat_j_per_kg=1.0,
        max_accumulation=None,
    )
    raw = export("series_cp1252_semicolon_decimal_comma.csv")
    resp = api.post(
        f"/api/v1/calorimetry-runs/{run.pk}/series/",
        {
            "initial_mass": "400 g",
            "feed_mass": "100 g",
            "file": SimpleUploadedFile("export.csv", raw, content_type="text/csv"),
        },
        format="multipart",
    )
    assert resp.status_code == 201, resp.json()
    # tests/api/test_series.py: the same numbers give MTSR 33 °C at 10 min (worked by hand)
    assert resp.json()["derived"]["max_mtsr"]["value"] == pytest.approx(33.0)
    assert bytes(m.CalorimetrySeries.objects.get(run=run).original) == raw

    test = api.post(
        "/api/v1/decomposition-tests/", {"step": StepFactory().pk, "method": "dsc"}, format="json"
    ).json()["id"]
    bad = api.post(
        f"/api/v1/decomposition-tests/{test}/curves/",
        {
            "sample_mass": "2.0 mg",
            "file": SimpleUploadedFile("scan.csv", export("series_utf32.csv")),
        },
        format="multipart",
    )
    assert bad.status_code == 400
    assert [e["code"] for e in bad.json()["errors"] if e.get("field") == "file"] == ["encoding"]
    assert not m.DecompositionCurve.objects.exists()
