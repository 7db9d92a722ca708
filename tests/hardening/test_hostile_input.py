"""A hostile-input corpus through the API, the CSV upload and the pages: every item gets a
clear refusal (4xx, or the form shown again with its errors; never 5xx) and leaves every
table exactly as it was. Text is escaped everywhere it is shown, the dossier PDF included."""

from __future__ import annotations

import html
import json
import re

import pytest
from django.db import connection
from rest_framework.test import APIClient

from tests.conftest import make_user
from tests.hardening.conftest import AUTHOR_PERMS

SCRIPT = "<script>alert(1)</script>"
FORMULA = "=cmd|' /C calc'!A0"
LONG = "x" * 100_000
# Tables that change on reads (sessions, sign-in bookkeeping) are not part of the record.
VOLATILE = ("django_session", "axes_")

# Values for the step's `process_temperature`, `reaction_mass`, `specific_heat_capacity`.
NUMBERS = [
    ("process_temperature", "NaN"), ("process_temperature", "nan"),
    ("process_temperature", "Infinity"), ("process_temperature", "-inf"),
    ("process_temperature", "1e309 K"), ("process_temperature", {"value": "1e400", "unit": "K"}),
    ("process_temperature", "-300 degC"), ("process_temperature", {"value": -1, "unit": "K"}),
    ("process_temperature", "30 kg"), ("process_temperature", "30 parsecs"),
    ("process_temperature", {"value": "30", "unit": "degC; DROP TABLE x"}),
    ("reaction_mass", "-5 kg"), ("reaction_mass", {"value": -0.001, "unit": "t"}),
    ("reaction_mass", "5 kg/m"),
    ("specific_heat_capacity", "2 J/kg"), ("specific_heat_capacity", FORMULA),
    ("reaction_mass", LONG), ("process_temperature", [30, "degC"]),
]
# Finite, positive, and absurd: no upper (or sensible lower) limit refuses them yet.
MAGNITUDES = [("process_temperature", 1e308), ("process_temperature", {"value": 5e-324,
                                                                         "unit": "K"}),
              ("reaction_mass", "1e308 kg"),
              # ... and a free-text field without a length limit takes 100 000 characters.
              ("mtt_override_reason", LONG)]
TEXTS = [("name", SCRIPT * 20), ("name", LONG),
         ("name", FORMULA + "\x00")]

CSV_HEADER = "time [min],heat_release_rate [W],dosed_mass [g],reactor_temperature [degC]\n"
GOOD_ROWS = "0,0,0,30\n10,10,100,30\n20,0,100,30\n"
CSVS = {
    "empty": b"",
    "header only": CSV_HEADER.encode(),
    # UTF-16 and Latin-1 exports are read (tests/api/test_instrument_exports.py); these are not:
    "utf-32": (CSV_HEADER + GOOD_ROWS).encode("utf-32"),
    "utf-8 and latin-1 mixed": "time [min],heat_release_rate [W],dosed_mass [g],"
                               "reactor_temperature [°C]\n0,0,0,30\n".encode()
                               + "10,10,100,30°\n".encode("latin-1"),
    "two decimal marks": (CSV_HEADER.replace(",", ";") + "0;0,5;0;30\n10;1.500;100;30\n"
                          ).encode(),
    "nan": (CSV_HEADER + "0,0,0,30\n10,NaN,100,30\n20,0,100,30\n").encode(),
    "infinity": (CSV_HEADER + "0,0,0,30\n10,inf,100,30\n20,0,100,30\n").encode(),
    "1e309": (CSV_HEADER + "0,0,0,30\n10,1e309,100,30\n20,0,100,30\n").encode(),
    "below absolute zero": (CSV_HEADER + "0,0,0,30\n10,10,100,-300\n20,0,100,30\n").encode(),
    "negative mass": (CSV_HEADER + "0,0,0,30\n10,10,-100,30\n20,0,100,30\n").encode(),
    "formula": (CSV_HEADER + f"0,0,0,30\n10,\"{FORMULA}\",100,30\n20,0,100,30\n").encode(),
    "script": (CSV_HEADER + f"0,0,0,30\n10,{SCRIPT},100,30\n").encode(),
    "wrong unit": (b"time [min],heat_release_rate [J],dosed_mass [g]\n0,0,0\n10,1,100\n"),
    "mixed units in a column": (CSV_HEADER + "0,0,0,30\n10 s,10,100,30\n").encode(),
    "zip": b"PK\x03\x04" + b"\x00" * 200,
    "nul bytes": (CSV_HEADER + "0,0,0,30\n1\x00,10,100,30\n").encode(),
    "oversized": CSV_HEADER.encode() + b"0,0,0,30\n" * 700_000,
}


def checksums() -> dict[str, tuple[int, str]]:
    """Row count and an md5 over the rows of every table."""
    out = {}
    with connection.cursor() as cursor:
        for table in connection.introspection.table_names(cursor):
            if table.startswith(VOLATILE):
                continue
            cursor.execute(f'SELECT count(*), md5(coalesce(string_agg(t::text, \'|\' '
                           f'ORDER BY t::text), \'\')) FROM "{table}" t')
            out[table] = cursor.fetchone()
    return out


@pytest.fixture
def scene(db):
    from hazards.review.services.roles import role_grant
    from tests.factories import CalorimetryRunFactory, ProcessFactory, StepFactory

    process = ProcessFactory(name="Hostile route")
    step = StepFactory(process=process, sequence=1, name="Step one")
    run = CalorimetryRunFactory(step=step, is_basis=True)
    user = make_user("hostile-author", perms=AUTHOR_PERMS)
    role_grant(process=process, user=user, role="author", granted_by=None, reason="set-up")
    api = APIClient()
    api.force_authenticate(user)
    return {"process": process, "step": step, "run": run, "user": user, "api": api}


def _refused(response):
    assert 400 <= response.status_code < 500, (response.status_code, response.content[:300])
    if response.get("Content-Type", "").startswith("application/problem+json"):
        body = response.json()
        assert body["status"] == response.status_code and body["code"]


def _send_all(scene, corpus) -> list:
    """PATCH and POST each value (a fresh ETag each time); the ones accepted."""
    api, step = scene["api"], scene["step"]
    accepted = []
    for field, value in corpus:
        etag = api.get(f"/api/v1/steps/{step.pk}/")["ETag"]
        answers = [
            api.patch(f"/api/v1/steps/{step.pk}/", {field: value}, format="json",
                      HTTP_IF_MATCH=etag),
            api.post("/api/v1/steps/", {
                "process": scene["process"].pk, "sequence": 2, "name": "New",
                "operation_mode": "batch", "process_temperature": "30 degC",
                "reaction_mass": "5 t", "specific_heat_capacity": "2 kJ/(kg K)",
                "system": "open", "operating_pressure": "1 bar", field: value}, format="json"),
        ]
        for answer in answers:
            if answer.status_code < 300:
                accepted.append((answer.request["REQUEST_METHOD"], field, str(value)[:40]))
            else:
                _refused(answer)
    return accepted


def test_numbers_units_and_texts_sent_to_the_api_are_refused_and_change_nothing(scene):
    api, step = scene["api"], scene["step"]
    before = checksums()
    assert _send_all(scene, NUMBERS + TEXTS) == []
    # Bodies that are not JSON numbers at all.
    etag = api.get(f"/api/v1/steps/{step.pk}/")["ETag"]
    for raw in ['{"process_temperature": NaN}', '{"process_temperature": Infinity}',
                "[" * 10_000 + "]" * 10_000, '{"a": ' * 10_000 + "1" + "}" * 10_000,
                "\xff\xfe not json", '{"name": "' + "y" * (6 * 1024 * 1024) + '"}']:
        _refused(api.generic("PATCH", f"/api/v1/steps/{step.pk}/", raw.encode("utf-8",
                             "surrogateescape"), content_type="application/json",
                             HTTP_IF_MATCH=etag))
    assert checksums() == before


def test_absurd_finite_magnitudes_are_refused(scene):
    # hazards.quantities refuses values outside a plausible range of a plant record, and
    # free-text fields have length limits (model validators).
    before = checksums()
    assert _send_all(scene, MAGNITUDES) == []
    assert checksums() == before


@pytest.mark.parametrize("case", list(CSVS))
def test_bad_calorimeter_files_are_refused_as_a_whole(scene, case):
    api, run = scene["api"], scene["run"]
    before = checksums()
    response = api.post(f"/api/v1/calorimetry-runs/{run.pk}/series/", {
        "file": _file(CSVS[case]), "initial_mass": "400 g", "feed_mass": "100 g"},
        format="multipart")
    _refused(response)
    assert checksums() == before


@pytest.mark.parametrize(("initial", "feed"), [("-400 g", "100 g"), ("400 g", "NaN g"),
                                               ("400 K", "100 g"), ("1e309 g", "100 g")])
def test_bad_masses_beside_a_good_file_are_refused(scene, initial, feed):
    before = checksums()
    _refused(scene["api"].post(f"/api/v1/calorimetry-runs/{scene['run'].pk}/series/", {
        "file": _file((CSV_HEADER + GOOD_ROWS).encode()), "initial_mass": initial,
        "feed_mass": feed}, format="multipart"))
    assert checksums() == before


def _file(data: bytes):
    from django.core.files.uploadedfile import SimpleUploadedFile

    return SimpleUploadedFile("run.csv", data, content_type="text/csv")


def _form_fields(page: str) -> dict:
    fields = {}
    for tag in re.findall(r"<(?:input|select|textarea)[^>]*>", page):
        name = re.search(r'name="([^"]+)"', tag)
        if not name or 'type="submit"' in tag:
            continue
        value = re.search(r'value="([^"]*)"', tag)
        fields[name.group(1)] = html.unescape(value.group(1)) if value else ""
    for name, value in re.findall(r'<select[^>]*name="([^"]+)".*?<option[^>]*value="([^"]*)"'
                                  r'[^>]*selected', page, flags=re.S):
        fields[name] = value
    return fields


def test_hostile_values_in_the_step_form_are_refused_and_change_nothing(scene, client):
    client.force_login(scene["user"])
    url = f"/steps/{scene['step'].pk}/edit/"
    page = client.get(url)
    assert page.status_code == 200
    fields = _form_fields(page.content.decode())
    assert "process_temperature_k" in fields, sorted(fields)
    before = checksums()
    for field, value in [("process_temperature_k", "NaN"), ("process_temperature_k", "inf"),
                         ("process_temperature_k", "-300 degC"),
                         ("process_temperature_k", "1e309"), ("reaction_mass_kg", "-5 kg"),
                         ("reaction_mass_kg", "5e-324 parsec"), ("name", LONG),
                         ("specific_heat_capacity_j_per_kg_k", FORMULA)]:
        response = client.post(url, {**fields, field: value})
        assert response.status_code in (200, 400, 409, 422), response.status_code
        assert response.status_code != 302
        assert SCRIPT not in response.content.decode()
    assert checksums() == before


@pytest.mark.django_db(transaction=True)
def test_script_in_a_process_name_is_escaped_on_pages_and_literal_in_the_pdf(client):
    from hazards.dossier.services import dossier_render, dossier_request
    from tests.dossier.conftest import build_process
    from tests.dossier.helpers import page_texts

    process = build_process(steps=1, name=f"Route {SCRIPT} & co")
    admin = make_user("hostile-admin", superuser=True)
    client.force_login(admin)
    for url in ["/processes/", f"/processes/{process.pk}/", "/steps/",
                f"/steps/{process.steps.first().pk}/"]:
        text = client.get(url).content.decode()
        assert SCRIPT not in text, url
        assert html.escape(SCRIPT, quote=False) in text or "&lt;script&gt;" in text, url
    api = APIClient()
    api.force_authenticate(admin)
    assert api.get(f"/api/v1/processes/{process.pk}/").json()["name"] == \
        f"Route {SCRIPT} & co"  # stored as typed; JSON is not HTML
    dossier, _ = dossier_request(process=process, enqueue=False)
    dossier = dossier_render(dossier_id=dossier.pk, sandbox=False)
    assert dossier.status == "done", dossier.error
    text = " ".join(page_texts(bytes(dossier.pdf)))
    assert f"Route {SCRIPT} & co" in text  # shown literally, not interpreted
    assert "&lt;" not in text and "&amp;" not in text  # nor escaped twice
    assert json.loads(json.dumps(dossier.content))["record"]
