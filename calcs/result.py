"""A small provenance-carrying result for calculations whose output needs it."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class Result:
    """A value with its unit, the method that produced it, warnings and references.

    ``value`` is an SI float (or ``None`` when it could not be computed);
    ``references`` are keys into :data:`calcs.constants.REFERENCES`.
    """

    value: Any
    unit: str
    method: str
    warnings: tuple[str, ...] = ()
    parameters: dict[str, Any] = field(default_factory=dict)
    references: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-safe dict (non-finite floats become ``None``)."""
        return {
            "value": json_safe(self.value),
            "unit": self.unit,
            "method": self.method,
            "warnings": list(self.warnings),
            "parameters": json_safe(self.parameters),
            "references": list(self.references),
        }


def json_safe(obj: Any) -> Any:
    """Convert tuples, numpy values and non-finite floats into JSON-safe values.

    Parameters
    ----------
    obj : object
        A float, dict, sequence, numpy value or ``None``.

    Returns
    -------
    object
        The same structure with lists for tuples and ``None`` for NaN or inf.

    Examples
    --------
    >>> json_safe({"x": (1.0, float("nan"))})
    {'x': [1.0, None]}
    """
    if obj is None or isinstance(obj, (bool, str, int)):
        return obj
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_safe(v) for v in obj]
    if hasattr(obj, "tolist"):
        return json_safe(obj.tolist())
    return str(obj)
