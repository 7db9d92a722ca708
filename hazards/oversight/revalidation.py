"""Revalidation due dates of endorsed revisions: set at approval, refreshed from the site's
interval, listed by window, and the flag every page and dossier of a process can show."""

from __future__ import annotations

import datetime as dt

from django.db import transaction
from django.utils import timezone

from hazards.models import Site
from hazards.oversight.dates import CURRENT, DEFAULT_SOURCE, DUE, OVERDUE, add_months, due_state
from hazards.oversight.models import (
    ChangePolicy,
    ChangeRecord,
    ChangeState,
    RevalidationSchedule,
)
from hazards.review.access import is_administrator, processes_of
from hazards.review.models import Meaning, ReviewState, Signature

DEFAULT_WINDOW_DAYS = 90


def today() -> dt.date:
    return timezone.localdate()


def schedule_for(*, revision, signed_at, using: str = "default") -> RevalidationSchedule:
    """The schedule of a revision approved at `signed_at`: approval date + site interval."""
    site = Site._base_manager.using(using).get(processes__pk=revision.process_id)
    approved_on = timezone.localdate(signed_at)
    months = site.revalidation_interval_months
    schedule, _ = RevalidationSchedule.objects.using(using).update_or_create(
        revision_id=revision.pk,
        defaults={"process_id": revision.process_id, "approved_on": approved_on,
                  "interval_months": months, "due_on": add_months(approved_on, months)},
    )
    return schedule


def refresh_schedules(*, site_id: int | None = None, using: str = "default") -> dict:
    """Give every endorsed revision (of `site_id`'s processes, or all) its schedule and follow
    changes of the site's interval. Returns {"created": n, "updated": n}; a second run
    changes nothing."""
    approvals = (Signature.objects.using(using)
                 .filter(meaning=Meaning.APPROVED, revision__state=ReviewState.ENDORSED))
    if site_id is not None:
        approvals = approvals.filter(revision__process__site_id=site_id)
    approvals = (approvals
                 .values_list("revision_id", "revision__process_id", "signed_at",
                              "revision__process__site__revalidation_interval_months"))
    with transaction.atomic(using=using):
        existing = {s.revision_id: s for s in RevalidationSchedule.objects.using(using)
                    .select_for_update().filter(revision_id__in=[a[0] for a in approvals])}
        created, updated = [], []
        for revision_id, process_id, signed_at, months in approvals:
            approved_on = timezone.localdate(signed_at)
            due_on = add_months(approved_on, months)
            row = existing.get(revision_id)
            if row is None:
                created.append(RevalidationSchedule(
                    revision_id=revision_id, process_id=process_id, approved_on=approved_on,
                    interval_months=months, due_on=due_on))
            elif (row.approved_on, row.interval_months, row.due_on) != (approved_on, months,
                                                                          due_on):
                row.approved_on, row.interval_months, row.due_on = approved_on, months, due_on
                row.refreshed_at = timezone.now()
                updated.append(row)
        RevalidationSchedule.objects.using(using).bulk_create(created)
        RevalidationSchedule.objects.using(using).bulk_update(
            updated, ["approved_on", "interval_months", "due_on", "refreshed_at"])
    return {"created": len(created), "updated": len(updated)}


def active_schedules(user=None):
    """Schedules of revisions that are endorsed now (a replaced approval is not revalidated;
    its process is in review again), limited to what `user` may see."""
    qs = (RevalidationSchedule.objects.filter(revision__state=ReviewState.ENDORSED)
          .select_related("process", "process__site", "revision"))
    if user is not None and not is_administrator(user):
        qs = qs.filter(process__in=processes_of(user))
    return qs


def due_and_overdue(user, *, on: dt.date | None = None,
                    within_days: int = DEFAULT_WINDOW_DAYS) -> dict:
    """What falls due within `within_days` of `on` (today) and what is overdue."""
    on = on or today()
    rows = list(active_schedules(user).filter(
        due_on__lte=on + dt.timedelta(days=within_days)).order_by("due_on", "id"))
    for row in rows:
        row.state = due_state(row.due_on, on, within_days)
        row.days_left = (row.due_on - on).days
        row.days_ago = -row.days_left
    return {"today": on, "within_days": within_days,
            "overdue": [r for r in rows if r.state == OVERDUE],
            "due": [r for r in rows if r.state == DUE], "source": DEFAULT_SOURCE}


def notice_days(site_id: int) -> int:
    policy = ChangePolicy.objects.filter(site_id=site_id).first()
    return (policy or ChangePolicy()).revalidation_notice_days


def process_flag(process, *, on: dt.date | None = None) -> dict | None:
    """The oversight state of one process for its pages and dossiers: revalidation overdue
    or due, and open change records. None when there is nothing to flag."""
    on = on or today()
    pid = getattr(process, "pk", process)
    schedule = active_schedules().filter(process_id=pid).first()
    changes = list(ChangeRecord.objects.filter(process_id=pid, state=ChangeState.OPEN)
                   .values_list("pk", "review_path"))
    state = None
    if schedule is not None:
        state = due_state(schedule.due_on, on, notice_days(schedule.process.site_id))
    if state in (None, CURRENT) and not changes:
        return None
    return {
        "state": state, "overdue": state == OVERDUE, "due": state == DUE,
        "due_on": schedule.due_on if schedule else None,
        "days": abs((schedule.due_on - on).days) if schedule else None,
        "approved_on": schedule.approved_on if schedule else None,
        "interval_months": schedule.interval_months if schedule else None,
        "revision_number": schedule.revision.number if schedule else None,
        "open_changes": len(changes),
        "light_only": bool(changes) and all(p == "light" for _, p in changes),
        "on": on, "source": DEFAULT_SOURCE,
    }


def flag_json(flag: dict | None) -> dict | None:
    """The flag as plain JSON (for a dossier's frozen context)."""
    if flag is None:
        return None
    return {k: (v.isoformat() if isinstance(v, dt.date) else v) for k, v in flag.items()}
