"""How numbers, units, classes and states are written on the pages (one place)."""

from __future__ import annotations

from hazards import quantities
from hazards.fieldkinds import kinds_for
from hazards.quantities import DISPLAY_DIGITS, format_number


def number(value, digits: int = DISPLAY_DIGITS) -> str:
    """A number as every page, form, the what-if page and the dossier write it
    (`hazards.quantities.format_number`: one rule)."""
    return format_number(value, digits)


def human_unit(kind: str) -> str:
    return quantities.human_unit(kind)


def quantity(si_value, kind: str | None) -> str:
    """An SI magnitude written in the field's canonical unit, e.g. '45 °C'
    (`hazards.quantities.quantity_text`: one rule for pages, notifications and dossier)."""
    return quantities.quantity_text(si_value, kind)


def in_person_units(si_value, kind: str | None) -> tuple[str, str] | None:
    """(number, unit) of a value in the person's display units, or None where those are the
    site's standard for its kind (or the value is no number of a known kind)."""
    if kind is None or isinstance(si_value, bool) or not isinstance(si_value, int | float):
        return None
    if quantities.display_unit_label(kind) == quantities.human_unit(kind):
        return None
    shown, unit = quantities.in_display_units(float(si_value), kind)
    return format_number(shown), unit


def field_kind(model, field_name: str) -> str | None:
    return kinds_for(model).get(field_name)


# Criticality classes: a word, a shape and a colour, so grey-scale print and colour-blind
# readers get the same message as everyone else.
CLASS_TEXT = {
    1: ("Class 1", "lowest concern", "circle"),
    2: ("Class 2", "low concern", "square"),
    3: ("Class 3", "medium concern", "triangle"),
    4: ("Class 4", "high concern", "diamond"),
    5: ("Class 5", "highest concern", "octagon"),
}

STATE_TEXT = {
    "drafting": "Draft",
    "lodged": "Lodged for review",
    "checked": "Checked",
    "endorsed": "Approved",
    "sent_back": "Sent back",
    "replaced": "Replaced",
    "none": "No revision",
}
