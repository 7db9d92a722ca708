"""Reads of the pages: current classes, review states, what waits for whom."""

from __future__ import annotations

import datetime as dt

from django.db import connection
from django.db.models import Count, Exists, F, FilteredRelation, Max, OuterRef, Q, Subquery
from django.db.models.functions import Coalesce

from hazards.access import processes_of, visible
from hazards.models import IndicatorSnapshot, Process, ReactionStep
from hazards.review.models import (
    OPEN_STATES,
    Finding,
    FindingStatus,
    ProcessRevision,
    ReviewState,
    Role,
    Signature,
)


def with_current_class(queryset):
    """Steps with `klass`, their current class, read by a join on the current-snapshot index
    (one unique row per step), not a subquery per row."""
    # An inner join (every step has its current snapshot: the recompute guard sees to it),
    # so that PostgreSQL may start from the snapshot's class index when sorting by class.
    return (queryset.alias(current=FilteredRelation("snapshots",
                                                    condition=Q(snapshots__is_current=True)))
            .filter(current__id__isnull=False)
            .annotate(klass=F("current__criticality_class")))


def steps_with_class(user):
    return with_current_class(
        visible(user, ReactionStep.objects.select_related("process", "process__site")))


def in_class(klass: int | None) -> Q:
    """Steps whose current class is `klass` (None: not assigned), as a semi-join on the
    current-snapshot class index."""
    current = IndicatorSnapshot.objects.filter(step=OuterRef("pk"), is_current=True)
    if klass is None:
        return ~Exists(current.filter(criticality_class__isnull=False))
    return Q(Exists(current.filter(criticality_class=klass)))


def review_state_subquery():
    """The state people care about: the open revision's, else the newest revision's."""
    newest_open = ProcessRevision.objects.filter(
        process=OuterRef("pk"), state__in=[s.value for s in OPEN_STATES]).order_by("-number")
    newest = ProcessRevision.objects.filter(process=OuterRef("pk")).order_by("-number")
    return Coalesce(Subquery(newest_open.values("state")[:1]),
                    Subquery(newest.values("state")[:1]))


def processes_with_state(user):
    endorsed = ProcessRevision.objects.filter(process=OuterRef("pk"),
                                              state=ReviewState.ENDORSED)
    return visible(user, Process.objects.select_related("site")).annotate(
        review_state=review_state_subquery(), endorsed=Exists(endorsed))


def waiting_for(user) -> dict:
    """What waits for this person's action, per kind."""
    def on(role):
        return processes_of(user, (role,))

    signed_by_me = Signature.objects.filter(revision=OuterRef("pk"), signer=user)
    base = ProcessRevision.objects.select_related("process", "process__site").annotate(
        signed_by_me=Exists(signed_by_me)).filter(signed_by_me=False).order_by("created_at")
    to_review = base.filter(state=ReviewState.LODGED, process__in=on(Role.REVIEWER))
    to_approve = base.filter(state=ReviewState.CHECKED, process__in=on(Role.APPROVER))
    drafts = base.filter(state=ReviewState.DRAFTING, process__in=on(Role.AUTHOR)).filter(
        Exists(ReactionStep.objects.filter(process=OuterRef("process"))))
    findings = (Finding.objects.filter(owner=user, status=FindingStatus.OPEN)
                .filter(process__in=processes_of(user))
                .select_related("process", "raised_by").order_by("due_date", "id"))
    # Reported done by their owners: the person who raised them checks and settles them.
    to_check = (Finding.objects.filter(raised_by=user, status=FindingStatus.READY_FOR_CHECK)
                .filter(process__in=processes_of(user))
                .select_related("process", "owner").order_by("due_date", "id"))
    return {"to_review": list(to_review), "to_approve": list(to_approve),
            "drafts": list(drafts), "findings": list(findings), "to_check": list(to_check),
            "today": dt.date.today()}


def class_counts(user) -> list[dict]:
    """Steps per class, and processes per the highest class among their steps: two grouped
    queries over the current snapshots, whatever the number of steps."""
    current = IndicatorSnapshot.objects.filter(is_current=True)
    steps = visible(user, current)
    per_step = dict(steps.values_list("criticality_class").annotate(n=Count("id"))
                    .order_by())
    worst = (steps.values("step__process_id").annotate(worst=Max("criticality_class"))
             .order_by())
    per_process = _count_by(worst)
    return [{"klass": value, "count": per_step.get(value, 0),
             "processes": per_process.get(value, 0), "param": value or "none"}
            for value in (5, 4, 3, 2, 1, None)]


def _count_by(worst) -> dict:
    """Processes per highest class, counted in SQL over the grouped subquery."""
    sql, params = worst.query.sql_with_params()
    with connection.cursor() as cursor:
        cursor.execute(f"SELECT w.worst, count(*) FROM ({sql}) w GROUP BY w.worst", params)
        return dict(cursor.fetchall())


def stale_approvals(user):
    return steps_with_class(user).filter(needs_review=True).order_by("process__name", "sequence")


def search(queryset, text: str, *fields: str):
    if not text:
        return queryset
    condition = Q()
    for name in fields:
        condition |= Q(**{f"{name}__icontains": text})
    return queryset.filter(condition)


def current_indicators(step_id) -> dict | None:
    """The values and class of a step's current snapshot (None before the first one)."""
    return (IndicatorSnapshot.objects.filter(step_id=step_id, is_current=True)
            .values("id", "values", "criticality_class").first())
