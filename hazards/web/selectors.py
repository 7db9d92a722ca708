"""Reads of the pages: current classes, review states, what waits for whom."""

from __future__ import annotations

import datetime as dt

from django.db.models import Count, Exists, F, FilteredRelation, OuterRef, Q, Subquery, Sum
from django.db.models.functions import Coalesce

from hazards.models import IndicatorSnapshot, Process, ProcessClassTally, ReactionStep
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
    one row per visible process the snapshot trigger keeps (`ProcessClassTally`): one
    aggregate query, not a read of every step's snapshot. A process without steps counts
    nowhere; one counts as unassigned only when none of its steps has a class."""
    tallies = ProcessClassTally.objects.all()
    if not is_administrator(user):
        tallies = tallies.filter(process__in=processes_of(user))
    columns = ProcessClassTally.COLUMNS
    aggregates = {f"steps_{k}": Sum(column, default=0) for k, column in columns.items()}
    for k in columns:
        # Its worst class is k: a step of class k and none of a higher class.
        higher = Q(**{columns[j]: 0 for j in range(k + 1, 6)})
        aggregates[f"processes_{k}"] = Count(
            "pk", filter=Q(**{f"{columns[k]}__gt": 0}) & higher)
    found = tallies.aggregate(**aggregates)
    return [{"klass": k or None, "count": found[f"steps_{k}"],
             "processes": found[f"processes_{k}"], "param": k or "none"}
            for k in (5, 4, 3, 2, 1, 0)]


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
