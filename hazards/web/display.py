"""How numbers, units, classes and states are written on the pages (one place)."""

from __future__ import annotations

from hazards.fieldkinds import kinds_for
from hazards.quantities import DISPLAY_DIGITS, SPECS, format_number, from_si

# Units as people read them (the API keeps pint's spelling).
HUMAN_UNIT = {
    "degC": "°C",
    "kJ/(kg*K)": "kJ/(kg·K)",
    "W/(m**2*K)": "W/(m²·K)",
    "m**3": "m³",
    "m**2": "m²",
    "dimensionless": "",
}


def human_unit(kind: str) -> str:
    unit = SPECS[kind].canonical_unit
    return HUMAN_UNIT.get(unit, unit)


def number(value, digits: int = DISPLAY_DIGITS) -> str:
    """A number as every page, form, the what-if page and the dossier write it
    (`hazards.quantities.format_number`: one rule)."""
    return format_number(value, digits)


def quantity(si_value, kind: str | None) -> str:
    """An SI magnitude written in the field's canonical unit, e.g. '45 °C'."""
    if si_value is None:
        return "—"
    if kind is None:
        return number(si_value)
    if kind == "mass" and 0 < abs(si_value) < 1:  # lab masses read better in g or mg
        grams = float(si_value) * 1000
        return f"{number(grams)} g" if abs(grams) >= 1 else f"{number(grams * 1000)} mg"
    shown = from_si(float(si_value), kind=kind)
    unit = human_unit(kind)
    return f"{number(shown)} {unit}".strip()


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
    "endorsed": "Endorsed",
    "sent_back": "Sent back",
    "replaced": "Replaced",
    "none": "No revision",
}
