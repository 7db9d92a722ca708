"""`manage.py verify`: check the audit chain (link by link, in bounded memory, against every
head it knows), every signature and seal, and that no record changed outside the trail.
Names each problem, exits 1 if there is any, prints the keyed head."""

from __future__ import annotations

import sys
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from hazards.env import env_str
from hazards.review.anchors import current_head
from hazards.review.audit import verify_all
from hazards.review.chain_verify import BATCH, CheckpointRefused

HEADS_ENV = "EXOLEDGER_CHAIN_HEADS"


class Command(BaseCommand):
    help = (
        "Verify the hash chain of the audit trail (against the heads in dossiers and in "
        "head files), every signature's content hash and seal, and that every record "
        "matches its last audit event; print the chain's keyed head."
    )

    def add_arguments(self, parser):
        parser.add_argument(
            "--heads",
            action="append",
            default=[],
            metavar="FILE",
            help="a head file written by `chain_head --append` (repeatable); "
            f"also every path in {HEADS_ENV} (separated by ':')",
        )
        parser.add_argument(
            "--checkpoint",
            metavar="FILE",
            help="resume the chain walk from this file if it exists, and "
            "record progress in it after each batch",
        )
        parser.add_argument(
            "--progress", action="store_true", help="print the chain walk's progress on stderr"
        )
        parser.add_argument("--batch", type=int, default=BATCH, help="links per batch")

    def _progress(self, walk, last_seq) -> None:
        done = min(1.0, walk.seq / last_seq) if last_seq else 1.0
        bar = "#" * int(done * 30)
        end = "\r" if sys.stderr.isatty() else "\n"
        self.stderr.write(
            f"chain [{bar:<30}] {done:6.1%}  link {walk.seq} of {last_seq}", ending=end
        )

    def handle(self, *args, **options):
        heads = [Path(p) for p in options["heads"]]
        heads += [Path(p) for p in env_str(HEADS_ENV, "").split(":") if p]
        checkpoint = Path(options["checkpoint"]) if options["checkpoint"] else None
        try:
            problems = verify_all(
                head_files=heads,
                checkpoint=checkpoint,
                batch=max(1, options["batch"]),
                progress=self._progress if options["progress"] else None,
            )
        except CheckpointRefused as exc:
            raise CommandError(str(exc)) from exc
        if options["progress"]:
            self.stderr.write("")
        if checkpoint is not None and checkpoint.exists():
            checkpoint.unlink()  # the walk finished: the next run checks every link again
        for problem in problems:
            self.stderr.write(f"PROBLEM {problem}")
        head = current_head()
        self.stdout.write(f"head {head['hash']} (link {head['seq']}, key mark {head['mac']})")
        if problems:
            self.stderr.write(f"verify: {len(problems)} problem(s) found")
            raise SystemExit(1)
        self.stdout.write("verify: no problems found")
