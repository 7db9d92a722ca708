"""Form edge: a value-and-unit input for every quantity, stored in SI."""

from __future__ import annotations

from django import forms

from hazards.fieldkinds import kinds_for
from hazards.quantities import (
    SPECS,
    QuantityError,
    display_unit,
    from_si,
    human_unit,
    in_display_units,
    parse_quantity,
)

# Kinds whose inputs show a stored value in the person's unit (hazards.quantities.display_units);
# differences and rates keep their canonical unit, since a typed '°F' is read as a temperature.
PREFILLED_KINDS = {"temperature", "power", "capacity", "pressure"}


def in_preferred_unit(si_value: float, kind: str) -> str | None:
    """The stored value written in the person's unit, when reading it back gives exactly the
    stored value (so saving an untouched form changes nothing); otherwise None."""
    if kind not in PREFILLED_KINDS:
        return None
    shown, unit = in_display_units(si_value, kind)
    if unit == human_unit(kind):
        return None
    for digits in (10, 12):  # 10 as the canonical input shows; 12 where 10 would round
        text = f"{shown:.{digits}g} {unit}"
        try:
            if parse_quantity(text, field=kind, kind=kind) == si_value:
                return text
        except QuantityError:
            return None
    return None


class QuantityFormField(forms.CharField):
    """Accepts "30 °C", "86 degF", "2 bar g", or a number in the canonical unit."""

    def __init__(self, *, kind: str, **kwargs):
        self.kind = kind
        unit = display_unit(kind) or "dimensionless"
        kwargs.setdefault("help_text", f"A value with its unit; a bare number is read as {unit}.")
        super().__init__(**kwargs)
        self.widget.attrs.setdefault("inputmode", "decimal")
        self.widget.attrs.setdefault("data-canonical-unit", unit)

    def prepare_value(self, value):
        if isinstance(value, float | int) and not isinstance(value, bool):
            preferred = in_preferred_unit(float(value), self.kind)
            if preferred is not None:
                return preferred
            shown = from_si(float(value), kind=self.kind)
            unit = display_unit(self.kind)
            return f"{shown:.10g} {unit}".strip()
        return value

    def to_python(self, value):
        value = super().to_python(value)
        if value in self.empty_values:
            return None
        try:
            return parse_quantity(value, field=self.label or self.kind, kind=self.kind)
        except QuantityError as exc:
            raise forms.ValidationError(exc.message, code=exc.code) from None


def quantity_formfield(db_field) -> QuantityFormField | None:
    """The quantity input for a stored SI field, or None if the field is no quantity."""
    kind = kinds_for(db_field.model).get(db_field.name)
    if kind is None:
        return None
    assert kind in SPECS
    return QuantityFormField(
        kind=kind,
        required=not (db_field.null or db_field.blank),
        label=db_field.verbose_name.capitalize(),
    )


def quantity_formfield_callback(model):
    """A `formfield_callback` that swaps each SI float field for a quantity input."""

    def callback(field, **kwargs):
        return quantity_formfield(field) or field.formfield(**kwargs)

    return callback
