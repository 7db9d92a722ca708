"""The one quantity field of the API: `{"value": number, "unit": "..."}` in, SI stored.

Its OpenAPI schema (canonical unit per field, input and output shapes) is in
`hazards.api.schema.QuantityFieldExtension`.
"""

from __future__ import annotations

from rest_framework import serializers

from hazards.quantities import SPECS, QuantityError, display_unit, from_si, parse_quantity


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
        return {"value": from_si(value, kind=self.kind), "unit": display_unit(self.kind)}
