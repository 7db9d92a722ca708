"""Refresh revalidation due dates and send today's reminders (idempotent)."""

from __future__ import annotations

import datetime as dt
import json

from django.core.management.base import BaseCommand, CommandError

from hazards.oversight.services import refresh_and_remind
from hazards.oversight.tasks import schedule_next


class Command(BaseCommand):
    help = ("Refresh the revalidation due dates of approved revisions and send the reminders "
            "of findings and revalidations that fall due or are overdue. Running it twice "
            "sends nothing twice. --schedule also queues the daily background run.")

    def add_arguments(self, parser):
        parser.add_argument("--date", help="the day to remind for (YYYY-MM-DD; default today)")
        parser.add_argument("--schedule", action="store_true",
                            help="queue the daily refresh task (db_worker runs it)")

    def handle(self, *args, date=None, schedule=False, **options):
        try:
            on = dt.date.fromisoformat(date) if date else None
        except ValueError:
            raise CommandError(f"--date {date!r}: expected YYYY-MM-DD") from None
        result = refresh_and_remind(on=on)
        if schedule:
            result["scheduled"] = schedule_next()
        self.stdout.write(json.dumps(result, sort_keys=True))
