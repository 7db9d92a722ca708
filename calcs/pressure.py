"""Closed-vessel pressure, MTT of a closed vessel, and released gas (METHODS.md §5.1, C5.3).

Model [MEMORY, Stoessel ch. 3; DERIVED form]:
P(T) = P_vap(T) + p_pad,0·T/T₀ + n_gas·R·T/V_head, ideal gas in a rigid headspace,
no liquid swell, all released gas counted (conservative for the MTT).
"""

from __future__ import annotations

from collections.abc import Callable

from scipy import optimize

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_non_negative,
    require_positive,
)

REFERENCES = ("stoessel2008", "methods_md")


def closed_vessel_pressure(
    temperature_k: float, vapour_pressure_pa: float, pad_pressure_pa: float,
    pad_temperature_k: float, gas_amount_mol: float = 0.0, headspace_m3: float | None = None,
) -> float:
    """Total pressure in a closed vessel: vapour + heated pad gas + released gas.

    Equation: P(T) = P_vap(T) + p_pad,0·T/T₀ + n_gas·R·T/V_head.

    Parameters
    ----------
    temperature_k : float
        Temperature of the contents and headspace T [K].
    vapour_pressure_pa : float
        Vapour pressure of the liquid at T [Pa] (Raoult sum for mixtures).
    pad_pressure_pa : float
        Partial pressure of the pad gas at T₀ [Pa].
    pad_temperature_k : float
        Temperature at which the pad pressure was set T₀ [K].
    gas_amount_mol : float
        Non-condensable gas released by the reaction n_gas [mol].
    headspace_m3 : float or None
        Gas volume above the liquid V_head [m³]; needed when n_gas > 0.

    Returns
    -------
    float
        Absolute pressure [Pa].

    Validity: ideal gas, rigid headspace, no liquid swell.

    Examples
    --------
    >>> round(closed_vessel_pressure(400.0, 0.0, 1e5, 300.0, 10.0, 1.0))
    166591

    References
    ----------
    Stoessel 2008 ch. 3 (from memory); METHODS.md §5.1.
    """
    t = require_absolute_temperature("temperature_k", temperature_k)
    pv = require_non_negative("vapour_pressure_pa", vapour_pressure_pa)
    pp = require_non_negative("pad_pressure_pa", pad_pressure_pa)
    t0 = require_absolute_temperature("pad_temperature_k", pad_temperature_k)
    n = require_non_negative("gas_amount_mol", gas_amount_mol)
    gas = 0.0
    if n > 0.0:
        if headspace_m3 is None:
            raise CalcInputError("headspace_m3", None, "is needed when gas_amount_mol > 0")
        gas = n * R * t / require_positive("headspace_m3", headspace_m3)
    return pv + pp * t / t0 + gas


def closed_vessel_mtt(
    set_pressure_pa: float, vapour_pressure: Callable[[float], float], pad_pressure_pa: float,
    pad_temperature_k: float, gas_amount_mol: float = 0.0, headspace_m3: float | None = None,
    upper_temperature_k: float = 1500.0,
) -> float | None:
    """MTT of a closed vessel: the temperature at which P(T) reaches the set pressure.

    Equation: root of P(T) − P_set = 0 with P(T) of :func:`closed_vessel_pressure`,
    by Brent's method on [T₀, upper_temperature_k].

    Parameters
    ----------
    set_pressure_pa : float
        Relief set pressure (or design pressure less margin), absolute [Pa].
    vapour_pressure : callable
        T [K] → P_vap [Pa].
    pad_pressure_pa : float
        Pad-gas partial pressure at T₀ [Pa].
    pad_temperature_k : float
        T₀, the start temperature (process temperature) [K].
    gas_amount_mol : float
        Released non-condensable gas [mol].
    headspace_m3 : float or None
        Headspace volume [m³].
    upper_temperature_k : float
        Upper end of the search [K].

    Returns
    -------
    float or None
        MTT [K]; T₀ itself when P(T₀) ≥ P_set already; ``None`` when P stays
        below P_set up to ``upper_temperature_k``.

    Validity: as :func:`closed_vessel_pressure`; P(T) increasing in T.

    Examples
    --------
    >>> round(closed_vessel_mtt(2e5, lambda t: 0.0, 1e5, 300.0), 6)
    600.0

    References
    ----------
    Stoessel 2008 ch. 3 (from memory); METHODS.md §5.1 and C5.3.
    """
    p_set = require_positive("set_pressure_pa", set_pressure_pa)
    t0 = require_absolute_temperature("pad_temperature_k", pad_temperature_k)
    t_up = require_absolute_temperature("upper_temperature_k", upper_temperature_k)

    def excess(t: float) -> float:
        return closed_vessel_pressure(t, vapour_pressure(t), pad_pressure_pa, t0,
                                      gas_amount_mol, headspace_m3) - p_set

    lo = excess(t0)
    if lo >= 0.0:
        return t0
    if excess(t_up) < 0.0:
        return None
    return optimize.brentq(excess, t0, t_up, xtol=1e-9, rtol=1e-12)


def gas_volume_released(amount_mol: float, temperature_k: float, pressure_pa: float) -> float:
    """Volume of released gas at T and P (ideal gas).

    Equation: V = n·R·T/P.

    Parameters
    ----------
    amount_mol : float
        Amount of gas n [mol].
    temperature_k : float
        Temperature [K].
    pressure_pa : float
        Absolute pressure [Pa].

    Returns
    -------
    float
        Volume [m³].

    Validity: ideal gas.

    Examples
    --------
    >>> round(gas_volume_released(1.0, 273.15, 101325.0) * 1000, 3)
    22.414

    References
    ----------
    METHODS.md §5.1 (gas release).
    """
    n = require_non_negative("amount_mol", amount_mol)
    t = require_absolute_temperature("temperature_k", temperature_k)
    p = require_positive("pressure_pa", pressure_pa)
    return n * R * t / p
