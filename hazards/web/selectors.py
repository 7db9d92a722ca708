"""Reads of the pages: current classes, review states, what waits for whom."""

from __future__ import annotations

import datetime as dt

from django.db import connection
from django.db.models import Exists, F, FilteredRelation, OuterRef, Q, Subquery
from django.db.models.functions import Coalesce

from hazards.models import IndicatorSnapshot, Process, ProcessClassCount, ReactionStep
from hazards.review.access import is_administrator, processes_of, visible
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


def review_state_subquery():
    """The state people care about: the open revision's, else the newest revision's."""
    newest_open = ProcessRevision.objects.filter(
        process=OuterRef("pk"), state__in=[s.value for s in OPEN_STATES]).order_by("-number")
    newest = ProcessRevision.objects.filter(process=OuterRef("pk")).order_by("-number")
    return Coalesce(Subquery(newest_open.values("state")[:1]),
                    Subquery(newest.values("state")[:1]))


def processes_with_state(user):
    """Processes with `review_state` (that of `review_state_subquery`) read from the row the
    revision triggers keep (`ProcessListState`), an inner join, so that a list sorted or
    filtered by state walks the (state, name, process) index from its start."""
    endorsed = ProcessRevision.objects.filter(process=OuterRef("pk"),
                                              state=ReviewState.ENDORSED)
    return (visible(user, Process.objects.select_related("site"))
            .filter(list_state__isnull=False)
            .annotate(review_state=F("list_state__review_state"), endorsed=Exists(endorsed)))


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
    """Steps per class, and processes per the highest class among their steps, from the
    per-process counts the snapshot trigger keeps (`ProcessClassCount`): one grouped query
    over a few rows per visible process, not over every step's snapshot."""
    counts = ProcessClassCount.objects.filter(steps__gt=0)
    if not is_administrator(user):
        counts = counts.filter(process__in=processes_of(user))
    with connection.cursor() as cursor:
        sql, params = counts.values("process_id", "klass", "steps").query.sql_with_params()
        # Per class: steps and processes whose highest class it is (0: no class assigned;
        # a process counts as unassigned only when none of its steps has a class).
        cursor.execute(
            f"""
            WITH c AS ({sql}),
            worst AS (SELECT process_id, max(klass) AS klass FROM c GROUP BY process_id)
            SELECT k.klass, coalesce(s.steps, 0), coalesce(w.processes, 0)
            FROM (SELECT DISTINCT klass FROM c) k
            LEFT JOIN (SELECT klass, sum(steps) AS steps FROM c GROUP BY klass) s
                 ON s.klass = k.klass
            LEFT JOIN (SELECT klass, count(*) AS processes FROM worst GROUP BY klass) w
                 ON w.klass = k.klass
            """,
            params,
        )
        found = {klass or None: (int(steps), processes)
                 for klass, steps, processes in cursor.fetchall()}
    return [{"klass": value, "count": found.get(value, (0, 0))[0],
             "processes": found.get(value, (0, 0))[1], "param": value or "none"}
            for value in (5, 4, 3, 2, 1, None)]


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
