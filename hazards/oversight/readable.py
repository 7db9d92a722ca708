"""Change records written for people (issue 21 item 9): inputs and indicators by their label,
values in display units, people by their printed name; never SI key suffixes or user ids."""

from __future__ import annotations

from hazards.fieldkinds import LABELS, QUANTITY_FIELDS
from hazards.oversight.models import ChangeRecord
from hazards.presenting import KINDS as INDICATOR_KINDS
from hazards.quantities import quantity_text
from hazards.review.selectors import INDICATOR_NAMES
from hazards.review.signing import printed_name

NO_REASON = "(no reason was given)"

# Any model's field name -> its quantity kind (the names do not clash across models).
_KINDS = {name: kind for fields in QUANTITY_FIELDS.values() for name, kind in fields.items()}
_WHERE = {
    "basis": "basis",
    "vessel": "vessel",
    "solvent": "solvent",
    "run": "run",
    "test": "decomposition test",
    "step": "step",
    "series": "series",
}


def label(key: str) -> str:
    """'basis.calorimetry_run' -> 'basis: calorimetry run'; 'process_temperature_k' -> its
    form label."""
    *where, field = key.split(".")
    if field in INDICATOR_NAMES:
        text = INDICATOR_NAMES[field]
    else:
        text = LABELS.get(field) or field.replace("_", " ")
    prefix = ", ".join(_WHERE.get(w, w.replace("_", " ")) for w in where)
    return f"{prefix}: {text}" if prefix else text


def value(key: str, raw) -> str:
    field = key.rsplit(".", 1)[-1]
    kind = _KINDS.get(field) or INDICATOR_KINDS.get(field)
    if raw is None or raw == "":
        return "—"
    if isinstance(raw, bool):
        return "yes" if raw else "no"
    if isinstance(raw, int | float):
        return quantity_text(raw, kind)
    if isinstance(raw, list | dict):
        return f"{len(raw)} item(s)"
    return str(raw)


def rows(changes: dict) -> list[dict]:
    """{key: {"old", "new"}} as [{"label", "old", "new"}] for people."""
    return [
        {
            "key": key,
            "label": label(key),
            "old": value(key, v.get("old")),
            "new": value(key, v.get("new")),
        }
        for key, v in changes.items()
    ]


def indicator_rows(indicators: dict) -> list[dict]:
    return [
        {**row, "beyond_tolerance": indicators[row["key"]].get("beyond_tolerance")}
        for row in rows(indicators)
    ]


def person(user) -> str:
    return printed_name(user) if user is not None else "(no user)"


def sentence(changes: dict) -> str:
    return "; ".join(f"{r['label']}: {r['old']} → {r['new']}" for r in rows(changes))


def describe(record: ChangeRecord) -> str:
    """One paragraph people can read: what changed, which indicators moved, the class."""
    changed = sentence(record.changes)
    moved = [label(k) for k, v in record.indicators.items() if v.get("beyond_tolerance")]
    text = "Changed: " + (changed or "back to the approved inputs") + ". "
    text += ("Indicators moved beyond tolerance: " + ", ".join(moved) + ". " if moved
             else "No indicator moved beyond the site's tolerances. ")
    if record.class_changed:
        text += f"Criticality class {record.class_before} → {record.class_after}. "
    text += f"Reason: {record.reason or NO_REASON}."
    return text
