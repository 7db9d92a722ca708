"""Quantities at the edge: every physical input arrives with a unit and is stored in SI.

Forms, API serializers and CSV import all go through `parse_quantity`, so one rule set
decides what is accepted, and every refusal names the field, the value and the rule.
Conversion factors come from pint's registry (`calcs.units.ureg`), whose definitions follow
NIST SP 811 and ISO 80000; gauge pressures are their own units (`bar_g`, `psig`, `kPa_g`),
so gauge and absolute are never confused.
"""

from __future__ import annotations

import functools
import math
import re
import tokenize
from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from numbers import Real

import pint

from calcs.units import Q_, ureg

ABSOLUTE_ZERO_K = 0.0


class QuantityError(ValueError):
    """A value that cannot be accepted; the message names field, value and rule."""

    def __init__(self, field: str, value, rule: str, code: str = "invalid"):
        self.field, self.value, self.rule, self.code = field, value, rule, code
        super().__init__(f"{field} = {value!r}: {rule}")

    @property
    def message(self) -> str:
        return f"{self.value!r}: {self.rule}"


@dataclass(frozen=True)
class QuantitySpec:
    """How one stored field is written at the edge and what values are physical."""

    si_unit: str
    canonical_unit: str
    minimum: float | None = None  # in SI
    minimum_inclusive: bool = False
    maximum: float | None = None
    maximum_inclusive: bool = True
    rule: str = ""
    accepts_molar: bool = False  # kJ/mol with a molar mass, for specific energies
    # The range a plant record can plausibly hold (SI); outside it a value is a typing or unit
    # mistake, not a measurement. Common practice, no source: generous bounds of our own.
    plausible: tuple[float, float] | None = None

    @property
    def dimensionality(self):
        return ureg.Unit(self.si_unit).dimensionality


TEMPERATURE = QuantitySpec("kelvin", "degC", 0.0, False, rule="must be above absolute zero (0 K)",
                           plausible=(1.0, 3000.0))
# (si unit, canonical unit) of each kind; physical limits per field below.
POSITIVE = "must be greater than zero"
NON_NEGATIVE = "must not be negative"

SPECS: dict[str, QuantitySpec] = {
    "temperature": TEMPERATURE,
    "mass": QuantitySpec("kilogram", "kg", 0.0, False, rule=POSITIVE, plausible=(1e-9, 1e7)),
    "specific_heat_capacity": QuantitySpec("J/(kg*K)", "kJ/(kg*K)", 0.0, False, rule=POSITIVE,
                                           plausible=(100.0, 2e4)),
    "pressure": QuantitySpec(
        "pascal", "bar", 0.0, False, rule="must be an absolute pressure above zero",
        plausible=(1.0, 1e9),
    ),
    "time": QuantitySpec("second", "min", 0.0, False, rule=POSITIVE, plausible=(1e-3, 1e8)),
    "specific_energy": QuantitySpec(
        "J/kg", "kJ/kg", 0.0, True,
        rule="must not be negative (heat released is stored as a positive number)",
        accepts_molar=True,
        plausible=(0.0, 1e8),
    ),
    "fraction": QuantitySpec(
        "dimensionless", "dimensionless", 0.0, True, 1.0, True, rule="must be a fraction in 0..1"
    ),
    "specific_power": QuantitySpec("W/kg", "W/kg", 0.0, True, rule=NON_NEGATIVE,
                                   plausible=(0.0, 1e7)),
    "specific_amount": QuantitySpec("mol/kg", "mol/kg", 0.0, True, rule=NON_NEGATIVE,
                                    plausible=(0.0, 1e4)),
    "heating_rate": QuantitySpec("K/s", "K/min", 0.0, False, rule=POSITIVE,
                                 plausible=(1e-6, 100.0)),
    "molar_energy": QuantitySpec("J/mol", "kJ/mol", 0.0, False, rule=POSITIVE,
                                 plausible=(1.0, 1e7)),
    "volume": QuantitySpec("m**3", "m**3", 0.0, False, rule=POSITIVE, plausible=(1e-9, 1e4)),
    "area": QuantitySpec("m**2", "m**2", 0.0, False, rule=POSITIVE, plausible=(1e-6, 1e5)),
    "heat_transfer_coefficient": QuantitySpec("W/(m**2*K)", "W/(m**2*K)", 0.0, False,
                                              rule=POSITIVE, plausible=(1e-2, 1e5)),
    "phi_factor": QuantitySpec(
        "dimensionless", "dimensionless", 1.0, True, rule="the phi factor is at least 1",
        plausible=(1.0, 100.0),
    ),
    "molar_mass": QuantitySpec("kg/mol", "g/mol", 0.0, False, rule=POSITIVE,
                               plausible=(1e-3, 100.0)),
    "pressure_rate": QuantitySpec("Pa/s", "bar/min", 0.0, True, rule=NON_NEGATIVE),
    "power": QuantitySpec("watt", "W", None, rule=""),
    "temperature_difference": QuantitySpec("kelvin", "K", None, rule=""),
    "duration_h": QuantitySpec("second", "h", 0.0, False, rule=POSITIVE),
    # Design values of protective measures (issue 17).
    "length": QuantitySpec("metre", "mm", 0.0, False, rule=POSITIVE, plausible=(1e-4, 100.0)),
    "density": QuantitySpec("kg/m**3", "kg/m**3", 0.0, False, rule=POSITIVE,
                            plausible=(1e-2, 3e4)),
    "thermal_conductance": QuantitySpec("W/K", "kW/K", 0.0, False, rule=POSITIVE,
                                        plausible=(1e-3, 1e9)),
    "capacity": QuantitySpec("watt", "kW", 0.0, False, rule=POSITIVE, plausible=(1e-3, 1e10)),
    "response_time": QuantitySpec("second", "s", 0.0, False, rule=POSITIVE,
                                  plausible=(1e-3, 1e7)),
    "discharge_coefficient": QuantitySpec("dimensionless", "dimensionless", 0.0, False, 1.0,
                                          True, rule="must be above 0 and at most 1"),
    "activation_energy": QuantitySpec("J/mol", "kJ/mol", 0.0, True, rule=NON_NEGATIVE,
                                      plausible=(0.0, 1e7)),
}

# How units are written in the API's canonical output (pint's own spelling).
DISPLAY = {
    "degC": "degC",
    "kJ/(kg*K)": "kJ/(kg·K)",
    "W/(m**2*K)": "W/(m²·K)",
    "m**3": "m³",
    "m**2": "m²",
    "kg/m**3": "kg/m³",
    "dimensionless": "",
}

_GAUGE = [
    (re.compile(r"\bbar\s*\(?\s*g(auge)?\s*\)?$", re.I), "bar_g"),
    (re.compile(r"\bbarg$", re.I), "bar_g"),
    (re.compile(r"\bkPa\s*\(?\s*g(auge)?\s*\)?$", re.I), "kPa_g"),
    (re.compile(r"\bpsi\s*\(?\s*g(auge)?\s*\)?$", re.I), "psig"),
    (re.compile(r"\bbar\s*\(?\s*a(bs(olute)?)?\s*\)?$", re.I), "bar"),
    (re.compile(r"\bbara$", re.I), "bar"),
    (re.compile(r"\bpsi\s*\(?\s*a(bs(olute)?)?\s*\)?$", re.I), "psi"),
]
_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def normalise_unit(text: str) -> str:
    """Spellings practitioners type, mapped to registry names ('°C', 'bar g', 'mW/g')."""
    unit = text.strip()
    for pattern, name in _GAUGE:
        if pattern.search(unit) and pattern.sub("", unit).strip() == "":
            return name
    unit = unit.replace("°C", "degC").replace("℃", "degC").replace("°F", "degF")
    unit = unit.replace("° C", "degC").replace("° F", "degF").replace("·", "*").replace("²", "**2")
    unit = unit.replace("³", "**3").replace("⁻¹", "**-1")
    return unit


def _finite_number(field: str, value) -> float:
    if isinstance(value, bool) or not isinstance(value, Real):
        raise QuantityError(field, value, "must be a number", "not_a_number")
    number = float(value)
    if not math.isfinite(number):
        raise QuantityError(field, value, "must be a finite number", "not_finite")
    return number


def _unit(field: str, unit_text: str) -> pint.Unit:
    try:
        return ureg.Unit(normalise_unit(unit_text))
    except (pint.errors.PintError, AttributeError, ValueError, TypeError, AssertionError,
            KeyError, SyntaxError, tokenize.TokenError):  # pint's parser raises all of these
        raise QuantityError(field, unit_text, "is not a known unit", "unknown_unit") from None


def _plausible(field: str, shown, si_value: float, spec: QuantitySpec) -> float:
    if spec.plausible is None:
        return si_value
    low, high = spec.plausible
    if not low <= si_value <= high:
        unit = spec.canonical_unit if spec.canonical_unit != "dimensionless" else ""
        shown_low, shown_high = (tidy(to_canonical_exact(v, spec)) for v in (low, high))
        raise QuantityError(
            field, shown,
            f"is outside the plausible range of a plant record ({shown_low:g} to "
            f"{shown_high:g} {unit}".rstrip() + "): check the value and its unit",
            "implausible",
        )
    return si_value


def _check_limits(field: str, shown, si_value: float, spec: QuantitySpec) -> float:
    if spec.minimum is not None:
        low_ok = si_value >= spec.minimum if spec.minimum_inclusive else si_value > spec.minimum
        if not low_ok:
            raise QuantityError(field, shown, spec.rule, "out_of_range")
    if spec.maximum is not None:
        high_ok = si_value <= spec.maximum if spec.maximum_inclusive else si_value < spec.maximum
        if not high_ok:
            raise QuantityError(field, shown, spec.rule, "out_of_range")
    return _plausible(field, shown, si_value, spec)


#: Significant digits a converted quantity keeps: unit factors leave noise in the 16th digit
#: (2.2 bar -> 220000.00000000003 Pa -> 2.2000000000000006 bar), which no measurement has.
SIGNIFICANT_DIGITS = 12


def tidy(value: float) -> float:
    """The value to SIGNIFICANT_DIGITS significant digits: conversion noise taken out."""
    return float(f"{value:.{SIGNIFICANT_DIGITS}g}")


def convert_to_si(field: str, magnitude: float, unit_text: str, spec: QuantitySpec,
                  molar_mass_kg_per_mol: float | None = None) -> float:
    unit = _unit(field, unit_text)
    shown = f"{magnitude:g} {unit_text}"
    quantity = Q_(magnitude, unit)
    target = ureg.Unit(spec.si_unit)
    if spec.accepts_molar and quantity.dimensionality == ureg.Unit("J/mol").dimensionality:
        if molar_mass_kg_per_mol is None:
            raise QuantityError(
                field, shown, "a molar heat needs a molar_mass to convert to kJ/kg", "needs_molar_mass"
            )
        si_value = quantity.to("J/mol").magnitude / molar_mass_kg_per_mol
    else:
        if quantity.dimensionality != target.dimensionality:
            raise QuantityError(
                field, shown,
                f"has the wrong dimension: expected a unit like {spec.canonical_unit}",
                "wrong_dimension",
            )
        si_value = quantity.to(target).magnitude
    if not math.isfinite(si_value):
        raise QuantityError(field, shown, "must be a finite number", "not_finite")
    return _check_limits(field, shown, tidy(si_value), spec)


def parse_quantity(raw, *, field: str, kind: str) -> float:
    """Any accepted way of writing a quantity -> its SI magnitude (float).

    Accepts `{"value": 30, "unit": "degC"}` (optionally with "molar_mass"), a string
    `"30 degC"`/`"30 °C"`, or a bare number in the field's canonical unit.
    """
    spec = SPECS[kind]
    molar_mass = None
    if isinstance(raw, dict):
        unknown = set(raw) - {"value", "unit", "molar_mass"}
        if unknown or "value" not in raw:
            raise QuantityError(
                field, raw, 'must be {"value": number, "unit": "unit"}', "bad_shape"
            )
        magnitude = _finite_number(field, raw["value"])
        unit_text = raw.get("unit") or spec.canonical_unit
        if not isinstance(unit_text, str):
            raise QuantityError(field, raw, "unit must be a string", "bad_shape")
        if raw.get("molar_mass") is not None:
            molar_mass = parse_quantity(raw["molar_mass"], field=f"{field}.molar_mass",
                                        kind="molar_mass")
    elif isinstance(raw, str):
        match = _NUMBER.match(raw)
        if not match:
            if raw.strip().lower() in {"nan", "inf", "-inf", "infinity", "+inf"} or re.match(
                r"^\s*[-+]?(nan|inf)", raw, re.I
            ):
                raise QuantityError(field, raw, "must be a finite number", "not_finite")
            raise QuantityError(field, raw, "must be a number followed by a unit", "not_a_number")
        magnitude = float(match.group(1))
        if not math.isfinite(magnitude):
            raise QuantityError(field, raw, "must be a finite number", "not_finite")
        unit_text = match.group(2) or spec.canonical_unit
    else:
        magnitude = _finite_number(field, raw)
        unit_text = spec.canonical_unit
    return convert_to_si(field, magnitude, unit_text, spec, molar_mass)


def to_canonical_exact(si_value: float, spec: QuantitySpec) -> float:
    """An SI magnitude in the spec's canonical unit, as pint computes it (not tidied)."""
    return float(Q_(si_value, ureg.Unit(spec.si_unit)).to(ureg.Unit(spec.canonical_unit)).magnitude)


def from_si(si_value: float | None, *, kind: str) -> float | None:
    """An SI magnitude -> the field's canonical unit."""
    if si_value is None:
        return None
    return tidy(to_canonical_exact(si_value, SPECS[kind]))



@functools.cache
def _fixed_scale(si_unit: str, unit: str) -> tuple[str, float] | None:
    """How to reach `unit` from `si_unit` exactly: ('div', size of the unit in SI) when the
    unit is the larger, ('mul', units per SI unit) when it is the smaller, None for units
    with an offset (°C, °F), which pint converts itself."""
    if Q_(0.0, ureg.Unit(si_unit)).to(ureg.Unit(unit)).magnitude != 0:
        return None
    size = float(Q_(1.0, ureg.Unit(unit)).to(ureg.Unit(si_unit)).magnitude)
    if size >= 1.0:
        return "div", size
    return "mul", float(Q_(1.0, ureg.Unit(si_unit)).to(ureg.Unit(unit)).magnitude)


def si_to_unit(si_value: float, si_unit: str, unit: str) -> float:
    """An SI magnitude in a fixed unit (the dossier's kW, h, bar abs, %), on pint's registry.

    pint's own float path multiplies by the reciprocal of the unit's size, and 0.001 or 1e-5
    are not exact in binary: 10 075 W becomes 10.075000000000001 kW and prints 10.08 where
    10 075 / 1000 prints 10.07. So the exact factor pint gives is applied the exact way
    round (divide by 1000 W per kW, multiply by 100 % per unit); offset units (°C) go
    through pint, which subtracts 273.15 as a hand conversion would.
    """
    scale = _fixed_scale(si_unit, unit)
    if scale is None:
        return float(Q_(si_value, ureg.Unit(si_unit)).to(ureg.Unit(unit)).magnitude)
    how, factor = scale
    return si_value / factor if how == "div" else si_value * factor

def display_unit(kind: str) -> str:
    unit = SPECS[kind].canonical_unit
    return DISPLAY.get(unit, unit)


def size_text(n_bytes: int) -> str:
    """A size limit as every page, API message and document states it: "4 MiB (4,194,304 bytes)"
    (IEC 80000-13 binary prefixes), the exact byte count always given."""
    mib = n_bytes / 1024**2
    shown = f"{mib:g} MiB" if n_bytes % 1024**2 == 0 else f"{mib:.2f} MiB"
    return f"{shown} ({n_bytes:,} bytes)"


# One rule for every number a person reads, on pages, forms, the what-if page and the PDF
# dossier: DISPLAY_DIGITS significant digits, trailing zeros dropped, plain decimals from
# 1e-4 up to 1e7 and a power of ten written as a reader writes it (2.39·10¹⁰) beyond.
# The API carries more (`tidy`, SIGNIFICANT_DIGITS): there a number is data, not text; and
# a form's input shows the stored value with 10 digits (`QuantityFormField.prepare_value`),
# so that saving a form nobody touched does not round the record.
DISPLAY_DIGITS = 4
_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def scientific(value: float, digits: int = 3) -> str:
    """A number with a power of ten as a reader writes it: 2.39·10¹⁰, 10⁻⁵ (no 'e+10')."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g}"
    exponent = math.floor(math.log10(abs(value)))
    mantissa = round(value / 10**exponent, digits - 1)
    if abs(mantissa) >= 10:  # 9.996e9 rounds to 10.0·10⁹
        mantissa, exponent = mantissa / 10, exponent + 1
    power = "10" + str(exponent).translate(_SUPERSCRIPT)
    if mantissa == 1:
        return power
    if mantissa == -1:
        return "-" + power
    return f"{mantissa:.{digits}g}·{power}"


def format_number(value, digits: int = DISPLAY_DIGITS) -> str:
    """The written form of a number (see DISPLAY_DIGITS): 45.23, 0.01235, 1235, 2.39·10¹⁰."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if not isinstance(value, int | float):
        return str(value)
    if isinstance(value, int) and abs(value) < 10**7:
        return str(value)
    if not math.isfinite(value):
        return "not finite"
    if value == 0:
        return "0"
    value = float(f"{value:.{digits}g}")  # rounding may carry into the next power of ten
    magnitude = math.floor(math.log10(abs(value)))
    if -4 <= magnitude < 7:
        text = f"{value:.{max(digits - 1 - magnitude, 0)}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    return scientific(value, digits)


def format_quantity(value, unit: str, digits: int = DISPLAY_DIGITS) -> str:
    """A number and its unit as people read them: '45.23 °C', '—' when unknown."""
    if value is None:
        return "—"
    return f"{format_number(value, digits)} {unit}".strip()


# Units as people read them on pages, in notifications and in the dossier (the API keeps
# pint's spelling, DISPLAY above).
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


# A person's display units (issue 21): the pages write temperatures, powers and pressures in
# the units a person chose. Only people's pages follow them: the API keeps its canonical
# {value, unit} and the signed dossier the site's standard units (hazards.dossier.view),
# neither of which reads the choice below. `None` is the site's standard: the canonical unit
# of each kind (°C, W or kW for a cooling capacity, bar).
TEMPERATURE_UNITS = {"degC": "°C", "kelvin": "K", "degF": "°F"}
POWER_UNITS = {"watt": "W", "kilowatt": "kW"}
PRESSURE_UNITS = {"bar": "bar", "psi": "psi", "kilopascal": "kPa", "megapascal": "MPa"}


@dataclass(frozen=True)
class DisplayUnits:
    """The units one person reads; each None means the site's standard for that kind."""

    temperature: str | None = None
    power: str | None = None
    pressure: str | None = None

    def __post_init__(self):
        for name, allowed in (("temperature", TEMPERATURE_UNITS), ("power", POWER_UNITS),
                              ("pressure", PRESSURE_UNITS)):
            unit = getattr(self, name)
            if unit is not None and unit not in allowed:
                raise QuantityError(f"{name} unit", unit,
                                    f"must be one of {', '.join(allowed.values())}",
                                    "unknown_unit")


STANDARD_UNITS = DisplayUnits()
_display_units: ContextVar[DisplayUnits] = ContextVar("display_units", default=STANDARD_UNITS)


def current_display_units() -> DisplayUnits:
    return _display_units.get()


@contextmanager
def display_units(units: DisplayUnits) -> Iterator[DisplayUnits]:
    """Write quantities for people in `units` inside the block (one request's pages)."""
    token = _display_units.set(units)
    try:
        yield units
    finally:
        _display_units.reset(token)


# Temperature differences and rates convert as differences: a kelvin and a degree Celsius of
# difference are the same size, a degree Fahrenheit of difference is 1/1.8 K (NIST SP 811
# §B.8); pint's delta units say so, and never add the 273.15 or 459.67 offsets.
_DIFFERENCE = {"degC": ("kelvin", "K"), "kelvin": ("kelvin", "K"),
               "degF": ("delta_degF", "°F")}


def _chosen_unit(kind: str, units: DisplayUnits) -> tuple[str, str] | None:
    """(pint unit, label) of `kind` in the person's units; None for the canonical unit."""
    if kind == "temperature" and units.temperature:
        return units.temperature, TEMPERATURE_UNITS[units.temperature]
    if kind == "temperature_difference" and units.temperature:
        return _DIFFERENCE[units.temperature]
    if kind == "heating_rate" and units.temperature:
        unit, label = _DIFFERENCE[units.temperature]
        return f"{unit}/minute", f"{label}/min"
    if kind in ("power", "capacity") and units.power:
        return units.power, POWER_UNITS[units.power]
    if kind == "pressure" and units.pressure:
        return units.pressure, PRESSURE_UNITS[units.pressure]
    if kind == "pressure_rate" and units.pressure:
        return f"{units.pressure}/minute", f"{PRESSURE_UNITS[units.pressure]}/min"
    return None


def in_display_units(si_value: float, kind: str,
                     units: DisplayUnits | None = None) -> tuple[float, str]:
    """An SI magnitude in the person's unit of its kind: (number, unit label for people)."""
    chosen = _chosen_unit(kind, units or current_display_units())
    if chosen is None:
        return from_si(si_value, kind=kind), human_unit(kind)
    unit, label = chosen
    shown = Q_(si_value, ureg.Unit(SPECS[kind].si_unit)).to(ureg.Unit(unit)).magnitude
    return tidy(float(shown)), label


def display_unit_label(kind: str, units: DisplayUnits | None = None) -> str:
    """The unit label the pages write for `kind` in the person's units ('°F', 'kW')."""
    chosen = _chosen_unit(kind, units or current_display_units())
    return chosen[1] if chosen else human_unit(kind)


def quantity_text(si_value, kind: str | None, units: DisplayUnits | None = None) -> str:
    """An SI magnitude written for people, e.g. '45 °C': the canonical unit of its kind, or
    the person's unit (`display_units`) for temperatures, powers and pressures."""
    if si_value is None:
        return "—"
    if kind is None:
        return format_number(si_value)
    if kind == "mass" and 0 < abs(si_value) < 1:  # lab masses read better in g or mg
        grams = float(si_value) * 1000
        return (f"{format_number(grams)} g" if abs(grams) >= 1
                else f"{format_number(grams * 1000)} mg")
    shown, unit = in_display_units(float(si_value), kind, units)
    return f"{format_number(shown)} {unit}".strip()
