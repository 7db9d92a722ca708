"""A client generated from the served schema, by a maintained generator, works end to end.

openapi-python-client (PyPI; run offline in a temporary folder) generates a Python package
from `/api/v1/schema/` as served. The test imports every module of it, then uses it as its
README would suggest, over HTTP in process (httpx's WSGI transport): a token, lists and
reads, a record created with an Idempotency-Key (and replayed), edited with If-Match (and
refused when stale), revisions with their transitions, a history page and problem details.
Source of the expectations: this API's README and schema; the generator's own conventions
(`sync_detailed`, `AuthenticatedClient(prefix=...)`, `from_dict`).
"""

from __future__ import annotations

import importlib
import json
import pkgutil
import subprocess
import sys
from pathlib import Path

import httpx
import pytest
from django.core.signals import request_finished, request_started
from django.db import close_old_connections
from rest_framework.test import APIClient

from hazards.wsgi import application
from tests.conftest import PASSWORD, make_user
from tests.review.factories import assessed_process, revision_in

GENERATOR = Path(sys.executable).with_name("openapi-python-client")
PACKAGE = "exoledger_generated_client"
CONFIG = {
    "post_hooks": [],  # no formatter run: nothing but the generator itself
    "project_name_override": PACKAGE,
    "package_name_override": PACKAGE,
    # The generator parses only JSON, text and octet-stream responses; the PDF is bytes.
    "content_type_overrides": {"application/pdf": "application/octet-stream"},
}


@pytest.fixture(scope="module")
def generated(tmp_path_factory, django_db_setup, django_db_blocker):
    """The package generated from the schema as the server serves it (once per module)."""
    with django_db_blocker.unblock():
        served = APIClient().get("/api/v1/schema/?format=json")
    assert served.status_code == 200, served.content[:300]
    folder = tmp_path_factory.mktemp("generated")
    (folder / "schema.json").write_bytes(served.content)
    (folder / "config.json").write_text(json.dumps(CONFIG))
    run = subprocess.run(
        [
            str(GENERATOR),
            "generate",
            "--path",
            "schema.json",
            "--config",
            "config.json",
            "--meta",
            "none",
            "--output-path",
            PACKAGE,
        ],
        cwd=folder,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert run.returncode == 0, run.stdout + run.stderr
    # Any warning means a piece of the API was left out of the client.
    assert "Warning" not in run.stdout + run.stderr, run.stdout + run.stderr
    sys.path.insert(0, str(folder))
    try:
        yield importlib.import_module(PACKAGE)
    finally:
        sys.path.remove(str(folder))
        for name in [n for n in sys.modules if n.split(".")[0] == PACKAGE]:
            del sys.modules[name]


def test_every_generated_module_imports(generated):
    failed = []
    for module in pkgutil.walk_packages(generated.__path__, f"{PACKAGE}."):
        try:
            importlib.import_module(module.name)
        except Exception as exc:  # noqa: BLE001 - each failure is reported by name
            failed.append(f"{module.name}: {type(exc).__name__}: {exc}")
    assert not failed, "\n".join(failed)
    sends = {}
    for path in (Path(generated.__file__).parent / "api").rglob("*.py"):
        for line in path.read_text().splitlines():
            if line.strip().startswith('headers["Content-Type"]'):
                sends.setdefault(line.split('"')[3].split(";")[0], set()).add(path.stem)
    # JSON everywhere; multipart only for the three file uploads.
    assert set(sends) == {"application/json", "multipart/form-data"}, sends
    assert sends["multipart/form-data"] == {
        "calorimetry_runs_series_create",
        "decomposition_tests_curves_create",
        "dossiers_verify_create",
    }
    assert len(sends["application/json"]) > 30


@pytest.fixture
def keep_the_test_connection():
    # As Django's test client does: the in-process requests share the test's transaction.
    request_started.disconnect(close_old_connections)
    request_finished.disconnect(close_old_connections)
    yield
    request_started.connect(close_old_connections)
    request_finished.connect(close_old_connections)


def _module(generated, dotted: str):
    return importlib.import_module(f"{PACKAGE}.{dotted}")


def test_the_generated_client_works_end_to_end(generated, keep_the_test_connection, admin_user):
    api = lambda name: _module(generated, f"api.{name}")  # noqa: E731
    models = _module(generated, "models")
    transport = {"transport": httpx.WSGITransport(app=application)}
    author, reviewer = make_user("author"), make_user("reviewer")
    process = assessed_process(author=author, reviewer=reviewer, auditor=admin_user)
    revision_in(process, "lodged", author=author)

    anon = generated.Client(base_url="http://testserver", httpx_args=transport)
    got = api("auth.auth_token_create").sync_detailed(
        client=anon, body=models.CredentialsRequest(username="admin", password=PASSWORD)
    )
    assert got.status_code == 200, got.content
    client = generated.AuthenticatedClient(
        base_url="http://testserver", token=got.parsed.token, prefix="Token", httpx_args=transport
    )

    # Lists and reads.
    steps = api("steps.steps_list").sync(client=client, limit=10)
    assert steps.count == 1 and steps.results[0].process == process.pk
    step = steps.results[0]
    assert step.process_temperature.unit == "degC"  # quantities in their canonical unit
    read = api("steps.steps_retrieve").sync_detailed(str(step.id), client=client)
    assert read.status_code == 200 and read.headers["ETag"]

    # Create with an Idempotency-Key, replay it, edit with If-Match, refuse a stale one.
    body = models.SiteRequest.from_dict({"code": "gen", "name": "Generated works"})
    made = api("sites.sites_create").sync_detailed(
        client=client, body=body, idempotency_key="gen-1"
    )
    assert made.status_code == 201 and made.parsed.code == "gen", made.content
    again = api("sites.sites_create").sync_detailed(
        client=client, body=body, idempotency_key="gen-1"
    )
    assert again.status_code == 201 and again.headers["Idempotent-Replayed"] == "true"
    assert again.parsed.id == made.parsed.id
    patch = api("sites.sites_partial_update")
    renamed = patch.sync_detailed(
        str(made.parsed.id),
        client=client,
        body=models.PatchedSiteRequest(name="Renamed works"),
        if_match=made.headers["ETag"],
    )
    assert renamed.status_code == 200 and renamed.parsed.name == "Renamed works"
    stale = patch.sync_detailed(
        str(made.parsed.id),
        client=client,
        body=models.PatchedSiteRequest(name="Lost"),
        if_match=made.headers["ETag"],
    )
    assert stale.status_code == 412 and isinstance(stale.parsed, models.Problem)
    assert stale.parsed.code.value == "precondition_failed"
    assert stale.parsed.current_etag == renamed.headers["ETag"]

    # A step created in another unit than the canonical one.
    new_step = api("steps.steps_create").sync_detailed(
        client=client,
        body=(
            models.StepRequest.from_dict(
                {
                    "process": process.pk,
                    "sequence": 2,
                    "name": "Generated step",
                    "operation_mode": "batch",
                    "process_temperature": "86 degF",
                    "reaction_mass": {"value": 1, "unit": "t"},
                    "specific_heat_capacity": "2 kJ/(kg*K)",
                    "system": "open",
                    "operating_pressure": "1 bar",
                    "reason": "generated client",
                }
            )
        ),
        idempotency_key="gen-2",
    )
    assert new_step.status_code == 201, new_step.content
    assert new_step.parsed.process_temperature.value == pytest.approx(30.0)
    assert new_step.parsed.reaction_mass.value == pytest.approx(1000.0)

    # Revisions, their transitions (the opening one has no earlier state) and a history page.
    revisions = api("revisions.revisions_list").sync(client=client, process=process.pk)
    revision = api("revisions.revisions_retrieve").sync(revisions.results[0].id, client=client)
    first = revision.transitions[0]
    assert first.from_state is None and first.to_state.value == "drafting"
    assert revision.signatures[0].meaning.value == "authored"
    history = api("processes.processes_history_retrieve").sync(process.pk, client=client, limit=5)
    assert len(history.results) == 5 and history.next_  # newest first; `next` is older
    assert {row.action.value for row in history.results} <= {"insert", "update", "delete"}

    # Problem details, parsed as the schema declares them.
    missing = api("steps.steps_retrieve").sync_detailed("999999", client=client)
    assert missing.status_code == 404 and missing.parsed.code.value == "not_found"
    refused = api("sites.sites_create").sync_detailed(
        client=client, body=models.SiteRequest.from_dict({"code": "", "name": "x"})
    )
    assert refused.status_code == 400
    assert refused.parsed.errors[0].field == "code" and refused.parsed.errors[0].rule
