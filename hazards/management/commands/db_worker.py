"""The background worker (django_tasks_db's `db_worker`) that also keeps the daily refresh
of due dates and reminders queued, wherever it runs (issue 21 item 9).

The docker-compose deployment starts only gunicorn and this worker; before, only `serve` and
`oversight_refresh --schedule` queued the daily task, so there the due dates and reminders
never refreshed. Every worker queues it on start (at most one waits: `schedule_next` checks
under an advisory lock), and each run queues the next.
"""

from __future__ import annotations

from django_tasks_db.management.commands.db_worker import Command as WorkerCommand

from hazards.oversight.tasks import schedule_next


class Command(WorkerCommand):
    help = WorkerCommand.help + " Queues the daily oversight refresh if none is waiting."

    def handle(self, *args, **options):
        if schedule_next():
            self.stdout.write("Queued the daily oversight refresh (due dates and reminders).")
        return super().handle(*args, **options)
