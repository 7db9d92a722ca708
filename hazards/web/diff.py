"""The difference between two revisions, written for people (labels and units)."""

from __future__ import annotations

import re

from hazards.fieldkinds import LABELS, QUANTITY_FIELDS
from hazards.presenting import KINDS as INDICATOR_KINDS
from hazards.review.selectors import INDICATOR_NAMES, indicator_differences
from hazards.web import display
from hazards.web.indicators import parameter_row

# Collection in the revision content -> model name in hazards.fieldkinds.
COLLECTIONS = {"steps": "reactionstep", "calorimetry_runs": "calorimetryrun",
               "decomposition_tests": "decompositiontest", "peaks": "decompositionpeak",
               "series": "calorimetryseries", "process": "process", "measures": "measure"}
WHERE = {"steps": "step", "calorimetry_runs": "calorimetry run",
         "decomposition_tests": "decomposition test", "peaks": "DSC peak", "series": "series",
         "measures": "protective measure"}
_PART = re.compile(r"^([a-z_]+)(?:\[id=(\d+)\])?$")


def _show(value, kind):
    if isinstance(value, int | float) and not isinstance(value, bool) and kind:
        return display.quantity(value, kind)
    if isinstance(value, list | dict):
        return f"{len(value)} item(s)"
    return "—" if value in (None, "") else str(value)


def record_names(*contents: dict | None) -> dict[tuple[str, str], str]:
    """(collection, id) -> the name the pages give that record ("step 2. Quench",
    "calorimetry run 1 (2026-05-02)"), read from revision contents (the later content wins,
    so a renamed step carries its new name); never a database id."""
    names: dict[tuple[str, str], str] = {}

    def dated(kind, n, item, date_key):
        extra = [v for v in (item.get("method"), item.get(date_key)) if v]
        return f"{kind} {n}" + (f" ({', '.join(str(v) for v in extra)})" if extra else "")

    for content in contents:
        for step in (content or {}).get("steps") or []:
            label = f"step {step.get('sequence')}. {step.get('name')}"
            names[("steps", str(step.get("id")))] = label
            for n, run in enumerate(step.get("calorimetry_runs") or [], start=1):
                names[("calorimetry_runs", str(run.get("id")))] = dated(
                    "calorimetry run", n, run, "run_date")
                series = run.get("series")
                if isinstance(series, dict) and "id" in series:
                    names[("series", str(series["id"]))] = "series"
            for n, measure in enumerate(step.get("measures") or [], start=1):
                kind = str(measure.get("kind") or "").replace("_", " ")
                names[("measures", str(measure.get("id")))] = (
                    f"protective measure {n}" + (f" ({kind})" if kind else ""))
            for n, test in enumerate(step.get("decomposition_tests") or [], start=1):
                names[("decomposition_tests", str(test.get("id")))] = dated(
                    "decomposition test", n, test, "test_date")
                for m, peak in enumerate(test.get("peaks") or [], start=1):
                    names[("peaks", str(peak.get("id")))] = f"peak {m}"
    return names


def _texts(value) -> bool:
    return isinstance(value, list) and all(isinstance(v, str) for v in value)


def humanise_diff(rows: list[dict], names: dict | None = None) -> list[dict]:
    """Content differences as labelled rows in display units; `names` (from `record_names`)
    names each record as the pages do instead of by its id."""
    names = names or {}
    out = []
    for row in rows:
        parts = row["path"].split(".")
        where, model, kind, field = [], None, None, parts[-1]
        in_indicators = "indicators" in parts
        for part in parts[:-1]:
            match = _PART.match(part)
            if not match:
                continue
            name, ident = match.groups()
            if name in COLLECTIONS:
                model = COLLECTIONS[name]
                if name in WHERE:
                    where.append(names.get((name, ident)) or (
                        f"{WHERE[name]} {ident}" if ident else WHERE[name]))
        if in_indicators:
            if field in ("inputs_hash", "computed_at") or "inputs" in parts:
                continue  # the inputs themselves are listed as their own rows
            if "parameters" in parts:
                before, after = (parameter_row(field, row[k]) if row[k] is not None else None
                                 for k in ("from", "to"))
                shown = [f"{r['value']} {r['unit']}".strip() if r else "—"
                         for r in (before, after)]
                out.append({"where": ", ".join(where) or "process",
                            "label": (before or after)["label"], "change": row["change"],
                            "from": shown[0], "to": shown[1], "path": row["path"]})
                continue
            if _texts(row["from"]) and _texts(row["to"]):
                gone = [w for w in row["from"] if w not in row["to"]]
                new = [w for w in row["to"] if w not in row["from"]]
                out.append({"where": ", ".join(where) or "process",
                            "label": field.replace("_", " ") + " (only in one revision)",
                            "change": row["change"], "from": " · ".join(gone) or "—",
                            "to": " · ".join(new) or "—", "path": row["path"],
                            "from_list": gone, "to_list": new})
                continue
            kind = INDICATOR_KINDS.get(field)
            label = ("class" if field == "criticality_class"
                     else INDICATOR_NAMES.get(field, field.replace("_", " ")))
        else:
            kind = QUANTITY_FIELDS.get(model or "", {}).get(field)
            label = LABELS.get(field, field.replace("_", " "))
        out.append({"where": ", ".join(where) or "process", "label": label,
                    "change": row["change"], "from": _show(row["from"], kind),
                    "to": _show(row["to"], kind), "path": row["path"]})
    return out


UNCHANGED = "The indicators did not change."
CHANGED = "The indicators changed: {items}."
FIRST = "The indicators were computed for the first time."


def indicator_change_text(before: dict | None, after: dict | None) -> str:
    """One sentence: which indicators (and the class) moved from `before` to `after`, each a
    current snapshot as {"values", "criticality_class"} or None, in display units."""
    if after is None and before is None:
        return UNCHANGED
    if before is None:
        return FIRST
    old, new = before.get("values") or {}, (after or {}).get("values") or {}
    items = []
    for key in sorted(set(old) | set(new)):
        if old.get(key) == new.get(key) or key not in INDICATOR_NAMES:
            continue
        kind = INDICATOR_KINDS.get(key)
        items.append(f"{INDICATOR_NAMES[key]} {_indicator(old.get(key), kind)} → "
                     f"{_indicator(new.get(key), kind)}")
    a, b = before.get("criticality_class"), (after or {}).get("criticality_class")
    if a != b:
        items.append(f"class {a or '—'} → {b or '—'}")
    return CHANGED.format(items="; ".join(items)) if items else UNCHANGED


def _indicator(value, kind) -> str:
    if isinstance(value, int | float) and not isinstance(value, bool):
        return display.quantity(value, kind)
    return _show(value, kind)


def revision_summary(old: dict, new: dict) -> list[dict]:
    """Per step whose class or indicators differ between two revision contents: its name as
    the pages give it, whether it was added or removed, and each changed indicator with
    both values in display units."""
    out = []
    for row in indicator_differences(old, new):
        items = [{"name": INDICATOR_NAMES.get(key, key.replace("_", " ")),
                  "from": _indicator(v["approved"], INDICATOR_KINDS.get(key)),
                  "to": _indicator(v["current"], INDICATOR_KINDS.get(key))}
                 for key, v in row["indicators"].items()]
        klass = row.get("class")
        out.append({"step": row["step"][:1].upper() + row["step"][1:], "change": row["change"],
                    "class_from": klass["approved"] if klass else None,
                    "class_to": klass["current"] if klass else None,
                    "class_changed": klass is not None, "items": items})
    return out


def grouped(rows: list[dict]) -> list[dict]:
    """Humanised rows grouped by the record they belong to, in order of first appearance."""
    groups: dict[str, list] = {}
    for row in rows:
        groups.setdefault(row["where"], []).append(row)
    return [{"where": where, "rows": items} for where, items in groups.items()]
