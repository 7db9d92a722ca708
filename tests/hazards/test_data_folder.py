"""The embedded database refuses a data folder whose running server belongs to another tree
(issue 19 item 6): a copied working tree carries the original's postmaster.pid, and pgserver
would join the server named there, which serves the original tree's data."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest
from django.core.exceptions import ImproperlyConfigured

from hazards.db import refuse_foreign_server


def _pid_file(folder, pid, data_dir):
    folder.mkdir(parents=True, exist_ok=True)
    # PostgreSQL's postmaster.pid: PID, data directory, start time, port, socket dir, ...
    (folder / "postmaster.pid").write_text(f"{pid}\n{data_dir}\n1700000000\n5432\n/tmp\n")


def test_a_live_server_of_another_tree_is_refused_with_both_folders_named(tmp_path):
    ours, theirs = tmp_path / "copy" / "var" / "pgdata", tmp_path / "orig" / "var" / "pgdata"
    _pid_file(ours, os.getpid(), theirs)  # this test's process stands in for the live server
    with pytest.raises(ImproperlyConfigured) as refused:
        refuse_foreign_server(ours)
    message = str(refused.value)
    assert str(ours) in message and str(theirs) in message
    assert "EXOLEDGER_DATA_DIR" in message


def test_our_own_server_a_stale_pid_file_or_none_is_accepted(tmp_path):
    ours = tmp_path / "var" / "pgdata"
    refuse_foreign_server(ours)  # no folder yet
    _pid_file(ours, os.getpid(), ours)
    refuse_foreign_server(ours)  # our own running server
    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    _pid_file(ours, int(gone.stdout), tmp_path / "elsewhere")
    refuse_foreign_server(ours)  # that process has exited: pgserver starts a fresh server
