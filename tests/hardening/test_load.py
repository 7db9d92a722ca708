"""The load test in its short, bounded form: a database of its own (created and migrated on
the suite's server), gunicorn on loopback, 15 s of load, then the integrity checks."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from tests.hardening.conftest import ROOT, subprocess_env


@pytest.mark.load
def test_short_load_run_loses_nothing_and_answers_without_server_errors(tmp_path):
    out = tmp_path / "load.json"
    result = subprocess.run(
        [sys.executable, "tests/bench/load_test.py", "--duration", "15", "--clients", "6",
         "--workers", "3", "--json", str(out)],
        cwd=ROOT, capture_output=True, text=True, timeout=240, env=subprocess_env())
    print(result.stdout)
    assert out.exists(), result.stderr[-3000:]
    figures = json.loads(out.read_text())
    assert figures["failures"] == [], figures["failures"]
    assert figures["integrity_problems"] == [], figures["integrity_problems"]
    assert result.returncode == 0, result.stdout + result.stderr[-2000:]
    accepted = figures["accepted"]
    assert accepted.get("step_edits", 0) > 0 and accepted.get("series", 0) > 0
    assert not any(s.startswith("5") for s in figures["statuses"])
