"""Each kind of notification reaches the right people exactly once, by e-mail and in the
inbox, and nobody else; preferences turn each kind off; nothing is sent inside a request
(delivery is a background task enqueued on commit); the refresh command and the daily task
send nothing twice."""

from __future__ import annotations

import datetime as dt
import json

import pghistory
import pytest
import time_machine
from django.core.management import call_command
from django.db import transaction
from django.test import override_settings

from hazards.models import ReactionStep
from hazards.oversight import services, tasks
from hazards.oversight.models import Notification, NotificationPreference
from hazards.review.services import findings
from tests.review.conftest import client_for
from tests.review.factories import revision_in, sign

pytestmark = pytest.mark.django_db
UTC = dt.UTC


def told(kind):
    """Usernames told of `kind` in the inbox table, with how often."""
    rows = Notification.objects.filter(kind=kind).values_list("recipient__username", flat=True)
    return sorted(rows)


def mailed(outbox, word):
    return sorted(m.to[0].split("@")[0] for m in outbox if word in m.subject)


def test_a_lodged_revision_tells_each_reviewer_once(process, people, mailoutbox,
                                                     django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        lodged = revision_in(process, "lodged", author=people["author"])
    assert told("submission_waiting") == ["reviewer", "reviewer2"]
    assert mailed(mailoutbox, "Waiting for your review") == ["reviewer", "reviewer2"]
    assert all("qualified assessment" in m.body for m in mailoutbox)
    assert f"/processes/{process.pk}/review/" in mailoutbox[0].body
    # Delivering the same key again sends nothing.
    tasks.deliver.enqueue("submission_waiting", f"review.processrevision:{lodged.pk}", "")
    assert len(mailoutbox) == 2 and Notification.objects.count() == 2


def test_a_checked_revision_tells_the_approver_only(process, people, mailoutbox,
                                                     django_capture_on_commit_callbacks):
    lodged = revision_in(process, "lodged", author=people["author"])
    with django_capture_on_commit_callbacks(execute=True):
        sign(lodged, people["reviewer"], "reviewed")
    assert told("approval_waiting") == ["approver"]
    assert mailed(mailoutbox, "Waiting for your approval") == ["approver"]


def test_nothing_is_sent_before_commit_or_after_a_rollback(process, people, mailoutbox,
                                                            django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=False) as callbacks:
        revision_in(process, "lodged", author=people["author"])
    assert callbacks and Notification.objects.count() == 0 and mailoutbox == []

    with django_capture_on_commit_callbacks(execute=True):
        with pytest.raises(RuntimeError), transaction.atomic():
            findings.finding_raise(process=process, user=people["reviewer"], title="Rolled back",
                                   kind="advisory", owner=people["author"],
                                   due_date=dt.date(2030, 1, 1))
            raise RuntimeError("the request failed")
    assert told("finding_assigned") == []


def test_a_finding_tells_its_owner_once_and_a_new_owner_once(process, people, mailoutbox,
                                                             django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        finding = findings.finding_raise(
            process=process, user=people["reviewer"], title="Check the jacket", kind="advisory",
            owner=people["author"], due_date=dt.date(2030, 1, 31))
    with django_capture_on_commit_callbacks(execute=True):
        findings.finding_update(finding=finding, user=people["reviewer"], reason="typo",
                                title="Check the jacket flow")
    with django_capture_on_commit_callbacks(execute=True):
        findings.finding_update(finding=finding, user=people["reviewer"], reason="handover",
                                owner=people["approver"])
    assert told("finding_assigned") == ["approver", "author"]
    assert mailed(mailoutbox, "Finding assigned") == ["approver", "author"]


def test_a_finding_falling_due_and_overdue_reminds_its_owner_once_per_stage(process, people,
                                                                             mailoutbox):
    finding = findings.finding_raise(
        process=process, user=people["reviewer"], title="Interlock record", kind="blocking",
        owner=people["author"], due_date=dt.date(2030, 1, 31))
    Notification.objects.all().delete()
    mailoutbox.clear()
    for day, expected in ((dt.date(2030, 1, 23), 0),   # 8 days before: not yet (7-day notice)
                          (dt.date(2030, 1, 24), 1),   # 7 days before: due
                          (dt.date(2030, 1, 31), 1),   # due today: still the same stage
                          (dt.date(2030, 2, 1), 2)):   # a day late: overdue, told again
        services.refresh_and_remind(on=day)
        services.refresh_and_remind(on=day)
        assert Notification.objects.filter(kind="finding_due").count() == expected, day
    assert told("finding_due") == ["author", "author"]
    assert [m.subject.split(":")[0] for m in mailoutbox] == [
        "[Exoledger] Finding due 2030-01-31", "[Exoledger] Finding overdue since 2030-01-31"]
    assert finding.pk


def test_a_revalidation_falling_due_tells_the_people_with_roles_once(endorsed, people,
                                                                      mailoutbox):
    from hazards.oversight.models import RevalidationSchedule

    due_on = RevalidationSchedule.objects.get(revision=endorsed).due_on
    with time_machine.travel(dt.datetime.combine(due_on - dt.timedelta(days=90),
                                                 dt.time(6), tzinfo=UTC), tick=False):
        first = json.loads(_command())
        second = json.loads(_command())
    # 90 days before is the first day of the default notice; the auditor is not told.
    assert first["revalidation_due"] == 4 and second["revalidation_due"] == 0
    assert told("revalidation_due") == ["approver", "author", "reviewer", "reviewer2"]
    assert len(mailed(mailoutbox, "Revalidation due")) == 4
    with time_machine.travel(dt.datetime.combine(due_on - dt.timedelta(days=91),
                                                 dt.time(6), tzinfo=UTC), tick=False):
        assert json.loads(_command())["revalidation_due"] == 0
    with time_machine.travel(dt.datetime.combine(due_on + dt.timedelta(days=1),
                                                 dt.time(6), tzinfo=UTC), tick=False):
        assert json.loads(_command())["revalidation_due"] == 4  # overdue: told once more
        assert json.loads(_command())["revalidation_due"] == 0


def _command(*args):
    from io import StringIO

    out = StringIO()
    call_command("oversight_refresh", *args, stdout=out)
    return out.getvalue()


def test_an_approval_that_no_longer_holds_tells_author_reviewers_approver_once(
        endorsed, step, people, mailoutbox, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True), pghistory.context(reason="pilot"):
        ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
    with django_capture_on_commit_callbacks(execute=True):
        ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=3500.0)
    assert told("approval_lapsed") == ["approver", "author", "reviewer", "reviewer2"]
    mails = [m for m in mailoutbox if "Changes pending against the approval" in m.subject]
    assert len(mails) == 4
    assert "Reaction mass (plant scale): 5000 kg → 4000 kg" in mails[0].body, mails[0].body
    assert "Reason: pilot." in mails[0].body


def test_preferences_turn_a_kind_off_per_channel(process, people, mailoutbox,
                                                 django_capture_on_commit_callbacks):
    client = client_for(people["reviewer2"])
    etag = client.get("/api/v1/notification-preferences/")["ETag"]
    response = client.put("/api/v1/notification-preferences/", [
        {"kind": "submission_waiting", "email": False, "inbox": True}], format="json",
        HTTP_IF_MATCH=etag)
    assert response.status_code == 200
    row = next(r for r in response.json() if r["kind"] == "submission_waiting")
    assert row == {"kind": "submission_waiting", "label": "A submission waits for your review",
                   "email": False, "inbox": True}
    services.preference_set(user=people["reviewer"], kind="submission_waiting", email=False,
                            inbox=False)
    with django_capture_on_commit_callbacks(execute=True):
        revision_in(process, "lodged", author=people["author"])
    assert told("submission_waiting") == ["reviewer2"]
    assert mailed(mailoutbox, "Waiting for your review") == []
    assert NotificationPreference.objects.count() == 2


def test_the_inbox_api_shows_only_ones_own_and_marks_read(process, people,
                                                          django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        revision_in(process, "lodged", author=people["author"])
    mine = client_for(people["reviewer"]).get("/api/v1/notifications/").json()["results"]
    assert [n["kind"] for n in mine] == ["submission_waiting"]
    assert client_for(people["outsider"]).get("/api/v1/notifications/").json()["results"] == []
    other = Notification.objects.get(recipient=people["reviewer2"])
    assert client_for(people["reviewer"]).post(
        f"/api/v1/notifications/{other.pk}/read/").status_code == 404
    read = client_for(people["reviewer"]).post(f"/api/v1/notifications/{mine[0]['id']}/read/")
    assert read.json()["read_at"] is not None
    unread = client_for(people["reviewer"]).get("/api/v1/notifications/?unread=true").json()
    assert unread["results"] == []


def test_pages_of_the_inbox_and_preferences(process, people,
                                            django_capture_on_commit_callbacks):
    from django.test import Client

    with django_capture_on_commit_callbacks(execute=True):
        revision_in(process, "lodged", author=people["author"])
    client = Client()
    client.force_login(people["reviewer"])
    page = client.get("/notifications/").content.decode()
    assert "Waiting for your review" in page and "Inbox <span class=\"count\">1</span>" in page
    client.post("/notifications/", {})
    assert not Notification.objects.filter(recipient=people["reviewer"], read_at=None).exists()
    client.post("/notifications/preferences/", {"finding_due-email": "on"})
    prefs = {p["kind"]: p for p in services.preferences_of(people["reviewer"])}
    assert prefs["finding_due"] == {**prefs["finding_due"], "email": True, "inbox": False}
    assert prefs["submission_waiting"]["email"] is False


def test_outsiders_and_people_of_other_processes_hear_nothing_at_all(
        endorsed, step, process, people, mailoutbox, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
        draft = revision_in(process, "lodged", author=people["author"])
        sign(draft, people["reviewer"], "reviewed")
    services.refresh_and_remind(on=dt.date(2100, 1, 1))
    everyone = set(Notification.objects.values_list("recipient__username", flat=True))
    assert everyone and not everyone & {"outsider", "elsewhere"}
    assert not {m.to[0] for m in mailoutbox} & {"outsider@example.test",
                                                "elsewhere@example.test"}


def test_the_daily_task_queues_its_next_run_once_on_the_database_backend(db):
    from django_tasks_db.models import DBTaskResult

    database = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend",
                            "QUEUES": ["default"]}}
    assert tasks.schedule_next() is False  # the immediate backend cannot defer
    with override_settings(TASKS=database):
        assert tasks.schedule_next() is True
        assert tasks.schedule_next() is False
        queued = DBTaskResult.objects.get(task_path=tasks.refresh_daily.module_path)
    assert queued.run_after.hour == tasks.DAILY_AT_HOUR
    assert tasks.next_run(dt.datetime(2030, 1, 1, 4, 59, tzinfo=UTC)) == dt.datetime(
        2030, 1, 1, 5, tzinfo=UTC)
    assert tasks.next_run(dt.datetime(2030, 1, 1, 5, 0, tzinfo=UTC)) == dt.datetime(
        2030, 1, 2, 5, tzinfo=UTC)
