"""The one pint registry of the project, and conversions at the edge.

Everything inside ``calcs`` computes with SI floats; this module is where text
or quantities entered by people become SI floats (``to_si``, ``parse_quantity``)
and where SI floats become display values (``from_si``). ``KINDS`` maps each
quantity kind to its SI unit and its canonical display unit.

Units added to pint's defaults (NIST SP 811 Appendix B factors, exact unless noted):

* gauge pressures as offset units: ``bar_g`` (``barg``) = bar + 1.01325 bar;
  ``psig`` = psi + 14.695949 psi (1 atm = 101 325 Pa = 14.695 949 psi, rounded);
  ``kPa_g`` (``kPag``) = kPa + 101.325 kPa. The offset is one standard
  atmosphere; a site at altitude has a lower ambient pressure, so enter absolute
  pressures there.
* absolute aliases ``bara`` / ``bar_a`` (1 bar = 10^5 Pa) and ``psia``
  (1 psi = 6 894.757 Pa, NIST SP 811 B.8).
* pint's ``kcal`` is the thermochemical kilocalorie, 4 184 J (NIST SP 811 B.8:
  1 cal_th = 4.184 J exactly; the IT calorie is 4.1868 J).
* degree Fahrenheit: T/K = (t/°F + 459.67)·5/9 (NIST SP 811 B.8).
"""

from __future__ import annotations

import math
import re
from functools import lru_cache

import pint

from calcs.errors import CalcInputError

ureg = pint.UnitRegistry()
ureg.define("bar_g = bar; offset: 1.01325 = barg")
ureg.define("psig = psi; offset: 14.695949")
ureg.define("kPa_g = kilopascal; offset: 101.325 = kPag")
ureg.define("bara = bar = bar_a")
ureg.define("psia = psi")
Q_ = ureg.Quantity

#: kind -> (SI unit, canonical display unit)
KINDS: dict[str, tuple[str, str]] = {
    "temperature": ("K", "degC"),
    "temperature_difference": ("K", "K"),
    "mass": ("kg", "kg"),
    "specific_heat_capacity": ("J/(kg*K)", "kJ/(kg*K)"),
    "heat_capacity": ("J/K", "J/K"),
    "energy": ("J", "kJ"),
    "specific_energy": ("J/kg", "kJ/kg"),
    "molar_energy": ("J/mol", "kJ/mol"),
    "specific_power": ("W/kg", "W/kg"),
    "power": ("W", "W"),
    "pressure": ("Pa", "bar"),
    "time": ("s", "min"),
    "duration_h": ("s", "h"),
    "volume": ("m**3", "m**3"),
    "area": ("m**2", "m**2"),
    "heat_transfer_coefficient": ("W/(m**2*K)", "W/(m**2*K)"),
    "heat_transfer_capacity": ("W/K", "W/K"),
    "rate_of_heating": ("K/s", "K/min"),
    "specific_amount": ("mol/kg", "mol/kg"),
    "amount": ("mol", "mol"),
    "molar_mass": ("kg/mol", "g/mol"),
    "density": ("kg/m**3", "kg/m**3"),
    "thermal_conductivity": ("W/(m*K)", "W/(m*K)"),
    "length": ("m", "m"),
    "rate_constant": ("1/s", "1/s"),
    "fraction": ("dimensionless", "dimensionless"),
    "dimensionless": ("dimensionless", "dimensionless"),
}

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
_GAUGE = re.compile(r"\b(bar|psi|kPa)\s*[\(\s]?\s*g\s*\)?$")
_ABS = re.compile(r"\b(bar|psi)\s*[\(\s]\s*a\s*\)?$")


def _normalise_unit(text: str, kind: str) -> str:
    u = text.strip().replace("·", "*").replace("°C", "degC").replace("°F", "degF")
    u = u.replace("℃", "degC").replace("°", "deg").replace("²", "**2").replace("³", "**3")
    u = _GAUGE.sub(lambda m: {"bar": "bar_g", "psi": "psig", "kPa": "kPa_g"}[m.group(1)], u)
    u = _ABS.sub(lambda m: m.group(1) + "a", u)
    if kind != "temperature":
        # a temperature *difference* or a rate: °C and °F step like K and °R
        u = re.sub(r"\bdeg(C|F)\b", r"delta_deg\1", u)
    return u


def _kind(kind: str) -> tuple[str, str]:
    try:
        return KINDS[kind]
    except KeyError:
        raise CalcInputError("kind", kind, f"must be one of {sorted(KINDS)}") from None


@lru_cache(maxsize=512)
def _scale(unit: str, kind: str) -> float | None:
    """Return the SI factor of a multiplicative ``unit``; None for an offset unit."""
    si, _ = _kind(kind)
    try:
        zero = Q_(0.0, unit).to(si).magnitude
        one = Q_(1.0, unit).to(si).magnitude
    except pint.DimensionalityError:
        raise CalcInputError("unit", unit, f"is not a unit of {kind} ({si})") from None
    except (pint.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError):
        raise CalcInputError("unit", unit, "is not a known unit") from None
    except Exception:  # pint raises assorted parser errors on junk text
        raise CalcInputError("unit", unit, "is not a known unit") from None
    return one if zero == 0.0 else None


def to_si(value: float, unit: str, kind: str) -> float:
    """Convert ``value`` in ``unit`` into the SI unit of ``kind``.

    Equation: si = scale·value + offset, the affine map of pint's conversion
    (offset non-zero only for °C, °F and gauge pressures).

    Parameters
    ----------
    value : float
        Magnitude in ``unit``.
    unit : str
        A pint unit expression, e.g. ``"degC"``, ``"bar_g"``, ``"kJ/kg"``.
    kind : str
        A key of ``KINDS`` giving the SI target, e.g. ``"temperature"`` [K].

    Returns
    -------
    float
        The value in the SI unit of ``kind``.

    Validity: any finite value; raises ``CalcInputError`` on a unit of another dimension.

    Examples
    --------
    >>> round(to_si(86, "degF", "temperature"), 4)
    303.15
    >>> to_si(2, "bar_g", "pressure")
    301325.0

    References
    ----------
    NIST SP 811 (2008), Appendix B.
    """
    x = _finite("value", value)
    u = _normalise_unit(unit, kind)
    scale = _scale(u, kind)
    if scale is None:  # offset unit: let pint apply scale and offset exactly
        return float(Q_(x, u).to(KINDS[kind][0]).magnitude)
    return scale * x


def from_si(value_si: float, unit: str, kind: str) -> float:
    """Convert an SI value of ``kind`` into ``unit``.

    Equation: value = (si − offset)/scale, the inverse of :func:`to_si`.

    Parameters
    ----------
    value_si : float
        Magnitude in the SI unit of ``kind``.
    unit : str
        Target pint unit expression.
    kind : str
        A key of ``KINDS``.

    Returns
    -------
    float
        The value in ``unit``.

    Validity: any finite value.

    Examples
    --------
    >>> round(from_si(303.15, "degC", "temperature"), 6)
    30.0
    >>> round(from_si(7200, "h", "duration_h"), 6)
    2.0

    References
    ----------
    NIST SP 811 (2008), Appendix B.
    """
    x = _finite("value_si", value_si)
    u = _normalise_unit(unit, kind)
    scale = _scale(u, kind)
    if scale is None:
        return float(Q_(x, KINDS[kind][0]).to(u).magnitude)
    return x / scale


def display_unit(kind: str) -> str:
    """Return the canonical display unit of ``kind``.

    Parameters
    ----------
    kind : str
        A key of ``KINDS``.

    Returns
    -------
    str
        A pint unit expression.

    Examples
    --------
    >>> display_unit("pressure")
    'bar'

    References
    ----------
    Project convention (CONVENTIONS.md rule 4).
    """
    return _kind(kind)[1]


def parse_quantity(text_or_number: str | float, kind: str, default_unit: str | None = None) -> float:
    """Parse an entered quantity ("30 °C", "2 barg", "5 mW/g") into an SI float.

    Equation: as :func:`to_si`; a bare number is taken in ``default_unit``
    (or the SI unit of ``kind`` when ``default_unit`` is ``None``).

    Parameters
    ----------
    text_or_number : str or float
        Text "<number> <unit>", a bare number, or a pint Quantity.
    kind : str
        A key of ``KINDS``.
    default_unit : str or None
        Unit of a bare number.

    Returns
    -------
    float
        The value in the SI unit of ``kind``.

    Validity: raises ``CalcInputError`` on unparseable text, an unknown unit, a
    unit of the wrong dimension, or a non-finite value.

    Examples
    --------
    >>> round(parse_quantity("30 °C", "temperature"), 2)
    303.15
    >>> parse_quantity("2 bar g", "pressure")
    301325.0
    >>> parse_quantity("5 mW/g", "specific_power")
    5.0
    >>> parse_quantity(120, "specific_energy", "kcal/kg")
    502080.0

    References
    ----------
    NIST SP 811 (2008), Appendix B.
    """
    si, _ = _kind(kind)
    if isinstance(text_or_number, pint.Quantity):
        return to_si(text_or_number.magnitude, str(text_or_number.units), kind)
    if isinstance(text_or_number, (int, float)) and not isinstance(text_or_number, bool):
        return to_si(text_or_number, default_unit or si, kind)
    if not isinstance(text_or_number, str):
        raise CalcInputError("text_or_number", text_or_number, "must be text or a number")
    low = text_or_number.strip().lower()
    if low in {"nan", "inf", "+inf", "-inf", "infinity"} or low.split(" ")[0] in {"nan", "inf"}:
        raise CalcInputError("text_or_number", text_or_number, "must be a finite number")
    m = _NUMBER.match(text_or_number)
    if not m:
        raise CalcInputError("text_or_number", text_or_number, "is not '<number> <unit>'")
    number, unit = m.group(1), m.group(2)
    if not unit:
        unit = default_unit or si
    return to_si(float(number), unit, kind)


def molar_to_specific_energy(j_per_mol: float, molar_mass_kg_per_mol: float) -> float:
    """Convert a molar energy into a specific energy of the same species.

    Equation: e [J/kg] = E_m [J/mol] / M [kg/mol].

    Parameters
    ----------
    j_per_mol : float
        Molar energy [J/mol], e.g. −Δ_rH per mol of the reagent.
    molar_mass_kg_per_mol : float
        Molar mass of that species [kg/mol].

    Returns
    -------
    float
        Specific energy [J/kg] *of that species* (not of the reaction mass).

    Validity: M > 0.

    Examples
    --------
    >>> molar_to_specific_energy(120e3, 0.150)
    800000.0

    References
    ----------
    METHODS.md §10 (units that practitioners enter).
    """
    e = _finite("j_per_mol", j_per_mol)
    m = _finite("molar_mass_kg_per_mol", molar_mass_kg_per_mol)
    if m <= 0:
        raise CalcInputError("molar_mass_kg_per_mol", molar_mass_kg_per_mol, "must be greater than 0")
    return e / m


def _finite(name: str, value: object) -> float:
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise CalcInputError(name, value, "must be a real number") from None
    if not math.isfinite(x):
        raise CalcInputError(name, value, "must be a finite number")
    return x
