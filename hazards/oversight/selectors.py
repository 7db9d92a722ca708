"""Reads of oversight: the portfolio of every visible step with its indicators, approval
state and revalidation due date, and its roll-ups per process and per site.

The portfolio is one query per page: the current snapshot is a join on its unique
current-per-step index, its indicators are read out of the snapshot's JSON, and the
approval state and due date are correlated subqueries on per-process unique indexes
(one endorsed revision, one open revision per process), so nothing is read per row.
"""

from __future__ import annotations

import datetime as dt

from django.db.models import (
    BooleanField,
    Case,
    CharField,
    Count,
    F,
    FilteredRelation,
    FloatField,
    IntegerField,
    Max,
    OuterRef,
    Q,
    Subquery,
    Value,
    When,
)
from django.db.models.fields.json import KeyTextTransform
from django.db.models.functions import Cast

from hazards.models import ReactionStep
from hazards.oversight.models import RevalidationSchedule
from hazards.review.access import visible
from hazards.review.models import OPEN_STATES, ProcessRevision, ReviewState

#: Indicators of the portfolio: annotation -> (snapshot value key, quantity kind or None).
PORTFOLIO_VALUES = {
    "mtsr_k": ("mtsr_k", "temperature"),
    "mtt_k": ("mtt_k", "temperature"),
    "td24_k": ("td24_k", "temperature"),
    "tmr_ad_s": ("tmr_ad_at_mtsr_s", "duration_h"),
    "cooling_margin": ("cooling_margin", None),
}

# Approval states of a step's process, as the portfolio filters and names them.
IN_FORCE = "in_force"
PENDING = "pending"
DRAFT_ONLY = "draft_only"
NO_REVISION = "none"
APPROVAL_TEXT = {
    IN_FORCE: "In force",
    PENDING: "In force, changes pending in a draft",
    DRAFT_ONLY: "No approval yet (draft under review)",
    NO_REVISION: "No revision opened",
}


def portfolio_steps(user, *, today: dt.date):
    """Visible steps with their current class and indicators (SI), the approval state of
    their process (`approval`, `in_force_number`, `pending_number`), the revalidation due
    date of the revision in force (`due_on`) and whether it is past (`overdue`)."""
    endorsed = ProcessRevision.objects.filter(
        process=OuterRef("process"), state=ReviewState.ENDORSED
    )
    open_revision = ProcessRevision.objects.filter(
        process=OuterRef("process"), state__in=[s.value for s in OPEN_STATES]
    )
    due = RevalidationSchedule.objects.filter(
        revision__process=OuterRef("process"), revision__state=ReviewState.ENDORSED
    )
    steps = visible(user, ReactionStep.objects.select_related("process", "process__site"))
    qs = (
        steps.alias(current=FilteredRelation("snapshots", condition=Q(snapshots__is_current=True)))
        .filter(current__id__isnull=False)
        .annotate(
            klass=F("current__criticality_class"),
            **{
                name: Cast(KeyTextTransform(key, "current__values"), FloatField())
                for name, (key, _kind) in PORTFOLIO_VALUES.items()
            },
            in_force_number=Subquery(endorsed.values("number")[:1], output_field=IntegerField()),
            pending_number=Subquery(
                open_revision.values("number")[:1], output_field=IntegerField()
            ),
            due_on=Subquery(due.values("due_on")[:1]),
        )
    )
    return qs.annotate(
        approval=Case(
            When(
                Q(in_force_number__isnull=False, pending_number__gt=F("in_force_number")),
                then=Value(PENDING),
            ),
            When(in_force_number__isnull=False, then=Value(IN_FORCE)),
            When(pending_number__isnull=False, then=Value(DRAFT_ONLY)),
            default=Value(NO_REVISION),
            output_field=CharField(),
        ),
        overdue=Case(
            When(due_on__lt=today, then=Value(True)),
            default=Value(False),
            output_field=BooleanField(),
        ),
    )


def portfolio_rollups(steps, *, limit: int = 50) -> dict:
    """Per site and per process of the filtered steps: step count, worst (highest) class,
    steps without a class and steps per class; two grouped queries."""
    per_class = {f"class_{k}": Count("pk", filter=Q(klass=k)) for k in range(1, 6)}
    base = steps.order_by()
    sites = list(
        base.values(code=F("process__site__code"), site_name=F("process__site__name"))
        .annotate(
            steps=Count("pk"),
            worst=Max("klass"),
            unassigned=Count("pk", filter=Q(klass__isnull=True)),
            processes=Count("process", distinct=True),
            **per_class,
        )
        .order_by(F("worst").desc(nulls_last=True), "code")
    )
    processes = list(
        base.values("process_id", process_name=F("process__name"), code=F("process__site__code"))
        .annotate(
            steps=Count("pk"),
            worst=Max("klass"),
            unassigned=Count("pk", filter=Q(klass__isnull=True)),
            **per_class,
        )
        .order_by(F("worst").desc(nulls_last=True), "process_name", "process_id")[: limit + 1]
    )
    return {"sites": sites, "processes": processes[:limit], "more": len(processes) > limit}
