"""What the pages show of protective measures (issue 17 item 4): a step's measures with
their state and barrier checks, the requirements of its class, what blocks an endorsement,
and the measures overdue on the start page."""

from __future__ import annotations

from django.utils import timezone

from hazards.models import IndicatorSnapshot, Measure, MeasureStatus
from hazards.quantities import format_number
from hazards.review.access import visible
from hazards.review.content import record_fields
from hazards.review.models import RiskAcceptance
from hazards.review.requirements import policy_of_site, step_requirements, unmet_requirements


def _number(q: dict) -> str:
    value = q.get("value")
    if value is None:
        return "—"
    return f"{format_number(value)} {q.get('unit') or ''}".strip()


def check_rows(checks: list[dict]) -> list[dict]:
    return [
        {**c, "shown": [(k.replace("_", " "), _number(v)) for k, v in c["numbers"].items()]}
        for c in checks
    ]


def step_measures(step, snapshot: IndicatorSnapshot | None) -> dict:
    """The step page's measures section."""
    measures = list(Measure.objects.filter(step=step).select_related("owner").order_by("id"))
    values = snapshot.values if snapshot else {}
    checks = values.get("barrier_checks") or []
    today = timezone.localdate()
    rows = [
        {
            "m": m,
            "overdue": m.status != MeasureStatus.PROVEN and m.due_date < today,
            "checks": check_rows([c for c in checks if c.get("measure") == m.pk]),
        }
        for m in measures
    ]
    content_step = {
        "indicators": {
            "criticality_class": snapshot.criticality_class if snapshot else None,
            "values": values,
        },
        "measures": [record_fields(m) for m in measures],
    }
    return {
        "rows": rows,
        "requirements": step_requirements(content_step, policy_of_site(step.process.site_id)),
    }


def endorsement_blocks(revision) -> dict:
    """What of the measures blocks the endorsement of `revision`, and the signed
    acceptances recorded on it."""
    if revision is None:
        return {"unmet": [], "acceptances": []}
    unmet = unmet_requirements(
        content=revision.content, site_id=revision.process.site_id, revision_id=revision.pk
    )
    return {
        "unmet": unmet,
        "acceptances": list(
            RiskAcceptance.objects.filter(revision=revision)
            .select_related("step")
            .order_by("signed_at", "id")
        ),
    }


def overdue_measures(user, limit: int = 50) -> list[Measure]:
    """Measures of visible processes past their due date and not yet proven."""
    qs = (
        Measure.objects.filter(due_date__lt=timezone.localdate())
        .exclude(status=MeasureStatus.PROVEN)
        .select_related("step", "step__process", "owner")
        .order_by("due_date", "id")
    )
    return list(visible(user, qs)[:limit])
