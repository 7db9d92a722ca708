"""Which protective measures a revision's steps still lack for endorsement (issue 17 item 2).

The site's `MeasurePolicy` (or its default) names, for each criticality class, groups of
measure kinds of which one must be in a given status; with `failed_check_blocks` a measure
whose own barrier check fails or is unknown does not count. The rule reads the revision's
frozen content, so what blocks the endorsement is exactly what was signed.
"""

from __future__ import annotations

from hazards.models import MeasureKind, MeasurePolicy, MeasureStatus
from hazards.models.measures import STATUS_RANK
from hazards.review.models import RiskAcceptance

_KIND_NAMES = dict(MeasureKind.choices)
_STATUS_NAMES = dict(MeasureStatus.choices)


def policy_of_site(site_id: int) -> MeasurePolicy:
    return MeasurePolicy.objects.filter(site_id=site_id).first() or MeasurePolicy(
        site_id=site_id)


def requirement_key(criticality_class, index: int, group: dict) -> str:
    return f"class {criticality_class} #{index + 1}: {'|'.join(group['any_of'])} >= {group['status']}"


def requirement_text(criticality_class, group: dict) -> str:
    kinds = ", ".join(_KIND_NAMES.get(k, k) for k in group["any_of"])
    return (f"class {criticality_class} requires one of: {kinds}; "
            f"status {_STATUS_NAMES.get(group['status'], group['status']).lower()} or better")


def _checks_by_measure(step: dict) -> dict[int, list[dict]]:
    values = (step.get("indicators") or {}).get("values") or {}
    out: dict[int, list[dict]] = {}
    for check in values.get("barrier_checks") or []:
        out.setdefault(check.get("measure"), []).append(check)
    return out


def step_requirements(step: dict, policy: MeasurePolicy) -> list[dict]:
    """Each requirement of the step's class: met or not, and why (step as in the content)."""
    cls = (step.get("indicators") or {}).get("criticality_class")
    measures = step.get("measures") or []
    checks = _checks_by_measure(step)
    result = []
    for i, group in enumerate(policy.requirements_for(cls)):
        needed = STATUS_RANK[group["status"]]
        candidates = [m for m in measures if m["kind"] in group["any_of"]]
        in_status = [m for m in candidates if STATUS_RANK[m["status"]] >= needed]
        failing = {m["id"]: [c for c in checks.get(m["id"], []) if c.get("result") != "pass"]
                   for m in in_status}
        meeting = [m for m in in_status
                   if not (policy.failed_check_blocks and failing[m["id"]])]
        if meeting:
            why = "met by " + ", ".join(f"{_KIND_NAMES.get(m['kind'], m['kind'])} "
                                        f"({_STATUS_NAMES[m['status']].lower()})"
                                        for m in meeting)
        elif not candidates:
            why = "no such measure is recorded"
        elif not in_status:
            why = "recorded, but " + ", ".join(
                f"{_KIND_NAMES.get(m['kind'], m['kind'])} is {_STATUS_NAMES[m['status']].lower()}"
                for m in candidates)
        else:
            why = "its barrier check does not pass: " + "; ".join(
                f"{c['name']}: {c['result']}" for fs in failing.values() for c in fs)
        result.append({"key": requirement_key(cls, i, group), "text": requirement_text(cls, group),
                       "met": bool(meeting), "reason": why,
                       "measures": [m["id"] for m in candidates]})
    return result


def unmet_requirements(*, content: dict, site_id: int, revision_id: int | None = None,
                       policy: MeasurePolicy | None = None) -> list[dict]:
    """Unmet requirements of every step of `content`, each with its step, and whether a risk
    acceptance of this revision covers it (`accepted`: the acceptance's id or None)."""
    policy = policy or policy_of_site(site_id)
    accepted = {}
    if revision_id is not None:
        accepted = {(a.step_id, a.requirement_key): a.pk
                    for a in RiskAcceptance.objects.filter(revision_id=revision_id)}
    out = []
    for step in content.get("steps", []):
        for req in step_requirements(step, policy):
            if not req["met"]:
                out.append({**req, "step": step["id"], "step_name": step.get("name", ""),
                            "accepted": accepted.get((step["id"], req["key"]))})
    return out
