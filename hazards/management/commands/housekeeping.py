"""One housekeeping sweep, or one every N seconds (`serve` runs `--every 60`)."""

from __future__ import annotations

import json
import time

from django.core.management.base import BaseCommand
from django.db import close_old_connections

from hazards.management.housekeeping import SNAPSHOT_RETENTION, housekeeping


class Command(BaseCommand):
    help = ("Recover the jobs of workers that died (dossiers queued again, task rows marked "
            "failed past their lease), vacuum the recompute queue, prune superseded indicator "
            "snapshots. Retention: " + " ".join(SNAPSHOT_RETENTION.split()))

    def add_arguments(self, parser):
        parser.add_argument("--every", type=float, default=0,
                            help="repeat every so many seconds (0: once)")

    def handle(self, *args, every=0.0, **options):
        while True:
            close_old_connections()
            self.stdout.write(json.dumps(housekeeping(), sort_keys=True))
            self.stdout.flush()
            if not every:
                return
            time.sleep(every)
