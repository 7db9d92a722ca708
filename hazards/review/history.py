"""Histories read a page at a time in SQL: the newest (or the next older) rows of a process's or
a record's audit events, whatever the length of the trail.

Each event table under a process is asked for its next `limit + 1` rows in the order
(time, model, event id) through the index of its scope column (`process_id`, `step_id`, …),
the answers are merged, and only the page's rows get their previous event (for "from → to")
and their context (who, URL, why). A process with 48 000 events answers its newest 50 rows in
the time of its first 50, where reading the whole trail into Python took seconds.

Pages are keyed, not numbered: `before` is the key of the last row shown (older rows follow),
`after` the key of the first (newer rows precede).
"""

from __future__ import annotations

import base64
import binascii
import json
from dataclasses import dataclass

from django.db.models import OuterRef, Q, Subquery
from django.utils.dateparse import parse_datetime

from hazards import keyset
from hazards import models as m
from hazards.review import models as r
from hazards.review.selectors import _event_fields, _with_context, event_model_for

PAGE_SIZE = 50
BAD_KEY = "not a position in this history (follow the `next` or `previous` link)"


class BadHistoryKey(ValueError):
    pass


@dataclass
class HistoryPage:
    rows: list[dict]  # newest first
    older: str | None  # key for the next (older) page
    newer: str | None  # key for the previous (newer) page
    count: int | None


def process_sources(process) -> list[tuple]:
    """(event model, condition) of every table whose events belong to the process."""
    def ids(model, **filters):
        return event_model_for(model).objects.filter(**filters).values("pgh_obj_id")

    steps = ids(m.ReactionStep, process_id=process.pk)
    runs = ids(m.CalorimetryRun, step_id__in=steps)
    tests = ids(m.DecompositionTest, step_id__in=steps)
    revisions = ids(r.ProcessRevision, process_id=process.pk)
    sources = [
        (m.Process, Q(pgh_obj_id=process.pk)),
        (m.ReactionStep, Q(process_id=process.pk)),
        (m.CalorimetryRun, Q(step_id__in=steps)),
        (m.DecompositionTest, Q(step_id__in=steps)),
        (m.DecompositionPeak, Q(test_id__in=tests)),
        (m.CalorimetrySeries, Q(run_id__in=runs)),
        (r.ProcessRevision, Q(process_id=process.pk)),
        (r.Signature, Q(revision_id__in=revisions)),
        (r.Transition, Q(revision_id__in=revisions)),
        (r.Finding, Q(process_id=process.pk)),
        (r.ProcessRole, Q(process_id=process.pk)),
    ]
    return [(event_model_for(model), q) for model, q in sources if event_model_for(model)]


def record_sources(obj) -> list[tuple]:
    event_model = event_model_for(type(obj))
    return [(event_model, Q(pgh_obj_id=obj.pk))] if event_model is not None else []


def _encode(key) -> str:
    at, label, pgh_id = key
    raw = json.dumps([at.isoformat(), label, pgh_id], separators=(",", ":"))
    return base64.urlsafe_b64encode(raw.encode()).decode().rstrip("=")


def decode_key(token: str):
    try:
        at, label, pgh_id = json.loads(base64.urlsafe_b64decode(token + "=" * (-len(token) % 4)))
        parsed = parse_datetime(at)
        if parsed is None or not isinstance(label, str) or type(pgh_id) is not int:
            raise ValueError
    except (binascii.Error, ValueError, TypeError, UnicodeDecodeError):
        raise BadHistoryKey(BAD_KEY) from None
    return parsed, label, pgh_id


def _beyond(label: str, key, older: bool) -> Q:
    """Rows of a table labelled `label` strictly older (or newer) than `key`."""
    at, key_label, key_id = key
    side = "lt" if older else "gt"
    if label == key_label:
        return Q(**{f"pgh_created_at__{side}": at}) | Q(
            pgh_created_at=at, **{f"pgh_id__{side}": key_id}
        )
    ahead = (label < key_label) if older else (label > key_label)
    return Q(**{f"pgh_created_at__{side}e" if ahead else f"pgh_created_at__{side}": at})


def _fetch(event_model, condition, limit: int, key, older: bool) -> list[dict]:
    label = event_model._meta.label
    qs = event_model.objects.filter(condition)
    if key is not None:
        qs = qs.filter(_beyond(label, key, older))
    order = ("-pgh_created_at", "-pgh_id") if older else ("pgh_created_at", "pgh_id")
    fields = _event_fields(event_model)
    events = list(
        qs.order_by(*order).values(
            "pgh_id", "pgh_created_at", "pgh_label", "pgh_obj_id", "pgh_context_id", *fields
        )[: limit + 1]
    )
    for event in events:
        event["_model"] = event_model
        event["_key"] = (event["pgh_created_at"], label, event["pgh_id"])
    return events


def _previous(event_model, events: list[dict]) -> dict:
    """The previous event of the same record for each event on the page (pgh_id -> its
    fields), in one query that looks up each one through the record's index."""
    prev = event_model.objects.filter(
        pgh_obj_id=OuterRef("pgh_obj_id"), pgh_id__lt=OuterRef("pgh_id")
    ).order_by("-pgh_id")
    ids = (
        event_model.objects.filter(pgh_id__in=[e["pgh_id"] for e in events])
        .annotate(prev=Subquery(prev.values("pgh_id")[:1]))
        .values("prev")
    )
    fields = _event_fields(event_model)
    found: dict = {}
    for row in event_model.objects.filter(pgh_id__in=ids).values("pgh_id", "pgh_obj_id", *fields):
        found.setdefault(row["pgh_obj_id"], []).append(row)
    result = {}
    for event in events:
        earlier = [r for r in found.get(event["pgh_obj_id"], []) if r["pgh_id"] < event["pgh_id"]]
        if earlier:
            result[event["pgh_id"]] = max(earlier, key=lambda r: r["pgh_id"])
    return result


def _row(event: dict, before: dict | None) -> dict:
    event_model = event["_model"]
    fields = _event_fields(event_model)
    data = {f: event[f] for f in fields}
    if event["pgh_label"] == "delete":
        changes = {f: {"from": v, "to": None} for f, v in data.items()}
    elif before is None:
        changes = {f: {"from": None, "to": v} for f, v in data.items() if v not in (None, "")}
    else:
        changes = {
            f: {"from": before.get(f), "to": v} for f, v in data.items() if before.get(f) != v
        }
    return {
        "event_id": f"{event_model._meta.label}:{event['pgh_id']}",
        "at": event["pgh_created_at"],
        "model": event_model.pgh_tracked_model._meta.label,
        "object_id": event["pgh_obj_id"],
        "action": event["pgh_label"],
        "context_id": event["pgh_context_id"],
        "changes": changes,
    }


def history_count(sources, bound: int | None = None) -> int | None:
    """Exact number of events up to `bound`, else None; one query."""
    bound = keyset.COUNT_BOUND if bound is None else bound
    parts = [
        event_model.objects.filter(q).order_by().values("pgh_id")[: bound + 1]
        for event_model, q in sources
    ]
    if not parts:
        return 0
    union = parts[0].union(*parts[1:], all=True) if len(parts) > 1 else parts[0]
    n = union.count()  # SELECT COUNT(*) FROM (… UNION ALL …): no row reaches Python
    return n if n <= bound else None


def history_page(
    sources,
    *,
    limit: int = PAGE_SIZE,
    before: str | None = None,
    after: str | None = None,
    count: bool = True,
) -> HistoryPage:
    """The page of events older than `before`, newer than `after`, or the newest."""
    older = after is None
    key = decode_key(before if older else after) if (before or after) else None
    events = [e for event_model, q in sources for e in _fetch(event_model, q, limit, key, older)]
    events.sort(key=lambda e: e["_key"], reverse=older)
    more = len(events) > limit
    events = events[:limit]
    if not older:
        events.reverse()  # newest first
    by_model: dict = {}
    for event in events:
        by_model.setdefault(event["_model"], []).append(event)
    previous = {model: _previous(model, evs) for model, evs in by_model.items()}
    rows = [
        {**_row(event, previous[event["_model"]].get(event["pgh_id"])), "_key": event["_key"]}
        for event in events
    ]
    rows = _with_context(rows)
    rows.sort(key=lambda r: r["_key"], reverse=True)  # newest first, the page's own order
    for row in rows:
        del row["_key"]
    has_older = more if older else key is not None
    has_newer = (key is not None) if older else more
    return HistoryPage(
        rows=rows,
        older=_encode(events[-1]["_key"]) if events and has_older else None,
        newer=_encode(events[0]["_key"]) if events and has_newer else None,
        count=history_count(sources) if count else None,
    )
