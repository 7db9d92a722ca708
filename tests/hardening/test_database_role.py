"""The application's database role cannot rewrite history (issue 18 item 4).

The test database is created and migrated by the owner (as `manage.py migrate` is); these
tests then connect as the application's role, the one `settings.DATABASES["default"]` uses
outside the test runner, and try what an attacker with the application's connection would:
UPDATE, DELETE and TRUNCATE of events and chain links, `session_replication_role = replica`
(no triggers fire), disabling the triggers, replacing the chain function, taking another
role. PostgreSQL documents each refusal: `session_replication_role` may be set by superusers
only (docs, runtime config "Client Connection Defaults"), ALTER TABLE … DISABLE TRIGGER and
CREATE OR REPLACE FUNCTION need the owner (docs, ALTER TABLE / CREATE FUNCTION).
"""

from __future__ import annotations

import psycopg
import pytest
from django.core.checks import Warning as CheckWarning
from django.db import connection, connections

from hazards import dbroles
from hazards.checks import application_role_cannot_rewrite_history
from hazards.db import app_role, databases
from hazards.review import audit
from tests.factories import SiteFactory

pytestmark = pytest.mark.django_db(transaction=True)


def app_conninfo() -> dict:
    """The test database's connection parameters, with the application's role."""
    role, password = app_role()
    params = {**connection.get_connection_params(), "user": role}
    params.pop("password", None)
    params.pop("cursor_factory", None)
    params.pop("context", None)
    params.pop("prepare_threshold", None)
    if password:
        params["password"] = password
    return params


def refused(cursor, statement: str, params=None) -> str:
    """Run a statement that must fail for lack of privilege; returns PostgreSQL's message."""
    try:
        cursor.execute(statement, params)
    except psycopg.errors.InsufficientPrivilege as exc:
        return str(exc)
    raise AssertionError(f"the application's role was allowed: {statement}")


@pytest.fixture
def app_db():
    with psycopg.connect(**app_conninfo(), autocommit=True) as conn:
        yield conn


def test_the_runtime_settings_connect_the_application_as_its_own_role(monkeypatch):
    monkeypatch.delenv("EXOLEDGER_DB_APP_ROLE", raising=False)
    config = databases(testing=False)
    owner = config["owner"]["USER"]
    assert config["default"]["USER"] == "exoledger_app" != owner
    assert config["default"]["NAME"] == config["owner"]["NAME"]


def test_the_application_cannot_rewrite_an_event_even_with_the_usual_tricks(app_db):
    site = SiteFactory(code="varnholt", name="Varnholt works")
    event_table = site.events.model._meta.db_table
    with connection.cursor() as cursor:
        cursor.execute(f'SELECT max(pgh_id) FROM "{event_table}"')
        pgh_id = cursor.fetchone()[0]
    assert pgh_id is not None and audit.verify_all() == []

    with app_db.cursor() as cursor:
        cursor.execute("SELECT rolsuper FROM pg_roles WHERE rolname = current_user")
        assert cursor.fetchone() == (False,)
        # It can read the trail (the pages and `verify` do).
        cursor.execute(f'SELECT name FROM "{event_table}" WHERE pgh_id = %s', [pgh_id])
        assert cursor.fetchone() == ("Varnholt works",)
        forged = f"UPDATE \"{event_table}\" SET name = 'forged' WHERE pgh_id = {pgh_id}"
        assert "permission denied" in refused(cursor, forged)
        assert "permission denied" in refused(cursor, f'DELETE FROM "{event_table}"')
        assert "permission denied" in refused(cursor, f'TRUNCATE "{event_table}"')
        assert "permission denied" in refused(cursor, "UPDATE review_chainlink SET hash = 'x'")
        assert "permission denied" in refused(cursor, "DELETE FROM review_chainlink")
        assert "permission denied" in refused(cursor, "TRUNCATE review_chainlink")
        # The replication-role trick (no triggers fire) and disabling the triggers.
        assert "session_replication_role" in refused(
            cursor, "SET session_replication_role = replica"
        )
        assert "must be owner" in refused(
            cursor, f'ALTER TABLE "{event_table}" DISABLE TRIGGER ALL'
        )
        assert "must be owner" in refused(
            cursor, f"ALTER TABLE review_chainlink DISABLE TRIGGER {'chain_append_only'}"
        )
        assert "must be owner" in refused(
            cursor,
            f'DROP TRIGGER {audit.TRIGGER_NAME} ON "{event_table}"',
        )
        # Refused for lack of CREATE on the schema (PostgreSQL 15+) or for not owning it.
        message = refused(
            cursor,
            "CREATE OR REPLACE FUNCTION review_chain_append() RETURNS trigger "
            "LANGUAGE plpgsql AS $$ BEGIN RETURN NULL; END $$",
        )
        assert "must be owner" in message or "permission denied for schema" in message
        cursor.execute("SELECT rolname FROM pg_roles WHERE rolsuper LIMIT 1")
        superuser = cursor.fetchone()[0]
        assert "permission denied" in refused(cursor, f'SET ROLE "{superuser}"')
        # Nor may it write the migration history (the owner's).
        assert "permission denied" in refused(cursor, "DELETE FROM django_migrations")

    with connection.cursor() as cursor:
        cursor.execute(f'SELECT name FROM "{event_table}" WHERE pgh_id = %s', [pgh_id])
        assert cursor.fetchone() == ("Varnholt works",)
    assert audit.verify_all() == []


def test_the_application_works_as_its_role_and_its_changes_reach_the_chain(admin_user):
    """The API, run on a connection of the application's role, writes records, events and
    chain links as usual (the role has what the application needs)."""
    from rest_framework.test import APIClient

    default = connections["default"]
    saved = dict(default.settings_dict)
    role, password = app_role()
    default.close()
    default.settings_dict.update({"USER": role, "PASSWORD": password})
    try:
        with default.cursor() as cursor:
            cursor.execute("SELECT current_user")
            assert cursor.fetchone() == (role,)
        client = APIClient()
        client.force_authenticate(admin_user)
        created = client.post(
            "/api/v1/sites/", {"code": "ost", "name": "East works"}, format="json"
        )
        assert created.status_code == 201, created.content
        etag = client.get(f"/api/v1/sites/{created.json()['id']}/")["ETag"]
        changed = client.patch(
            f"/api/v1/sites/{created.json()['id']}/",
            {"name": "East works 2"},
            format="json",
            HTTP_IF_MATCH=etag,
        )
        assert changed.status_code == 200, changed.content
        assert audit.verify_all() == []
    finally:
        default.close()
        default.settings_dict.clear()
        default.settings_dict.update(saved)


def test_check_deploy_warns_when_the_application_connects_as_a_superuser():
    # Under the test runner the default connection is the owner (a superuser here, as in CI).
    with connection.cursor() as cursor:
        cursor.execute("SELECT rolsuper FROM pg_roles WHERE rolname = current_user")
        is_superuser = cursor.fetchone()[0]
    messages = application_role_cannot_rewrite_history()
    if is_superuser:
        assert [m.id for m in messages] == ["exoledger.W002"]
        assert isinstance(messages[0], CheckWarning) and "superuser" in messages[0].msg
    else:
        assert messages and all(m.id == "exoledger.W002" for m in messages)
    assert dbroles.role_problems("default")
