"""The difference between two revisions, written for people (labels and units)."""

from __future__ import annotations

import re

from hazards.fieldkinds import INDICATOR_KINDS, LABELS, QUANTITY_FIELDS
from hazards.web import display

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


def humanise_diff(rows: list[dict]) -> list[dict]:
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
                    where.append(f"{WHERE[name]} {ident}" if ident else WHERE[name])
        if in_indicators:
            if field in ("inputs_hash", "computed_at") or "inputs" in parts:
                continue  # the inputs themselves are listed as their own rows
            kind = INDICATOR_KINDS.get(field)
            label = f"indicator {field}"
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
    from hazards.review.selectors import INDICATOR_NAMES

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
