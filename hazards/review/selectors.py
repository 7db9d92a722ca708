"""Reads for people: who changed what from which value to which, when and why; and the
difference between two revisions of a process."""

from __future__ import annotations

from datetime import timedelta

from django.apps import apps
from django.conf import settings
from django.contrib.auth import get_user_model
from pghistory.models import Context

from hazards import models as m
from hazards.review import models as r
from hazards.review.audit import event_models
from hazards.review.models import OPEN_STATES, ProcessRevision, ReviewState

MISSING = object()


def event_model_for(model):
    for event_model in event_models():
        if event_model.pgh_tracked_model is model:
            return event_model
    return None


def _event_fields(event_model) -> list[str]:
    return [f.attname for f in event_model._meta.concrete_fields
            if not f.attname.startswith("pgh_")]


def _rows(event_model, **filters) -> list[dict]:
    fields = _event_fields(event_model)
    events = list(
        event_model.objects.filter(**filters)
        .order_by("pgh_id")
        .values("pgh_id", "pgh_created_at", "pgh_label", "pgh_obj_id", "pgh_context_id", *fields)
    )
    previous: dict = {}
    rows = []
    label = event_model.pgh_tracked_model._meta.label
    for event in events:
        data = {f: event[f] for f in fields}
        before = previous.get(event["pgh_obj_id"])
        if event["pgh_label"] == "delete":
            changes = {f: {"from": v, "to": None} for f, v in data.items()}
        elif before is None:
            changes = {f: {"from": None, "to": v} for f, v in data.items() if v not in (None, "")}
        else:
            changes = {f: {"from": before[f], "to": v} for f, v in data.items()
                       if before.get(f, MISSING) != v}
        previous[event["pgh_obj_id"]] = data
        rows.append({
            "event_id": f"{event_model._meta.label}:{event['pgh_id']}",
            "at": event["pgh_created_at"],
            "model": label,
            "object_id": event["pgh_obj_id"],
            "action": event["pgh_label"],
            "context_id": event["pgh_context_id"],
            "changes": changes,
        })
    return rows


def _with_context(rows: list[dict]) -> list[dict]:
    ids = {r["context_id"] for r in rows if r["context_id"]}
    metadata = dict(Context.objects.filter(id__in=ids).values_list("id", "metadata"))
    users = {m.get("user") for m in metadata.values() if m.get("user")}
    names = dict(get_user_model().objects.filter(pk__in=users).values_list("pk", "username"))
    for row in rows:
        meta = metadata.get(row.pop("context_id"), {}) or {}
        row["user"] = names.get(meta.get("user"))
        row["url"] = meta.get("url")
        row["reason"] = meta.get("reason", "")
    rows.sort(key=lambda r: (r["at"], r["event_id"]))
    return rows


def record_history(obj) -> list[dict]:
    """Every audit event of one record, oldest first, with its changes and context."""
    event_model = event_model_for(type(obj))
    if event_model is None:
        return []
    return _with_context(_rows(event_model, pgh_obj_id=obj.pk))


def _ids(rows) -> set:
    return {r["object_id"] for r in rows}


def process_history(process) -> list[dict]:
    """The audit events of a process and of everything under it, oldest first."""
    def rows_of(model, **filters):
        event_model = event_model_for(model)
        return _rows(event_model, **filters) if event_model else []

    rows = rows_of(m.Process, pgh_obj_id=process.pk)
    steps = rows_of(m.ReactionStep, process_id=process.pk)
    runs = rows_of(m.CalorimetryRun, step_id__in=_ids(steps))
    tests = rows_of(m.DecompositionTest, step_id__in=_ids(steps))
    revisions = rows_of(r.ProcessRevision, process_id=process.pk)
    rows += steps + runs + tests
    rows += rows_of(m.DecompositionPeak, test_id__in=_ids(tests))
    rows += rows_of(m.CalorimetrySeries, run_id__in=_ids(runs))
    rows += revisions
    rows += rows_of(r.Signature, revision_id__in=_ids(revisions))
    rows += rows_of(r.Transition, revision_id__in=_ids(revisions))
    rows += rows_of(r.Finding, process_id=process.pk)
    rows += rows_of(r.ProcessRole, process_id=process.pk)
    return _with_context(rows)


def _flatten(value, path: str, out: dict) -> None:
    if isinstance(value, dict):
        for key in sorted(value):
            _flatten(value[key], f"{path}.{key}" if path else key, out)
    elif isinstance(value, list) and value and all(
        isinstance(v, dict) and "id" in v for v in value
    ):
        for item in value:
            _flatten(item, f"{path}[id={item['id']}]", out)
    else:
        out[path] = value


def content_diff(old: dict, new: dict) -> list[dict]:
    """Every leaf that differs between two canonical contents, by path."""
    a, b = {}, {}
    _flatten(old, "", a)
    _flatten(new, "", b)
    rows = []
    for path in sorted(set(a) | set(b)):
        before, after = a.get(path, MISSING), b.get(path, MISSING)
        if before == after:
            continue
        change = "added" if before is MISSING else "removed" if after is MISSING else "changed"
        rows.append({
            "path": path,
            "change": change,
            "from": None if before is MISSING else before,
            "to": None if after is MISSING else after,
        })
    return rows


def revision_diff(older, newer) -> dict:
    """The difference between the contents of two revisions of one process."""
    return {
        "process": older.process_id,
        "from_revision": older.number,
        "to_revision": newer.number,
        "from_sha256": older.content_sha256,
        "to_sha256": newer.content_sha256,
        "changes": content_diff(older.content, newer.content),
    }


# Short names of the indicators, as the pages name them.
INDICATOR_NAMES = {
    "adiabatic_temperature_rise_k": "ΔTad", "mtsr_k": "MTSR", "mtsr_time_s": "time of MTSR",
    "mtt_k": "MTT", "td24_k": "TD24", "tmr_ad_at_mtsr_s": "TMRad at MTSR",
    "severity": "severity", "probability": "probability", "risk_cell": "risk cell",
    "cooling_capacity_w": "cooling capacity", "plant_peak_heat_release_w": "plant peak power",
    "cooling_margin": "cooling margin", "minimum_dosing_time_s": "minimum dosing time",
    "end_pressure_pa": "pressure at MTSR",
}
IN_FORCE = "In force: revision {number}"
NONE_IN_FORCE = "No revision is in force: none has been approved yet"
PENDING = {"drafting": "changes pending in draft {number}",
           "lodged": "changes pending in revision {number}, lodged for review",
           "checked": "changes pending in revision {number}, checked and awaiting approval"}
NOTHING_PENDING = "no changes pending"
DIFFER = "these indicators differ from the approved ones: {items}"
SAME = "the indicators are those approved"


def _step_label(step: dict) -> str:
    return f"step {step.get('sequence')}. {step.get('name')}"


def indicator_differences(approved: dict, current: dict) -> list[dict]:
    """Per step, the indicators (and class) of `current` content that differ from `approved`."""
    before = {s["id"]: s for s in approved.get("steps", [])}
    after = {s["id"]: s for s in current.get("steps", [])}
    out = []
    for sid in [*before, *[i for i in after if i not in before]]:
        old, new = before.get(sid), after.get(sid)
        row = {"step_id": sid, "step": _step_label(new or old), "indicators": {},
               "change": "removed" if new is None else "added" if old is None else "changed"}
        old_ind = (old or {}).get("indicators") or {}
        new_ind = (new or {}).get("indicators") or {}
        old_values, new_values = old_ind.get("values") or {}, new_ind.get("values") or {}
        for key in sorted(set(old_values) | set(new_values)):
            if old_values.get(key) != new_values.get(key):
                row["indicators"][key] = {"approved": old_values.get(key),
                                          "current": new_values.get(key)}
        if old_ind.get("criticality_class") != new_ind.get("criticality_class"):
            row["class"] = {"approved": old_ind.get("criticality_class"),
                            "current": new_ind.get("criticality_class")}
        if row["change"] != "changed" or row["indicators"] or "class" in row:
            out.append(row)
    return out


def approval_status(process) -> dict:
    """Which revision is in force, which one collects changes, and whether its indicators
    differ from the approved ones, with one sentence that says so. Read after reconciling
    (`services.revisions.current_revision`), so that an open draft holds the live content."""
    revisions = list(ProcessRevision.objects.filter(
        process_id=getattr(process, "pk", process),
        state__in=[ReviewState.ENDORSED, *OPEN_STATES]).order_by("number"))
    in_force = next((r for r in revisions if r.state == ReviewState.ENDORSED), None)
    pending = next((r for r in revisions if r.state != ReviewState.ENDORSED), None)
    if in_force is not None and pending is not None and pending.number < in_force.number:
        pending = None
    steps = (indicator_differences(in_force.content, pending.content)
             if in_force is not None and pending is not None else [])
    parts = [IN_FORCE.format(number=in_force.number) if in_force else NONE_IN_FORCE]
    if in_force is not None:
        parts.append(PENDING[pending.state].format(number=pending.number) if pending
                     else NOTHING_PENDING)
        if pending is not None:
            parts.append(DIFFER.format(items="; ".join(
                _describe(row) for row in steps)) if steps else SAME)
    elif pending is not None:
        parts.append(PENDING[pending.state].format(number=pending.number))
    return {
        "in_force": {"id": in_force.pk, "number": in_force.number} if in_force else None,
        "pending": ({"id": pending.pk, "number": pending.number, "state": pending.state}
                    if pending else None),
        "indicators_differ": bool(steps),
        "steps": steps,
        "statement": "; ".join(parts) + ".",
    }


def _describe(row: dict) -> str:
    if row["change"] != "changed":
        return f"{row['step']} ({row['change']})"
    names = [INDICATOR_NAMES.get(k, k) for k in row["indicators"]]
    if "class" in row:
        names.append(f"class {row['class']['approved']} → {row['class']['current']}")
    return f"{row['step']} ({', '.join(names)})"
# --- credentials changed shortly before a signature (issue 18 item 2) ----------------------

CREDENTIALS_CHANGED = ("The signer's password was changed {hours} h before this signature "
                       "(at {at} UTC).")


def credentials_changed_at(signatures) -> dict[int, object]:
    """For each signature, the latest change of its signer's password within
    `EXOLEDGER_CREDENTIAL_CHANGE_HOURS` before it (from the audit trail); absent if none."""

    window = timedelta(hours=settings.CREDENTIAL_CHANGE_HOURS)
    events = apps.get_model("hazards", "UserPasswordEvent").objects
    found = {}
    for sig in signatures:
        at = (events.filter(id=sig.signer_id, pgh_created_at__lte=sig.signed_at,
                            pgh_created_at__gte=sig.signed_at - window)
              .order_by("-pgh_created_at").values_list("pgh_created_at", flat=True).first())
        if at is not None:
            found[sig.pk] = at
    return found


def credentials_note(signature, changed_at) -> str:
    hours = max(0.0, (signature.signed_at - changed_at).total_seconds() / 3600)
    return CREDENTIALS_CHANGED.format(hours=f"{hours:.1f}", at=f"{changed_at:%Y-%m-%d %H:%M}")
