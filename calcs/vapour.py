"""Vapour pressure and boiling point at pressure (METHODS.md §5.1-5.2).

Two sources of a correlation:

* an Antoine set entered with its log base, pressure unit, temperature unit and
  validity range (:class:`AntoineInputs`);
* the Poling Antoine dataset of the ``chemicals`` package, looked up by CAS
  number (``chemicals.vapor_pressure.Psat_data_AntoinePoling``; log10(P/Pa) =
  A − B/(T/K + C)) and cached per CAS.

A boiling point outside the validity range is still returned, with a warning
from :func:`extrapolation_warning`. Clausius-Clapeyron is provided for a quick
check with a constant enthalpy of vaporisation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

from calcs.constants import T_ZERO_C, R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite,
    require_positive,
)
from calcs.units import to_si

REFERENCES = ("poling2001",)


@dataclass(frozen=True)
class AntoineInputs:
    """An Antoine set: log_b(P/[pressure_unit]) = a − b/(T/[temperature_unit] + c).

    ``log_base`` is "10" or "e"; ``pressure_unit`` a pint unit ("Pa", "kPa",
    "bar", "mmHg"); ``temperature_unit`` "K" or "degC"; ``t_min_k`` and
    ``t_max_k`` the validity range [K] (``None`` when unknown).
    """

    a: float
    b: float
    c: float
    log_base: str = "10"
    pressure_unit: str = "Pa"
    temperature_unit: str = "K"
    t_min_k: float | None = None
    t_max_k: float | None = None
    source: str = "entered Antoine set"


@lru_cache(maxsize=64)
def _pascal_per(unit: str) -> float:
    return to_si(1.0, unit, "pressure")


def _check(antoine: AntoineInputs) -> tuple[float, float, float, float, float]:
    if antoine.log_base not in ("10", "e"):
        raise CalcInputError("log_base", antoine.log_base, "must be '10' or 'e'")
    if antoine.temperature_unit not in ("K", "degC"):
        raise CalcInputError("temperature_unit", antoine.temperature_unit, "must be 'K' or 'degC'")
    a = require_finite("a", antoine.a)
    b = require_finite("b", antoine.b)
    c = require_finite("c", antoine.c)
    ln_base = math.log(10.0) if antoine.log_base == "10" else 1.0
    t_shift = T_ZERO_C if antoine.temperature_unit == "degC" else 0.0
    return a, b, c, ln_base, t_shift


def antoine_vapour_pressure(temperature_k: float, antoine: AntoineInputs) -> float:
    """Vapour pressure from an Antoine set with its base and units.

    Equation: log_b(P/P_unit) = A − B/(T/T_unit + C).

    Parameters
    ----------
    temperature_k : float
        Temperature [K].
    antoine : AntoineInputs
        The coefficient set with log base, units and validity range.

    Returns
    -------
    float
        Vapour pressure [Pa].

    Validity: inside [t_min_k, t_max_k] of the set; see :func:`extrapolation_warning`.

    Examples
    --------
    >>> water = AntoineInputs(10.11564, 1687.537, -42.98, "10", "Pa", "K", 273.2, 473.2)
    >>> round(antoine_vapour_pressure(373.15, water))
    101047

    References
    ----------
    Poling, Prausnitz, O'Connell 2001 (Antoine form); METHODS.md §5.1.
    """
    t = require_absolute_temperature("temperature_k", temperature_k)
    a, b, c, ln_base, t_shift = _check(antoine)
    return math.exp(ln_base * (a - b / (t - t_shift + c))) * _pascal_per(antoine.pressure_unit)


def antoine_boiling_point(pressure_pa: float, antoine: AntoineInputs) -> float:
    """Boiling temperature at an absolute pressure from an Antoine set.

    Equation: T/T_unit = B/(A − log_b(P/P_unit)) − C.

    Parameters
    ----------
    pressure_pa : float
        Absolute pressure [Pa].
    antoine : AntoineInputs
        The coefficient set with log base, units and validity range.

    Returns
    -------
    float
        Boiling temperature [K].

    Validity: inside [t_min_k, t_max_k] of the set; see :func:`extrapolation_warning`.

    Examples
    --------
    >>> water = AntoineInputs(10.11564, 1687.537, -42.98, "10", "Pa", "K", 273.2, 473.2)
    >>> round(antoine_boiling_point(101325.0, water) - 273.15, 3)  # METHODS.md C5.1
    100.077

    References
    ----------
    Poling, Prausnitz, O'Connell 2001; METHODS.md §5.1.
    """
    p = require_positive("pressure_pa", pressure_pa)
    a, b, c, ln_base, t_shift = _check(antoine)
    log_p = math.log(p / _pascal_per(antoine.pressure_unit)) / ln_base
    if log_p >= a:
        raise CalcInputError("pressure_pa", pressure_pa, "is beyond the Antoine set's asymptote")
    return b / (a - log_p) - c + t_shift


def extrapolation_warning(temperature_k: float, antoine: AntoineInputs) -> str | None:
    """Warning text when a temperature lies outside an Antoine set's validity range.

    Equation: warn when T < t_min_k or T > t_max_k.

    Parameters
    ----------
    temperature_k : float
        Temperature evaluated [K].
    antoine : AntoineInputs
        The set with its validity range.

    Returns
    -------
    str or None
        The warning, or ``None`` inside the range (or when no range is known).

    Validity: any temperature.

    Examples
    --------
    >>> s = AntoineInputs(9.05043, 1327.62, -55.525, "10", "Pa", "K", 286.44, 409.61)
    >>> extrapolation_warning(427.26, s)[:60]
    'solvent vapour-pressure correlation extrapolated beyond its '

    References
    ----------
    METHODS.md §5.1 (always check the T range).
    """
    lo, hi = antoine.t_min_k, antoine.t_max_k
    if (lo is not None and temperature_k < lo) or (hi is not None and temperature_k > hi):
        return (
            "solvent vapour-pressure correlation extrapolated beyond its validity range "
            f"({antoine.source}: {_k(lo)} to {_k(hi)}; evaluated at {temperature_k:.2f} K)"
        )
    return None


def _k(x: float | None) -> str:
    return "?" if x is None else f"{x:.2f} K"


@lru_cache(maxsize=256)
def antoine_from_chemicals(cas: str) -> AntoineInputs | None:
    """Antoine set of a compound from the Poling dataset of ``chemicals``, by CAS number.

    Equation: log10(P/Pa) = A − B/(T/K + C) with the dataset's A, B, C, Tmin, Tmax.

    Parameters
    ----------
    cas : str
        CAS registry number, e.g. "108-88-3" (toluene).

    Returns
    -------
    AntoineInputs or None
        The set, or ``None`` when the dataset has no entry.

    Validity: the dataset's Tmin-Tmax range for each compound.

    Examples
    --------
    >>> antoine_from_chemicals("108-88-3").t_max_k
    409.61

    References
    ----------
    Poling, Prausnitz, O'Connell 2001, via chemicals.vapor_pressure.Psat_data_AntoinePoling.
    """
    # chemicals reads its Antoine table (~0.2 s) only when a CAS number is looked up.
    from chemicals.vapor_pressure import Psat_data_AntoinePoling as data  # noqa: PLC0415 — lazy data

    if cas not in data.index:
        return None
    row = data.loc[cas]
    return AntoineInputs(
        float(row["A"]), float(row["B"]), float(row["C"]), "10", "Pa", "K",
        float(row["Tmin"]), float(row["Tmax"]),
        source=f"Poling Antoine set via chemicals, CAS {cas} ({str(row['Chemical']).strip()})",
    )


def clausius_clapeyron_temperature(
    temperature_1_k: float, pressure_1_pa: float, pressure_2_pa: float,
    enthalpy_of_vaporisation_j_per_mol: float,
) -> float:
    """Boiling temperature at P₂ from a known point (T₁, P₁), integrated Clausius-Clapeyron.

    Equation: 1/T₂ = 1/T₁ − R·ln(P₂/P₁)/ΔH_vap.

    Parameters
    ----------
    temperature_1_k : float
        Known boiling temperature T₁ [K].
    pressure_1_pa : float
        Pressure at T₁ [Pa].
    pressure_2_pa : float
        Target pressure P₂ [Pa].
    enthalpy_of_vaporisation_j_per_mol : float
        ΔH_vap, taken constant [J/mol].

    Returns
    -------
    float
        T₂ [K].

    Validity: ideal vapour, constant ΔH_vap; a few tenths of a kelvin over a few bar.

    Examples
    --------
    >>> round(clausius_clapeyron_temperature(373.124, 101325.0, 2e5, 40.65e3), 3)  # C5.2
    393.547

    References
    ----------
    METHODS.md §5.1; standard thermodynamics.
    """
    t1 = require_absolute_temperature("temperature_1_k", temperature_1_k)
    p1 = require_positive("pressure_1_pa", pressure_1_pa)
    p2 = require_positive("pressure_2_pa", pressure_2_pa)
    h = require_positive("enthalpy_of_vaporisation_j_per_mol", enthalpy_of_vaporisation_j_per_mol)
    inv = 1.0 / t1 - R * math.log(p2 / p1) / h
    if inv <= 0.0:
        raise CalcInputError("pressure_2_pa", pressure_2_pa, "gives no finite temperature")
    return 1.0 / inv


def clausius_clapeyron_pressure(
    temperature_1_k: float, pressure_1_pa: float, temperature_2_k: float,
    enthalpy_of_vaporisation_j_per_mol: float,
) -> float:
    """Vapour pressure at T₂ from a known point (T₁, P₁), integrated Clausius-Clapeyron.

    Equation: P₂ = P₁·exp[−(ΔH_vap/R)(1/T₂ − 1/T₁)].

    Parameters
    ----------
    temperature_1_k : float
        T₁ [K].
    pressure_1_pa : float
        P₁ [Pa].
    temperature_2_k : float
        T₂ [K].
    enthalpy_of_vaporisation_j_per_mol : float
        ΔH_vap [J/mol].

    Returns
    -------
    float
        P₂ [Pa].

    Validity: as :func:`clausius_clapeyron_temperature`.

    Examples
    --------
    >>> round(clausius_clapeyron_pressure(373.124, 101325.0, 393.547, 40.65e3), -1)
    200000.0

    References
    ----------
    METHODS.md §5.1.
    """
    t1 = require_absolute_temperature("temperature_1_k", temperature_1_k)
    p1 = require_positive("pressure_1_pa", pressure_1_pa)
    t2 = require_absolute_temperature("temperature_2_k", temperature_2_k)
    h = require_positive("enthalpy_of_vaporisation_j_per_mol", enthalpy_of_vaporisation_j_per_mol)
    return p1 * math.exp(-(h / R) * (1.0 / t2 - 1.0 / t1))
