"""The one quantity field of the API: `{"value": number, "unit": "..."}` in, SI stored."""

from __future__ import annotations

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from hazards.quantities import SPECS, QuantityError, display_unit, from_si, parse_quantity

QUANTITY_SCHEMA = {
    "oneOf": [
        {
            "type": "object",
            "properties": {
                "value": {"type": "number"},
                "unit": {"type": "string"},
                "molar_mass": {
                    "description": "For a molar heat (kJ/mol): the molar mass it refers to.",
                },
            },
            "required": ["value"],
        },
        {"type": "string", "example": "30 degC"},
        {"type": "number", "description": "In the field's canonical unit."},
    ]
}


@extend_schema_field(QUANTITY_SCHEMA)
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
        try:
            return parse_quantity(data, field=self.field_name, kind=self.kind)
        except QuantityError as exc:
            raise serializers.ValidationError(exc.message, code=exc.code) from None

    def to_representation(self, value):
        if value is None:
            return None
        return {"value": from_si(value, kind=self.kind), "unit": display_unit(self.kind)}
