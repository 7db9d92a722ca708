"""Revalidation due dates at their boundaries, with the clock moved (time-machine): due
exactly today, a day before and after, and month-end arithmetic."""

from __future__ import annotations

import datetime as dt

import pytest
import time_machine
from django.test import Client

from hazards.oversight import revalidation
from hazards.oversight.dates import add_months, due_state
from hazards.oversight.models import RevalidationSchedule

pytestmark = pytest.mark.django_db
UTC = dt.UTC


@pytest.mark.parametrize("day, months, expected", [
    # Calendar arithmetic, clamped to the month's last day (common practice, no source).
    (dt.date(2025, 8, 31), 6, dt.date(2026, 2, 28)),
    (dt.date(2027, 8, 31), 6, dt.date(2028, 2, 29)),   # 2028 is a leap year
    (dt.date(2024, 2, 29), 60, dt.date(2029, 2, 28)),  # the OSHA default of five years
    (dt.date(2025, 1, 31), 1, dt.date(2025, 2, 28)),
    (dt.date(2025, 11, 30), 3, dt.date(2026, 2, 28)),
    (dt.date(2025, 12, 15), 1, dt.date(2026, 1, 15)),
    (dt.date(2025, 3, 31), 12, dt.date(2026, 3, 31)),
])
def test_months_are_added_on_the_calendar(day, months, expected):
    assert add_months(day, months) == expected


@pytest.mark.parametrize("today, window, state", [
    (dt.date(2026, 2, 27), 0, "current"),
    (dt.date(2026, 2, 27), 1, "due"),
    (dt.date(2026, 2, 28), 0, "due"),      # due today is due, not yet overdue
    (dt.date(2026, 3, 1), 90, "overdue"),  # one day after
])
def test_the_state_of_a_due_date_at_its_boundaries(today, window, state):
    assert due_state(dt.date(2026, 2, 28), today, window) == state


def test_an_approval_gets_the_sites_interval_and_the_default_is_five_years(endorsed, process):
    schedule = RevalidationSchedule.objects.get(revision=endorsed)
    signed = endorsed.signatures.get(meaning="approved").signed_at
    assert process.site.revalidation_interval_months == 60
    assert schedule.approved_on == signed.astimezone(UTC).date()
    assert schedule.due_on == add_months(schedule.approved_on, 60)


@pytest.fixture
def approved_31_august(endorsed, process):
    """The schedule of an approval given on 31 Aug 2025 at a site that revalidates every
    six months (a stricter local rule than the default)."""
    process.site.revalidation_interval_months = 6
    process.site.save()
    return revalidation.schedule_for(
        revision=endorsed, signed_at=dt.datetime(2025, 8, 31, 23, 30, tzinfo=UTC))


@pytest.mark.parametrize("now, overdue, due", [
    ("2026-02-27 12:00", [], True),
    ("2026-02-28 00:00", [], True),
    ("2026-02-28 23:59", [], True),
    ("2026-03-01 00:00", True, []),
    ("2025-10-01 12:00", [], []),   # 150 days ahead: outside a 90-day window
])
def test_due_and_overdue_lists_move_with_the_clock(approved_31_august, people, now, overdue,
                                                   due):
    assert approved_31_august.due_on == dt.date(2026, 2, 28)
    with time_machine.travel(dt.datetime.fromisoformat(now).replace(tzinfo=UTC), tick=False):
        data = revalidation.due_and_overdue(people["reviewer"], within_days=90)
        listed = {"overdue": [s.pk for s in data["overdue"]], "due": [s.pk for s in data["due"]]}
    expected = {"overdue": [approved_31_august.pk] if overdue else [],
                "due": [approved_31_august.pk] if due else []}
    assert listed == expected


def test_nobody_without_a_role_sees_a_due_date(approved_31_august, people):
    with time_machine.travel(dt.datetime(2026, 3, 1, tzinfo=UTC), tick=False):
        for name in ("outsider", "elsewhere"):
            data = revalidation.due_and_overdue(people[name], within_days=3660)
            assert data["overdue"] == [] and data["due"] == []


def test_the_api_lists_due_and_overdue_in_a_chosen_window(approved_31_august, people):
    from tests.review.conftest import client_for

    client = client_for(people["auditor"])
    # 28 Jan + 30 days = 27 Feb; + 31 days = 28 Feb, the due date.
    with time_machine.travel(dt.datetime(2026, 1, 28, tzinfo=UTC), tick=False):
        near = client.get("/api/v1/revalidation/?within_days=30").json()
        far = client.get("/api/v1/revalidation/?within_days=31").json()
        assert client.get("/api/v1/revalidation/?within_days=x").status_code == 400
    assert near["due"] == [] and near["overdue"] == []
    assert [r["due_on"] for r in far["due"]] == ["2026-02-28"]
    assert "1910.119(e)(6)" in far["default_interval_source"]


def test_refreshing_follows_a_change_of_the_sites_interval_once(endorsed, process):
    from hazards.models import Site

    RevalidationSchedule.objects.filter(revision=endorsed).delete()
    assert revalidation.refresh_schedules() == {"created": 1, "updated": 0}
    # A change the save signal does not see (a queryset update) waits for the refresh.
    Site.objects.filter(pk=process.site_id).update(revalidation_interval_months=12)
    assert revalidation.refresh_schedules() == {"created": 0, "updated": 1}
    schedule = RevalidationSchedule.objects.get(revision=endorsed)
    assert schedule.interval_months == 12
    assert schedule.due_on == add_months(schedule.approved_on, 12)
    assert revalidation.refresh_schedules() == {"created": 0, "updated": 0}


def test_an_approval_in_force_stays_due_through_changes_and_a_replaced_one_is_not_listed(
        approved_31_august, step, people):
    from hazards.models import ReactionStep
    from hazards.review.models import ProcessRevision
    from hazards.review.services.revisions import revisions_reconcile
    from tests.web.conftest import sign

    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
    revisions_reconcile(process=step.process)
    # The plant still runs on the approval (issue 21 item 2): its revalidation stays due.
    with time_machine.travel(dt.datetime(2026, 3, 1, tzinfo=UTC), tick=False):
        assert revalidation.due_and_overdue(people["reviewer"])["overdue"] == [
            approved_31_august]
    draft = ProcessRevision.objects.get(process=step.process, state="drafting")
    for who, meaning in (("author", "authored"), ("reviewer", "reviewed"),
                         ("approver", "approved")):
        sign(draft, people[who], meaning)
    with time_machine.travel(dt.datetime(2026, 3, 1, tzinfo=UTC), tick=False):
        assert approved_31_august not in revalidation.due_and_overdue(
            people["reviewer"])["overdue"]


def test_an_overdue_process_is_flagged_on_its_pages(approved_31_august, people, process, step):
    client = Client()
    client.force_login(people["reviewer"])
    with time_machine.travel(dt.datetime(2026, 3, 1, 9, tzinfo=UTC), tick=False):
        pages = {url: client.get(url).content.decode() for url in (
            f"/processes/{process.pk}/", f"/steps/{step.pk}/", "/processes/", "/",
            "/revalidation/")}
    for url, html in pages.items():
        assert "Revalidation overdue" in html or "Overdue" in html, url
    assert "was due for revalidation on 2026-02-28, 1 day ago" in pages[f"/processes/{process.pk}/"]
    with time_machine.travel(dt.datetime(2026, 2, 28, 9, tzinfo=UTC), tick=False):
        html = client.get(f"/processes/{process.pk}/").content.decode()
    assert "Revalidation overdue" not in html and "Revalidation due on 2026-02-28" in html


def test_the_dossier_context_carries_the_flag_as_at_its_issue(approved_31_august, process):
    from hazards.dossier.content import dossier_content

    with time_machine.travel(dt.datetime(2026, 3, 1, tzinfo=UTC), tick=False):
        context = dossier_content(process)["context"]
    assert context["revalidation"]["overdue"] is True
    assert context["revalidation"]["due_on"] == "2026-02-28"
