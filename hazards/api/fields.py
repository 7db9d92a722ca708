"""The one quantity field of the API: `{"value": number, "unit": "..."}` in, SI stored.

Its OpenAPI schema (canonical unit per field, input and output shapes) is in
`hazards.api.schema.QuantityFieldExtension`.
"""

from __future__ import annotations

from functools import cache

from rest_framework import serializers

from hazards.quantities import (
    SPECS,
    QuantityError,
    display_unit,
    parse_quantity,
    tidy,
    to_canonical_exact,
)


@cache
def _linear(kind: str) -> tuple[float, float]:
    """(a, b) with canonical = a·si + b, from the registry once per kind (pint is slow per
    value, and lists render thousands of quantities)."""
    # The exact factors (from_si rounds its result to SIGNIFICANT_DIGITS; a rounded factor
    # would put noise back into every value).
    spec = SPECS[kind]
    b = to_canonical_exact(0.0, spec)
    a = (to_canonical_exact(1.0, spec) - b if b == 0.0
         else (to_canonical_exact(1000.0, spec) - b) / 1000.0)
    return a, b


def canonical(value: float | None, kind: str) -> float | None:
    """An SI magnitude in the kind's canonical unit (as `from_si`, without pint per call)."""
    if value is None:
        return None
    a, b = _linear(kind)
    return tidy(value * a + b if a != 1.0 else value + b)


class QuantityField(serializers.Field):
    """A physical quantity; the canonical unit is documented in the schema for each field."""

    default_error_messages = {"invalid": "{message}"}

    def __init__(self, kind: str, **kwargs):
        self.kind = kind
        spec = SPECS[kind]
        kwargs.setdefault(
            "help_text",
            f"Canonical unit: {display_unit(kind) or 'dimensionless'}. "
            f"Rule: {spec.rule or 'any finite value'}.",
        )
        super().__init__(**kwargs)

    def to_internal_value(self, data):
        if isinstance(data, dict) and "molar_mass" in data and not SPECS[self.kind].accepts_molar:
            raise serializers.ValidationError(
                'must be {"value": number, "unit": "unit"}; molar_mass applies only to heats',
                code="bad_shape",
            )
        try:
            return parse_quantity(data, field=self.field_name, kind=self.kind)
        except QuantityError as exc:
            # The problem document gives field and value; the message is the rule, prefixed
            # by the part of the quantity it concerns when that is not the field itself.
            prefix = ""
            if exc.field != self.field_name and exc.field.startswith(f"{self.field_name}."):
                prefix = exc.field[len(self.field_name) + 1:] + ": "
            raise serializers.ValidationError(prefix + exc.rule, code=exc.code) from None

    def to_representation(self, value):
        if value is None:
            return None
        return {"value": canonical(value, self.kind), "unit": display_unit(self.kind)}
