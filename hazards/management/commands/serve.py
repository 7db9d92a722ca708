"""Prepare the database and serve the application with gunicorn (the README's first command)."""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pgserver
from django.conf import settings
from django.core.management import call_command
from django.core.management.base import BaseCommand
from django.db import connections

from hazards.db import data_dir
from hazards.demo import ROLES, load_demo
from hazards.oversight import tasks


class Command(BaseCommand):
    help = "Migrate, optionally load the demo, collect static files and serve with gunicorn."

    def add_arguments(self, parser):
        parser.add_argument("--demo", action="store_true", help="Load the demo scenario first.")
        parser.add_argument("--bind", default=os.environ.get("EXOLEDGER_BIND", "127.0.0.1:8000"))
        parser.add_argument("--workers", type=int, default=int(os.environ.get("WEB_CONCURRENCY", 3)))
        parser.add_argument("--no-serve", action="store_true", help="Prepare only; do not serve.")
        parser.add_argument(
            "--keep-database",
            action="store_true",
            help="Leave the embedded PostgreSQL running when the server stops (by default it "
            "stops with it; a server named by DATABASE_URL is never touched).",
        )

    def handle(self, *args, bind, workers, demo, no_serve, keep_database, **options):
        call_command("migrate", interactive=False, verbosity=0)
        call_command("collectstatic", interactive=False, verbosity=0)
        url = f"http://{bind}/"
        if demo:
            result = load_demo()
            self.stdout.write(self.style.SUCCESS("Demo scenario loaded."))
            self.stdout.write(
                f"Demo logins (user names): {', '.join(ROLES)}; password: {result['password']}"
            )
        self.stdout.write(self.style.SUCCESS(f"Exoledger is served at {url}"))
        self.stdout.flush()
        if no_serve:
            return
        # The daily refresh of revalidation dates and reminders, run by the worker below;
        # queued once (a queued copy is never duplicated).

        tasks.schedule_next()
        gunicorn = shutil.which("gunicorn") or os.path.join(os.path.dirname(sys.executable),
                                                           "gunicorn")
        argv = [gunicorn, "hazards.wsgi:application", "--bind", bind, "--workers", str(workers),
                "--timeout", "60", "--graceful-timeout", "20", "--access-logfile", "-"]
        os.environ.setdefault("DJANGO_SETTINGS_MODULE", settings.SETTINGS_MODULE)
        code = supervise(argv, worker_argv(), others=(housekeeping_argv(),))
        if not keep_database and stop_embedded_database():
            self.stdout.write("The embedded PostgreSQL was stopped (--keep-database keeps it).")
        raise SystemExit(code)


def stop_embedded_database(folder: Path | None = None) -> bool:
    """Stop the embedded PostgreSQL of this checkout (fast shutdown: open sessions are ended,
    committed work is kept). Nothing happens when DATABASE_URL names a server or when the
    embedded one is not running. Returns whether a server was stopped."""
    if folder is None:
        if os.environ.get("DATABASE_URL"):
            return False
        folder = data_dir() / "pgdata"
    if not (folder / "postmaster.pid").exists():
        return False
    connections.close_all()
    pg_ctl = Path(pgserver.__file__).parent / "pginstall" / "bin" / "pg_ctl"
    # pgserver runs the server as its own system user when started by root; pg_ctl refuses
    # to run as root, so it runs as that user too.
    user = "pgserver" if os.geteuid() == 0 else None
    done = subprocess.run(
        [str(pg_ctl), "-D", str(folder), "-m", "fast", "-w", "-t", "30", "stop"],
        user=user,
        capture_output=True,
        text=True,
        check=False,
    )
    return done.returncode == 0


def housekeeping_argv() -> list[str]:
    """The periodic sweep: lost jobs recovered within a minute of their lease, the recompute
    queue vacuumed, old snapshots pruned (hazards.management.housekeeping)."""
    manage = os.path.join(settings.BASE_DIR, "manage.py")
    return [sys.executable, manage, "housekeeping", "--every", "60"]


def worker_argv() -> list[str]:
    """The background worker that renders dossiers (django_tasks_db's db_worker)."""
    manage = os.path.join(settings.BASE_DIR, "manage.py")
    return [sys.executable, manage, "db_worker", "--queue-name", "default", "--interval", "2",
            "--no-reload"]


def supervise(web_argv: list[str], worker: list[str], *, grace: float = 20.0,
              others: tuple[list[str], ...] = ()) -> int:
    """Run gunicorn, one worker and the `others` (the housekeeping sweep); forward
    SIGINT/SIGTERM/SIGHUP to them; when gunicorn exits, stop the rest (SIGTERM, then SIGKILL
    after `grace` s) and return its status. A background process that dies is started again."""
    web = subprocess.Popen(web_argv)
    commands = [worker, *others]
    background = [subprocess.Popen(argv) for argv in commands]

    def forward(signum, frame):
        for child in (web, *background):
            if child.poll() is None:
                # SIGHUP reloads gunicorn; the others have no reload, so they are left alone.
                if signum == signal.SIGHUP and child is not web:
                    continue
                child.send_signal(signum)

    previous = {sig: signal.signal(sig, forward)
                for sig in (signal.SIGINT, signal.SIGTERM, signal.SIGHUP)}
    try:
        while True:
            code = web.poll()
            if code is not None:
                break
            for i, child in enumerate(background):
                if child.poll() is not None:
                    # A worker that died (e.g. the database restarted) is started again.
                    background[i] = subprocess.Popen(commands[i])
            time.sleep(0.5)
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
        for child in background:
            if child.poll() is None:
                child.terminate()
        for child in background:
            try:
                child.wait(timeout=grace)
            except subprocess.TimeoutExpired:
                child.kill()
                child.wait()
    return code
