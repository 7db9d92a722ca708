"""Where the database is: `DATABASE_URL`, or an embedded PostgreSQL started on demand.

Only PostgreSQL is supported, so that triggers, constraints, locks and JSONB behave the
same in the demo, the test suite and production.
"""

from __future__ import annotations

import os
import warnings
from pathlib import Path

import dj_database_url
from django.core.exceptions import ImproperlyConfigured

BASE_DIR = Path(__file__).resolve().parent.parent
EMBEDDED_DB_NAME = "exoledger"
# The role the application connects as: no superuser, owns nothing, and may not update,
# delete or truncate audit events or chain links (hazards.dbroles grants it after migrate).
DEFAULT_APP_ROLE = "exoledger_app"


def data_dir() -> Path:
    """The folder of the embedded server's data (`EXOLEDGER_DATA_DIR`, default `var/`)."""
    raw = os.environ.get("EXOLEDGER_DATA_DIR")
    return Path(raw).expanduser().resolve() if raw else BASE_DIR / "var"


FOREIGN_SERVER = (
    "The embedded database folder {folder} holds the postmaster.pid of a PostgreSQL server "
    "that is running from {other}: this folder was copied from another working tree, and "
    "using it would share that tree's database. Set EXOLEDGER_DATA_DIR to a folder of this "
    "tree's own (or delete {folder} to start afresh under var/), or stop the other server."
)


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # someone else's process: alive
        return True
    return True


def refuse_foreign_server(folder: Path) -> None:
    """Refuse a data folder whose postmaster.pid names a live server running from another
    folder. pgserver joins whatever server a postmaster.pid names, so a copied tree (its
    var/ included) would silently use the original tree's server and data; PostgreSQL writes
    the server's data directory on the pid file's second line."""
    try:
        lines = (folder / "postmaster.pid").read_text().splitlines()
        pid, other = int(lines[0]), Path(lines[1])
    except (OSError, ValueError, IndexError):
        return  # no server, or none pgserver would join
    if pid > 0 and _alive(pid) and other.resolve() != folder.resolve():
        raise ImproperlyConfigured(FOREIGN_SERVER.format(folder=folder, other=other))


def _embedded_url() -> str:
    """Start (or join) the embedded server and return a URL to the project's database."""
    try:
        with warnings.catch_warnings():
            # platformdirs warns when XDG_RUNTIME_DIR is unset (headless servers, CI).
            warnings.simplefilter("ignore")
            import pgserver  # noqa: PLC0415 — only without DATABASE_URL; ImportError explained
    except ImportError as exc:  # pragma: no cover - pgserver is a declared dependency
        raise ImproperlyConfigured(
            "DATABASE_URL is not set and the embedded PostgreSQL (pgserver) is not installed."
        ) from exc
    folder = data_dir() / "pgdata"
    refuse_foreign_server(folder)
    folder.parent.mkdir(parents=True, exist_ok=True)
    # cleanup_mode=None: the server outlives this process, so manage.py, gunicorn, the
    # worker and the tests share one server instead of each starting their own.
    server = pgserver.get_server(str(folder), cleanup_mode=None)
    exists = server.psql(
        f"SELECT 1 FROM pg_database WHERE datname = '{EMBEDDED_DB_NAME}';"
    )
    if "(1 row)" not in exists:
        server.psql(f"CREATE DATABASE {EMBEDDED_DB_NAME};")
    return server.get_uri(EMBEDDED_DB_NAME)


def database_settings() -> dict:
    """Django's DATABASES['default'] for this environment."""
    url = os.environ.get("DATABASE_URL") or _embedded_url()
    config = dj_database_url.parse(url, conn_max_age=int(os.environ.get("EXOLEDGER_CONN_MAX_AGE", "0")))
    if config["ENGINE"] not in ("django.db.backends.postgresql",):
        raise ImproperlyConfigured(
            f"DATABASE_URL={url!r}: only PostgreSQL is supported (postgres:// or postgresql://)."
        )
    if config.get("HOST", "").startswith("/") and not config.get("PORT"):
        config["PORT"] = ""
    config.setdefault("OPTIONS", {})
    config["OPTIONS"].setdefault("connect_timeout", 5)
    # One test database per test run, so that runs in parallel (several developers on one
    # embedded server) never clobber each other's database.
    config["TEST"] = {
        "NAME": os.environ.get("EXOLEDGER_TEST_DB_NAME") or f"test_{config['NAME']}_{os.getpid()}"
    }
    return config


def app_role() -> tuple[str, str]:
    """(name, password) of the application's role: `EXOLEDGER_DB_APP_ROLE` and
    `EXOLEDGER_DB_APP_PASSWORD` (empty: none, e.g. the embedded server's local trust)."""
    return (os.environ.get("EXOLEDGER_DB_APP_ROLE") or DEFAULT_APP_ROLE,
            os.environ.get("EXOLEDGER_DB_APP_PASSWORD") or "")


def databases(*, testing: bool) -> dict:
    """Django's DATABASES: `default` is the application's restricted role and `owner` the
    role of DATABASE_URL that owns the tables and runs `migrate` (hazards' migrate command
    uses it). When both are one role (EXOLEDGER_DB_APP_ROLE names the owner), or under the
    test runner (which creates its database as the owner; tests that need the restricted
    role open it themselves), there is only `default`."""
    owner = database_settings()
    role, password = app_role()
    if testing or role == owner.get("USER"):
        return {"default": owner}
    app = {**owner, "USER": role, "PASSWORD": password, "OPTIONS": dict(owner["OPTIONS"])}
    return {"default": app, "owner": owner}


def owner_alias() -> str:
    """The alias that owns the schema: `owner` when the application has its own role
    (`migrate` itself points `default` at the owner while it runs)."""
    # settings.py imports this module: django.db must not load while settings are read.
    from django.db import connections  # noqa: PLC0415 — settings import this module

    return "owner" if "owner" in connections.settings else "default"


def describe(config: dict) -> str:
    host = config.get("HOST") or "localhost"
    port = config.get("PORT") or ""
    where = f"{host}:{port}" if port else host
    return f"{config.get('NAME')} on {where}"
