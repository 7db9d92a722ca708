"""docker-compose.yml agrees with the settings (Docker does not run here, so it is parsed)."""

from __future__ import annotations

from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parents[2]


def _compose():
    return yaml.safe_load((ROOT / "docker-compose.yml").read_text())


def test_compose_has_a_database_and_a_web_service_with_health_checks():
    services = _compose()["services"]
    assert {"db", "web"} <= set(services)
    for name in ("db", "web"):
        assert "healthcheck" in services[name], name
    assert services["db"]["image"].startswith("postgres:")
    assert "pgdata:/var/lib/postgresql/data" in services["db"]["volumes"]


def test_the_web_service_runs_gunicorn_on_the_wsgi_application_after_migrating():
    command = _compose()["services"]["web"]["command"]
    assert "manage.py migrate" in command
    assert "gunicorn hazards.wsgi:application" in command
    assert (ROOT / "hazards" / "wsgi.py").exists()


def test_the_web_service_sets_every_variable_production_settings_require():
    env = _compose()["services"]["web"]["environment"]
    assert env["EXOLEDGER_ENV"] == "production"
    for name in ("EXOLEDGER_SECRET_KEY", "EXOLEDGER_ALLOWED_HOSTS", "EXOLEDGER_SEAL_KEY",
                 "DATABASE_URL"):
        assert name in env, name
    assert env["DATABASE_URL"].startswith("postgres://")
    assert "@db:5432/" in env["DATABASE_URL"]
    settings_text = (ROOT / "hazards" / "settings.py").read_text()
    for name in ("EXOLEDGER_SECRET_KEY", "EXOLEDGER_ALLOWED_HOSTS", "EXOLEDGER_SEAL_KEY"):
        assert name in settings_text, name


def test_every_service_that_uses_the_database_waits_for_it_to_be_healthy():
    for name, service in _compose()["services"].items():
        if name == "db":
            continue
        assert service["depends_on"]["db"]["condition"] == "service_healthy", name
