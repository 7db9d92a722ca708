"""Helpers of the hardening tests: subprocesses, gunicorn on loopback, a private PostgreSQL,
and a small world of committed records (these tests run with transaction=True so that a
gunicorn subprocess sees the data)."""

from __future__ import annotations

import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

from tests.bench.load_test import (
    ROOT,
    Gunicorn,
    clone_database,
    database_url,
    pg_bin,
    subprocess_env,
)
from tests.conftest import PASSWORD, make_user

__all__ = ["ROOT", "Gunicorn", "PASSWORD", "clone_database", "database_url", "manage",
           "subprocess_env", "test_database_url"]

AUTHOR_PERMS = ("add_reactionstep", "change_reactionstep", "delete_reactionstep",
                "add_calorimetryrun", "change_calorimetryrun", "add_calorimetryseries",
                "add_decompositiontest", "change_decompositiontest", "add_process",
                "change_process")


def test_database_url() -> str:
    """DATABASE_URL of pytest-django's test database (embedded socket or TCP server)."""
    from django.conf import settings

    return database_url(settings.DATABASES["default"])


test_database_url.__test__ = False  # a helper, not a test


def manage(*args, env: dict | None = None, timeout: float = 120) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "manage.py", *args], cwd=ROOT, capture_output=True,
                          text=True, timeout=timeout, env=subprocess_env(**(env or {})))


@pytest.fixture
def serve(tmp_path):
    """Start gunicorn on a free loopback port against a database URL; stopped afterwards."""
    started: list[Gunicorn] = []

    def start(url: str | None = None, *, workers: int = 2, timeout: int = 30, **env) -> Gunicorn:
        server = Gunicorn(url or test_database_url(), workers=workers, timeout=timeout,
                          log_dir=str(tmp_path), extra_env=env)
        started.append(server)
        server.wait_ready(workers=workers)
        return server

    yield start
    for server in started:
        server.stop()


class PrivatePostgres:
    """A PostgreSQL server of this test alone (pgserver's binaries, a temporary data folder),
    so that it can be stopped and restarted without touching the shared servers."""

    def __init__(self):
        import pgserver

        self.dir = Path(tempfile.mkdtemp(prefix="exo-pg-", dir="/tmp"))
        self.server = pgserver.get_server(str(self.dir), cleanup_mode=None)
        self.user = self.server.system_user
        info = self.server.get_postmaster_info()
        self.socket_dir = str(info.socket_dir)

    def url(self, name: str) -> str:
        return database_url({"USER": "postgres", "HOST": self.socket_dir, "NAME": name})

    def psql(self, sql: str, db: str = "postgres") -> str:
        out = subprocess.run([pg_bin("psql"), "-X", "-A", "-t", "-v", "ON_ERROR_STOP=1",
                              "-d", self.url(db), "-c", sql], capture_output=True, text=True,
                             timeout=60)
        if out.returncode:
            raise RuntimeError(out.stderr)
        return out.stdout.strip()

    def pg_ctl(self, *args: str) -> None:
        from pgserver._commands import pg_ctl

        pg_ctl(["-w", *args], pgdata=self.dir, user=self.user, timeout=30)

    def stop(self) -> None:
        self.pg_ctl("-m", "fast", "stop")

    def start(self) -> None:
        self.pg_ctl("-o", '-h ""', "-o", f"-k {self.socket_dir}", "-l",
                    str(self.dir / "restart.log"), "start")

    def clone(self, name: str, source_url: str) -> str:
        self.psql(f'CREATE DATABASE "{name}"')
        clone_database(source_url, self.url(name))
        return self.url(name)

    def destroy(self) -> None:
        try:
            self.stop()
        except Exception:  # noqa: BLE001 - already stopped
            pass
        shutil.rmtree(self.dir, ignore_errors=True)


@pytest.fixture
def private_pg():
    server = PrivatePostgres()
    yield server
    server.destroy()


def wait_for(predicate, timeout: float = 20.0, interval: float = 0.1, what: str = "condition"):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        value = predicate()
        if value:
            return value
        time.sleep(interval)
    raise AssertionError(f"timed out after {timeout} s waiting for {what}")


@pytest.fixture
def world(transactional_db):
    """Two processes, each with its own author (role, model permissions, an API token)."""
    from hazards.api.auth import issue_token
    from hazards.review.services.roles import role_grant
    from tests.factories import (
        CalorimetryRunFactory,
        DecompositionTestFactory,
        ProcessFactory,
        SiteFactory,
        StepFactory,
    )

    site = SiteFactory(code="varnholt", name="Varnholt works")
    out = {}
    for key in ("mine", "theirs"):
        process = ProcessFactory(name=f"Nitration route ({key})", site=site,
                                 description="Invented route of Quillmere Speciality Chemicals.")
        step = StepFactory(process=process, sequence=1, name=f"Nitration ({key})")
        run = CalorimetryRunFactory(step=step, is_basis=True)
        test = DecompositionTestFactory(step=step, is_basis=True)
        user = make_user(f"author-{key}", perms=AUTHOR_PERMS)
        role_grant(process=process, user=user, role="author", granted_by=None,
                   reason="hardening test set-up")
        out[key] = {"process": process, "step": step, "run": run, "test": test, "user": user,
                    "token": issue_token(user=user)}
    out["password"] = PASSWORD
    return out


def auth(token: str) -> dict:
    return {"Authorization": f"Token {token}"}


