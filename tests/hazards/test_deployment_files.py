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
    services = _compose()["services"]
    command = services["web"]["command"]
    assert "manage.py migrate" in services["migrate"]["command"]
    assert services["web"]["depends_on"]["migrate"]["condition"] == \
        "service_completed_successfully"
    assert "gunicorn hazards.wsgi:application" in command
    assert (ROOT / "hazards" / "wsgi.py").exists()


def test_only_the_migration_knows_the_owner_the_application_connects_as_its_role():
    """Issue 18 item 4: migrations as the owner, the application as a restricted role."""
    services = _compose()["services"]
    migrate_env = services["migrate"]["environment"]
    assert migrate_env["DATABASE_URL"].startswith("postgres://exoledger:")
    assert migrate_env["EXOLEDGER_DB_APP_ROLE"] == "exoledger_app"
    assert "EXOLEDGER_DB_APP_PASSWORD" in migrate_env
    for name in ("web", "worker"):
        env = services[name]["environment"]
        assert env["DATABASE_URL"].startswith("postgres://exoledger_app:"), name
        assert env["EXOLEDGER_DB_APP_ROLE"] == "exoledger_app", name
        assert "POSTGRES_PASSWORD" not in str(env), name


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


def test_a_worker_service_renders_dossiers_with_the_web_services_environment():
    services = _compose()["services"]
    worker = services["worker"]
    assert "manage.py db_worker" in worker["command"]
    assert worker["environment"] == services["web"]["environment"]
    assert worker["depends_on"]["db"]["condition"] == "service_healthy"
    assert worker["image"] == services["web"]["image"]


def test_the_settings_configure_the_database_task_backend_the_worker_reads():
    from django.conf import settings

    assert settings.TASKS["default"]["BACKEND"] == "django_tasks_db.DatabaseBackend"
    assert {"django_tasks", "django_tasks_db", "hazards.dossier"} <= set(settings.INSTALLED_APPS)


def test_serve_runs_gunicorn_and_a_worker_and_stops_the_worker_when_gunicorn_exits(tmp_path):
    import subprocess
    import sys
    import time

    from hazards.management.commands.serve import supervise, worker_argv

    assert worker_argv()[2:4] == ["db_worker", "--queue-name"]
    marker = tmp_path / "worker-pid"
    fake_worker = [sys.executable, "-c",
                   f"import os, time; open({str(marker)!r}, 'w').write(str(os.getpid())); "
                   "time.sleep(60)"]
    fake_web = [sys.executable, "-c", "import time; time.sleep(1.5); raise SystemExit(3)"]
    started = time.monotonic()
    assert supervise(fake_web, fake_worker, grace=5) == 3
    assert time.monotonic() - started < 10
    pid = int(marker.read_text())
    # The worker was terminated and reaped: no such process any more.
    assert subprocess.run(["kill", "-0", str(pid)], capture_output=True).returncode != 0


def test_stopping_the_server_stops_the_embedded_database_and_never_a_named_one(monkeypatch):
    """Issue 21 (set-up): when `serve` ends, the embedded PostgreSQL it used is stopped too;
    `--keep-database` leaves it, and a server named by DATABASE_URL is never touched.
    A real embedded server is started in a scratch folder and must be gone afterwards."""
    import os
    import shutil
    import tempfile
    from pathlib import Path
    from unittest import mock

    import pgserver
    import psutil

    from hazards.management.commands import serve

    scratch = Path(tempfile.mkdtemp(prefix="exoledger-stop-"))
    scratch.chmod(0o755)  # pgserver runs the server as its own user when started by root
    try:
        folder = scratch / "pgdata"
        server = pgserver.get_server(str(folder), cleanup_mode=None)
        pid = server.get_pid()
        assert pid is not None and psutil.pid_exists(pid)
        monkeypatch.setenv("DATABASE_URL", "postgres://postgres@127.0.0.1:5432/x")
        assert serve.stop_embedded_database() is False  # a named server: nothing to stop
        assert psutil.pid_exists(pid)
        assert serve.stop_embedded_database(folder) is True
        assert not (folder / "postmaster.pid").exists()
        assert not psutil.pid_exists(pid) or psutil.Process(pid).status() == "zombie"
        assert serve.stop_embedded_database(folder) is False  # already stopped
    finally:
        pgserver.PostgresServer._instances.pop(folder.resolve(), None)
        shutil.rmtree(scratch, ignore_errors=True)

    calls = []
    with (
        mock.patch.object(serve, "call_command"),
        mock.patch.object(serve, "supervise", return_value=0),
        mock.patch("hazards.oversight.tasks.schedule_next"),
        mock.patch.object(serve, "stop_embedded_database", side_effect=lambda: calls.append(1)),
    ):
        for keep in (False, True):
            try:
                serve.Command().handle(bind="127.0.0.1:1", workers=1, demo=False,
                                       no_serve=False, keep_database=keep)
            except SystemExit as done:
                assert done.code == 0
    assert calls == [1]  # once: not with --keep-database
    assert os.environ.get("DATABASE_URL")  # monkeypatch restores it afterwards
