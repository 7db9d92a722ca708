"""Change records: a change to the inputs of an approved step, recorded in the transaction
that recomputes its indicators, and closed by the approval of a new revision.

Every write path (API, forms, admin, CSV import, bulk and queryset updates, raw SQL followed
by `flush_pending`) ends in `hazards.services.indicators.recompute_steps`, which sends
`approved_inputs_changed` for the approved steps it renewed; `record_changes` receives it.
It costs a fixed number of queries however many steps changed.
"""

from __future__ import annotations

import json
import math

from django.contrib.auth import get_user_model
from django.db import connections, transaction
from django.db.models import Q
from pghistory import runtime

from hazards.models import IndicatorSnapshot, Process, ReactionStep
from hazards.oversight import queue
from hazards.oversight.models import (
    ChangeEntry,
    ChangePolicy,
    ChangeRecord,
    ChangeState,
    ReviewPath,
)
from hazards.review.models import Meaning, ProcessRevision, Signature


def flatten(data: dict | None, prefix: str = "") -> dict:
    """Nested inputs as one level of dotted keys (lists compare whole)."""
    out = {}
    for key, value in (data or {}).items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            out.update(flatten(value, f"{name}."))
        else:
            out[name] = value
    return out


def diff(old: dict | None, new: dict | None) -> dict:
    """{key: {"old", "new"}} of every input that differs."""
    a, b = flatten(old), flatten(new)
    return {k: {"old": a.get(k), "new": b.get(k)} for k in sorted(a.keys() | b.keys())
            if a.get(k) != b.get(k)}


def _number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def moved_indicators(old: dict | None, new: dict | None, policy: ChangePolicy) -> dict:
    """{indicator: {"old", "new", "delta", "relative", "beyond_tolerance"}} of every
    indicator whose value changed. Kelvin values compare by absolute difference against the
    temperature tolerance, other numbers relatively; any other change is beyond tolerance."""
    old, new = old or {}, new or {}
    out = {}
    for key in sorted(old.keys() | new.keys()):
        a, b = old.get(key), new.get(key)
        if a == b:
            continue
        row = {"old": a, "new": b, "delta": None, "relative": None, "beyond_tolerance": True}
        if _number(a) and _number(b) and math.isfinite(a) and math.isfinite(b):
            row["delta"] = b - a
            row["relative"] = abs(b - a) / abs(a) if a else None
            if key.endswith("_k"):
                row["beyond_tolerance"] = abs(b - a) > policy.temperature_tolerance_k
            elif row["relative"] is not None:
                row["beyond_tolerance"] = (row["relative"] * 100.0
                                           > policy.relative_tolerance_percent)
        out[key] = row
    return out


def review_path(policy: ChangePolicy, indicators: dict, class_changed: bool) -> str:
    if (policy.light_review_allowed and not class_changed
            and not any(row["beyond_tolerance"] for row in indicators.values())):
        return ReviewPath.LIGHT
    return ReviewPath.FULL


def change_context(using: str = "default") -> dict:
    """Who made the change and why: the pghistory context of this transaction (the request's
    user and URL, the `reason` of the change), read from Python or from the database session
    (where raw SQL may have set it)."""
    tracker = getattr(runtime._tracker, "value", None)
    if tracker is not None:
        return dict(tracker.metadata)
    with connections[using].cursor() as cursor:
        cursor.execute("SELECT current_setting('pghistory.context_metadata', true)")
        raw = cursor.fetchone()[0]
    try:
        data = json.loads(raw) if raw else {}
    except ValueError:
        data = {}
    return data if isinstance(data, dict) else {}


def _user_id(metadata: dict, using: str) -> int | None:
    try:
        uid = int(metadata.get("user"))
    except (TypeError, ValueError):
        return None
    return uid if get_user_model()._base_manager.using(using).filter(pk=uid).exists() else None


def _last_approvals(process_ids, using) -> dict[int, int]:
    """process id -> id of its most recently approved revision."""
    rows = (Signature.objects.using(using)
            .filter(meaning=Meaning.APPROVED, revision__process_id__in=process_ids)
            .order_by("revision__process_id", "-signed_at", "-id")
            .distinct("revision__process_id")
            .values_list("revision__process_id", "revision_id"))
    return dict(rows)


def record_changes(*, steps: dict[int, bool], snapshots: dict, previous: dict,
                   using: str = "default") -> list[ChangeRecord]:
    """Open or extend the change records of approved steps whose inputs were recomputed.

    `steps` maps step id -> whether its inputs now differ from the approved ones. A step
    back on its approved inputs adds an entry to its open record (which stays open: only an
    approval closes it). Returns the records opened.
    """
    ids = [sid for sid in steps if sid in snapshots]
    if not ids:
        return []
    rows = {r["pk"]: r for r in ReactionStep._base_manager.using(using).filter(pk__in=ids)
            .values("pk", "process_id", "process__name", "process__site_id", "sequence",
                    "name", "approved_inputs_hash")}
    open_records = {r.step_id: r for r in ChangeRecord.objects.using(using)
                    .filter(step_id__in=ids, state=ChangeState.OPEN)}
    wanted = [sid for sid in ids if sid in rows and (steps[sid] or sid in open_records)]
    if not wanted:
        return []
    hashes = {rows[sid]["approved_inputs_hash"] for sid in wanted}
    prev_ids = [previous[sid] for sid in wanted if previous.get(sid)]
    old_snaps = list(IndicatorSnapshot.objects.using(using)
                     .filter(Q(pk__in=prev_ids) | Q(step_id__in=wanted, inputs_hash__in=hashes))
                     .order_by("computed_at", "id")
                     .only("id", "step_id", "inputs_hash", "inputs", "values",
                           "criticality_class"))
    by_id = {s.pk: s for s in old_snaps}
    approved_snap = {(s.step_id, s.inputs_hash): s for s in old_snaps}  # latest wins
    site_ids = {rows[sid]["process__site_id"] for sid in wanted}
    policies = {p.site_id: p for p in ChangePolicy.objects.using(using).filter(site_id__in=site_ids)}
    approvals = _last_approvals({rows[sid]["process_id"] for sid in wanted}, using)
    metadata = change_context(using)
    user_id = _user_id(metadata, using)
    reason = str(metadata.get("reason") or "")
    url = str(metadata.get("url") or "")[:500]

    opened, updated, entries = [], [], []
    for sid in wanted:
        row, new = rows[sid], snapshots[sid]
        policy = policies.get(row["process__site_id"]) or ChangePolicy()
        approved = approved_snap.get((sid, row["approved_inputs_hash"]))
        before = by_id.get(previous.get(sid))
        indicators = moved_indicators(approved.values if approved else None, new.values, policy)
        class_before = approved.criticality_class if approved else None
        class_changed = class_before != new.criticality_class
        fields = dict(
            current_inputs_hash=new.inputs_hash,
            changes=diff(approved.inputs if approved else None, new.inputs) if steps[sid] else {},
            indicators=indicators if steps[sid] else {},
            class_before=class_before, class_after=new.criticality_class,
            class_changed=class_changed if steps[sid] else False,
            review_path=review_path(policy, indicators, class_changed),
        )
        record = open_records.get(sid)
        if record is None:
            record = ChangeRecord(
                process_id=row["process_id"], step_id=sid,
                step_label=f"{row['process__name']} / {row['sequence']}. {row['name']}"[:250],
                approved_revision_id=approvals.get(row["process_id"]),
                approved_inputs_hash=row["approved_inputs_hash"], opened_at=new.computed_at,
                opened_by_id=user_id, reason=reason, **fields)
            opened.append(record)
        else:
            for name, value in fields.items():
                setattr(record, name, value)
            updated.append(record)
        entries.append((record, ChangeEntry(
            at=new.computed_at, user_id=user_id, reason=reason, url=url,
            inputs_hash_before=before.inputs_hash if before else "",
            inputs_hash_after=new.inputs_hash,
            changes=diff(before.inputs if before else None, new.inputs),
            back_to_approved=not steps[sid])))
    with transaction.atomic(using=using):
        ChangeRecord.objects.using(using).bulk_create(opened)
        if updated:
            ChangeRecord.objects.using(using).bulk_update(updated, [
                "current_inputs_hash", "changes", "indicators", "class_before", "class_after",
                "class_changed", "review_path"])
        for record, entry in entries:
            entry.record_id = record.pk
        ChangeEntry.objects.using(using).bulk_create([e for _, e in entries])
    if opened:
        queue.approval_lapsed_later({r.approved_revision_id for r in opened
                                      if r.approved_revision_id}, using=using)
    return opened


def close_on_approval(*, revision, signed_at, using: str = "default") -> int:
    """The approval of `revision` closes every open change record of its process (the
    revision's content is the process's state at signing, which includes every change)."""
    return ChangeRecord.objects.using(using).filter(
        process_id=revision.process_id, state=ChangeState.OPEN
    ).update(state=ChangeState.CLOSED, closed_at=signed_at, closed_by_revision=revision)


LIGHT_PATH_USED = ("Light review path: reviewer step not required (site policy, changes within "
                   "tolerance); change records {records} against revision {baseline}.")


def light_path(*, revision, content: dict, lock: bool = False,
               using: str = "default") -> tuple[bool, str | None]:
    """Whether the lodged `revision` (whose content is `content`) may be endorsed without the
    reviewer's step: (whether the site allows the lighter path, the reason to record or None).

    Only when the site's policy allows it, the revision replaces an earlier approved one, the
    process has open change records and every one is on the light path and against that
    approval, and, compared with the approved content, nothing but the steps of those records
    changed, with no indicator beyond the site's tolerances (re-evaluated now) and the same
    criticality class. `lock` takes the policy and record rows (inside the signing
    transaction) so that neither can change before the signature commits."""
    site_id = Process._base_manager.using(using).filter(pk=revision.process_id).values_list(
        "site_id", flat=True).first()
    policies = ChangePolicy.objects.using(using).filter(site_id=site_id)
    records = ChangeRecord.objects.using(using).filter(process_id=revision.process_id,
                                                       state=ChangeState.OPEN).order_by("pk")
    if lock:
        policies, records = policies.select_for_update(), records.select_for_update()
    policy = policies.first()
    if policy is None or not policy.light_review_allowed:
        return False, None
    baseline_id = _last_approvals([revision.process_id], using).get(revision.process_id)
    records = list(records)
    if (baseline_id is None or baseline_id == revision.pk or not records
            or any(r.review_path != ReviewPath.LIGHT or r.class_changed
                   or r.approved_revision_id != baseline_id for r in records)):
        return True, None
    approved = ProcessRevision.objects.using(using).get(pk=baseline_id)
    baseline = approved.content
    if (baseline.get("schema") != content.get("schema")
            or baseline.get("process") != content.get("process")
            or [s["id"] for s in baseline["steps"]] != [s["id"] for s in content["steps"]]):
        return True, None
    by_step = {r.step_id: r for r in records}
    for before, after in zip(baseline["steps"], content["steps"], strict=True):
        if before == after:
            continue
        record, old, new = by_step.get(after["id"]), before["indicators"], after["indicators"]
        if (record is None or old is None or new is None
                or record.current_inputs_hash != new["inputs_hash"]
                or old["criticality_class"] != new["criticality_class"]
                or any(row["beyond_tolerance"] for row in
                       moved_indicators(old["values"], new["values"], policy).values())):
            return True, None
    return True, LIGHT_PATH_USED.format(records=", ".join(str(r.pk) for r in records),
                                        baseline=approved.number)


def on_approved_inputs_changed(sender, *, using="default", steps, snapshots, previous,
                               **kwargs) -> None:
    record_changes(steps=steps, snapshots=snapshots, previous=previous, using=using)
