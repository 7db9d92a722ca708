"""`manage.py chain_head [--append FILE]`: print the audit chain's keyed head, or append it
to a file that an operator keeps apart from the database (another host, write-once storage,
a printed log). `verify --heads FILE` then checks the chain against every head in it, so a
rewritten history or a cut tail after any exported head is found. Run it from cron."""

from __future__ import annotations

import os
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from hazards.review.anchors import current_head, head_line
from hazards.review.signing import db_clock, iso


class Command(BaseCommand):
    help = "Print the audit chain's keyed head, or append it to a head file kept apart."

    def add_arguments(self, parser):
        parser.add_argument(
            "--append",
            metavar="FILE",
            help="append the head as one JSON line to FILE (created if absent)",
        )

    def handle(self, *args, **options):
        line = head_line(current_head(), iso(db_clock()))
        if not options["append"]:
            self.stdout.write(line)
            return
        path = Path(options["append"])
        try:
            with path.open("a", encoding="utf-8") as out:
                out.write(line + "\n")
                out.flush()
                os.fsync(out.fileno())
        except OSError as exc:
            raise CommandError(f"cannot append the head to {path}: {exc.strerror}") from exc
        self.stdout.write(f"appended {line} to {path}")
