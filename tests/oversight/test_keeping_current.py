"""Keeping approvals current in the documented deployment (issue 21 item 9): the worker queues
the daily refresh wherever it runs; a changed revalidation interval moves the due dates at
once; reminders say what to do and link to where it is done; change records read in display
units with people by name. Due dates are approval date + interval on the calendar (common
practice, no source; the default interval's source is hazards.oversight.dates)."""

from __future__ import annotations

import datetime as dt
import json
from io import StringIO
from unittest import mock

import pghistory
import pytest
import time_machine
from django.core.management import call_command
from django.test import Client, override_settings
from django_tasks_db.management.commands.db_worker import Command as WorkerCommand

from hazards.models import ReactionStep, Site
from hazards.oversight import tasks
from hazards.oversight.dates import add_months
from hazards.oversight.models import ChangeRecord, RevalidationSchedule
from hazards.oversight.notify import REVALIDATION_TODO
from hazards.services.records import record_update

pytestmark = pytest.mark.django_db
DATABASE = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend", "QUEUES": ["default"]}}


def test_the_worker_queues_the_daily_refresh_on_start_once(db):
    from django_tasks_db.models import DBTaskResult

    with (
        override_settings(TASKS=DATABASE),
        mock.patch.object(WorkerCommand, "handle", return_value=None) as run,
    ):
        for _ in range(2):  # two workers, or one restarted
            call_command("db_worker", "--queue-name", "default", stdout=StringIO())
        queued = DBTaskResult.objects.filter(task_path=tasks.refresh_daily.module_path)
        assert queued.count() == 1
    assert run.call_count == 2  # and then each runs the ordinary worker


def test_a_changed_interval_moves_the_due_dates_at_once(endorsed, process):
    schedule = RevalidationSchedule.objects.get(revision=endorsed)
    site = Site.objects.get(pk=process.site_id)
    record_update(instance=site, data={"revalidation_interval_months": 24})
    schedule.refresh_from_db()
    assert schedule.interval_months == 24
    assert schedule.due_on == add_months(schedule.approved_on, 24)


def test_a_reminder_says_what_to_do_and_links_to_the_review_page(endorsed, process, mailoutbox):
    due_on = RevalidationSchedule.objects.get(revision=endorsed).due_on
    with (
        override_settings(EXOLEDGER_BASE_URL="https://exoledger.example.test"),
        time_machine.travel(
            dt.datetime.combine(due_on - dt.timedelta(days=30), dt.time(6), tzinfo=dt.UTC),
            tick=False,
        ),
    ):
        out = StringIO()
        call_command("oversight_refresh", stdout=out)
    assert json.loads(out.getvalue())["revalidation_due"] > 0
    mail = next(m for m in mailoutbox if "Revalidation due" in m.subject)
    assert " ".join(REVALIDATION_TODO.split()) in " ".join(mail.body.split())
    assert f"https://exoledger.example.test/processes/{process.pk}/review/" in mail.body


def test_a_change_record_reads_in_display_units_with_people_by_name(
    endorsed, step, people, django_capture_on_commit_callbacks
):
    author = people["author"]
    author.first_name, author.last_name = "Ada", "Chemist"
    author.save()
    fresh = ReactionStep.objects.get(pk=step.pk)
    with pghistory.context(user=author.pk, reason="charge cut after the pilot batch"):
        record_update(instance=fresh, data={"reaction_mass_kg": 4000.0})
    record = ChangeRecord.objects.get(step=step)
    client = Client()
    client.force_login(people["reviewer"])
    html = client.get(f"/changes/{record.pk}/").content.decode()
    assert "reaction_mass_kg" not in html and "Reaction mass" in html
    assert "4000 kg" in html and "5000 kg" in html
    assert "Ada Chemist" in html
    listed = client.get("/changes/").content.decode()
    assert "Ada Chemist" in listed
