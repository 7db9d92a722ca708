"""Settings come from the environment; mistakes surface as clear errors."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from django.core.exceptions import ImproperlyConfigured

from hazards import env
from hazards.db import data_dir

ROOT = Path(__file__).resolve().parents[2]


def test_a_boolean_setting_refuses_an_unreadable_value(monkeypatch):
    monkeypatch.setenv("EXOLEDGER_X", "maybe")
    with pytest.raises(ImproperlyConfigured, match="EXOLEDGER_X='maybe'"):
        env.env_bool("EXOLEDGER_X")


def test_a_whole_number_setting_refuses_text_and_values_below_its_minimum(monkeypatch):
    monkeypatch.setenv("EXOLEDGER_N", "ten")
    with pytest.raises(ImproperlyConfigured, match="whole number"):
        env.env_int("EXOLEDGER_N", 1)
    monkeypatch.setenv("EXOLEDGER_N", "0")
    with pytest.raises(ImproperlyConfigured, match="at least 5"):
        env.env_int("EXOLEDGER_N", 10, minimum=5)


def test_the_embedded_data_folder_defaults_to_var_and_moves_with_the_variable(monkeypatch, tmp_path):
    monkeypatch.delenv("EXOLEDGER_DATA_DIR", raising=False)
    assert data_dir() == ROOT / "var"
    monkeypatch.setenv("EXOLEDGER_DATA_DIR", str(tmp_path))
    assert data_dir() == tmp_path.resolve()


def _manage(*args, **extra_env):
    environ = {k: v for k, v in os.environ.items() if not k.startswith("PYTEST")}
    environ.update(extra_env)
    return subprocess.run([sys.executable, "manage.py", *args], cwd=ROOT, env=environ,
                          capture_output=True, text=True, timeout=60)


def test_an_unreachable_database_is_one_clear_line_not_a_traceback():
    result = _manage("showmigrations", DATABASE_URL="postgres://postgres@127.0.0.1:1/nowhere")
    assert result.returncode == 2
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("exoledger: cannot use the database nowhere on 127.0.0.1:1")
    assert "Traceback" not in result.stderr


def test_a_database_url_of_another_engine_is_refused():
    result = _manage("check", DATABASE_URL="sqlite:///tmp/x.db")
    assert result.returncode != 0
    assert "only PostgreSQL is supported" in result.stderr
    assert "Traceback" not in result.stderr


def test_production_refuses_to_start_without_a_secret_key():
    result = _manage("check", EXOLEDGER_ENV="production", EXOLEDGER_SECRET_KEY="",
                     EXOLEDGER_ALLOWED_HOSTS="example.test")
    assert result.returncode != 0
    assert "EXOLEDGER_SECRET_KEY must be set" in result.stderr
