"""Reads of the pages: current classes, review states, what waits for whom."""

from __future__ import annotations

import datetime as dt

from django.db.models import Exists, OuterRef, Q, Subquery

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


def current_snapshot_subquery(field: str):
    return Subquery(IndicatorSnapshot.objects.filter(step=OuterRef("pk"), is_current=True)
                    .values(field)[:1])


def steps_with_class(user):
    return visible(user, ReactionStep.objects.select_related("process", "process__site")).annotate(
        klass=current_snapshot_subquery("criticality_class"),
    )


def review_state_subquery():
    """The state people care about: the open revision's, else the newest revision's."""
    newest_open = ProcessRevision.objects.filter(
        process=OuterRef("pk"), state__in=[s.value for s in OPEN_STATES]).order_by("-number")
    newest = ProcessRevision.objects.filter(process=OuterRef("pk")).order_by("-number")
    from django.db.models.functions import Coalesce

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
    return {"to_review": list(to_review), "to_approve": list(to_approve),
            "drafts": list(drafts), "findings": list(findings), "today": dt.date.today()}


def class_counts(user) -> list[dict]:
    """Steps per class, and processes per the highest class among their steps."""
    from collections import Counter

    steps = steps_with_class(user)
    per_step = Counter(steps.values_list("klass", flat=True))
    highest: dict[int, int | None] = {}
    for pid, klass in steps.values_list("process_id", "klass"):
        if klass is not None and (highest.get(pid) is None or klass > highest[pid]):
            highest[pid] = klass
        else:
            highest.setdefault(pid, None)
    per_process = Counter(highest.values())
    return [{"klass": value, "count": per_step.get(value, 0),
             "processes": per_process.get(value, 0), "param": value or "none"}
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
