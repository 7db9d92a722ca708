"""Zero-order time to maximum rate (TMRad) and TD24 (METHODS.md §3.1-3.2).

Zero-order Townsend-Tou TMRad, the Arrhenius shift of a specific heat-release
rate, and TD24/TD8/TD-for-any-time by Brent's method on the monotone log form.
The vectorised TD for arrays of parameter sets is in :mod:`calcs.td_vectorised`;
the numeric nth-order TMR in :mod:`calcs.tmr_numeric`.
"""

from __future__ import annotations

import math

from scipy import optimize

from calcs.constants import DAY, HOUR, R
from calcs.errors import (
    require_absolute_temperature,
    require_positive,
)

REFERENCES = ("townsend_tou1980", "stoessel2008")
T_LOW_K, T_HIGH_K = 150.0, 1500.0


def heat_release_rate_at(
    temperature_k: float, activation_energy_j_per_mol: float, reference_temperature_k: float,
    heat_release_rate_at_reference_w_per_kg: float,
) -> float:
    """Specific heat-release rate at T from a reference rate (zero-order Arrhenius shift).

    Equation: q(T) = q_ref·exp[−(E_a/R)·(1/T − 1/T_ref)].

    Parameters
    ----------
    temperature_k : float
        Temperature T [K].
    activation_energy_j_per_mol : float
        Activation energy E_a [J/mol].
    reference_temperature_k : float
        Reference temperature T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref at T_ref [W/kg].

    Returns
    -------
    float
        q(T) [W/kg].

    Validity: zero order, a single Arrhenius step.

    Examples
    --------
    >>> round(heat_release_rate_at(377.599, 100e3, 453.15, 50.0), 4)  # METHODS.md C3.2
    0.247

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11.
    """
    t = require_absolute_temperature("temperature_k", temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    tr = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    q = require_positive(
        "heat_release_rate_at_reference_w_per_kg", heat_release_rate_at_reference_w_per_kg
    )
    return q * math.exp(-(e / R) * (1.0 / t - 1.0 / tr))


def tmr_zero_order(
    specific_heat_capacity_j_per_kg_k: float, temperature_k: float,
    heat_release_rate_w_per_kg: float, activation_energy_j_per_mol: float,
) -> float:
    """Zero-order adiabatic time to maximum rate (Townsend & Tou 1980).

    Equation: TMR_ad = c_p·R·T₀² / (q₀·E_a).

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p of the reacting mass [J/(kg K)].
    temperature_k : float
        Initial temperature T₀ [K].
    heat_release_rate_w_per_kg : float
        Specific heat-release rate at T₀, q₀ [W/kg].
    activation_energy_j_per_mol : float
        E_a [J/mol].

    Returns
    -------
    float
        TMR_ad [s].

    Validity: adiabatic, zero order (conservative), B = E·ΔT_ad/(R·T₀²) well
    above 10; not for autocatalytic decompositions.

    Examples
    --------
    >>> round(tmr_zero_order(1800.0, 393.15, 5.0, 100e3), 1)  # METHODS.md C3.1
    4626.5

    References
    ----------
    Townsend & Tou 1980, Thermochim. Acta 37, 1-30.
    """
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    t = require_absolute_temperature("temperature_k", temperature_k)
    q = require_positive("heat_release_rate_w_per_kg", heat_release_rate_w_per_kg)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return cp * R * t * t / (q * e)


def tmr_zero_order_at(
    temperature_k: float, specific_heat_capacity_j_per_kg_k: float,
    activation_energy_j_per_mol: float, reference_temperature_k: float,
    heat_release_rate_at_reference_w_per_kg: float,
) -> float:
    """Zero-order TMR_ad at any temperature from a reference heat-release rate.

    Equation: TMR_ad(T) = c_p·R·T² / (E_a·q_ref·exp[−(E_a/R)(1/T − 1/T_ref)]).

    Parameters
    ----------
    temperature_k : float
        Start temperature T [K], e.g. the MTSR.
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float
        TMR_ad [s].

    Validity: as :func:`tmr_zero_order`.

    Examples
    --------
    >>> round(tmr_zero_order_at(377.599, 1800.0, 100e3, 453.15, 50.0) / 3600, 2)  # C3.2
    24.0

    References
    ----------
    Townsend & Tou 1980.
    """
    q = heat_release_rate_at(
        temperature_k, activation_energy_j_per_mol, reference_temperature_k,
        heat_release_rate_at_reference_w_per_kg,
    )
    return tmr_zero_order(specific_heat_capacity_j_per_kg_k, temperature_k, q,
                          activation_energy_j_per_mol)


def tmr_shift_zero_order(
    tmr_s: float, from_temperature_k: float, to_temperature_k: float,
    activation_energy_j_per_mol: float,
) -> float:
    """Move a zero-order TMR from one start temperature to another.

    Equation: TMR(T₂) = TMR(T₁)·(T₂/T₁)²·exp[(E_a/R)(1/T₂ − 1/T₁)].

    Parameters
    ----------
    tmr_s : float
        TMR at T₁ [s].
    from_temperature_k : float
        T₁ [K].
    to_temperature_k : float
        T₂ [K].
    activation_energy_j_per_mol : float
        E_a [J/mol].

    Returns
    -------
    float
        TMR at T₂ [s].

    Validity: zero order, same E_a at both temperatures.

    Examples
    --------
    >>> round(tmr_shift_zero_order(61.98 * 60, 423.15, 413.538, 100e3) / 60, 1)  # C3.7
    114.6

    References
    ----------
    Townsend & Tou 1980.
    """
    tmr = require_positive("tmr_s", tmr_s)
    t1 = require_absolute_temperature("from_temperature_k", from_temperature_k)
    t2 = require_absolute_temperature("to_temperature_k", to_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return tmr * (t2 / t1) ** 2 * math.exp((e / R) * (1.0 / t2 - 1.0 / t1))


def td_for_time(
    time_s: float, specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> float | None:
    """Temperature at which the zero-order TMR_ad equals a given time (TD24, TD8 ...).

    Equation: root of g(T) = ln[c_p·R·T²/(E_a·q_ref)] + (E_a/R)(1/T − 1/T_ref) − ln t = 0
    by Brent's method on [150 K, min(1500 K, E_a/(2R))].

    Parameters
    ----------
    time_s : float
        Target TMR_ad t [s] (86 400 s for TD24).
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float or None
        TD [K], or ``None`` when there is no root on the falling branch of g within
        [150 K, 1500 K] (:func:`td_refusal` says why).

    Validity: zero order; g falls only below T = E_a/(2R) (monotone on the whole bracket
    for E_a > 2·R·1500 K ≈ 25 kJ/mol), so the bracket is [150 K, min(1500 K, E_a/(2R))].

    Examples
    --------
    >>> round(td_for_time(86400.0, 1800.0, 100e3, 453.15, 50.0), 3)  # METHODS.md C3.2
    377.599

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11 (TD24).
    """
    t = require_positive("time_s", time_s)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    tr = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    q = require_positive(
        "heat_release_rate_at_reference_w_per_kg", heat_release_rate_at_reference_w_per_kg
    )
    g, hi = _log_form(t, cp, e, tr, q)
    if g(T_LOW_K) < 0.0 or g(hi) > 0.0:
        return None
    return optimize.brentq(g, T_LOW_K, hi, xtol=1e-9, rtol=1e-13)


def _log_form(t: float, cp: float, e: float, tr: float, q: float):
    """g(T) = ln TMR_ad(T) − ln t and the top of its falling branch within [150 K, 1500 K].

    g falls for T < E_a/(2R) and rises above it (the T² of the formula outgrows the
    exponential), so the physical root is the one on the falling branch [DERIVED].
    """
    a = e / R
    const = math.log(cp * R / (e * q)) - a / tr - math.log(t)

    def g(temp: float) -> float:
        return const + 2.0 * math.log(temp) + a / temp

    return g, min(T_HIGH_K, max(T_LOW_K, a / 2.0))


def td_refusal(
    time_s: float, specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> str | None:
    """Why :func:`td_for_time` (and the vectorised form) find no TD, in words; ``None`` if one exists.

    Equation: the root of g(T) = ln TMR_ad(T) − ln t on the falling branch T < E_a/(2R),
    within [150 K, 1500 K] (see :func:`td_for_time`).

    Parameters
    ----------
    time_s : float
        Target TMR_ad t [s].
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    str or None
        The reason no TD exists, or ``None`` when there is one.

    Validity: as :func:`td_for_time`.

    Examples
    --------
    >>> td_refusal(86400.0, 1800.0, 100e3, 453.15, 50.0) is None
    True

    References
    ----------
    Townsend & Tou 1980 [DERIVED for the branch].
    """
    t = require_positive("time_s", time_s)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    tr = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    q = require_positive(
        "heat_release_rate_at_reference_w_per_kg", heat_release_rate_at_reference_w_per_kg
    )
    g, hi = _log_form(t, cp, e, tr, q)
    hours = f"{t / HOUR:g} h"
    if g(T_LOW_K) < 0.0:
        return (f"the zero-order TMRad is shorter than {hours} already at {T_LOW_K:g} K: "
                "no TD in the range the method covers")
    if g(hi) <= 0.0:
        return None
    if hi < T_HIGH_K:
        return (f"the zero-order TMRad never falls to {hours} (its minimum, "
                f"{math.exp(g(hi)) * t / HOUR:.3g} h, lies at T = E_a/(2R) = {hi:.0f} K): "
                f"E_a {e / 1000:g} kJ/mol is too low for the zero-order formula here")
    return f"the zero-order TMRad is still longer than {hours} at {T_HIGH_K:g} K: no TD below it"


def td24(
    specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> float | None:
    """TD24: the start temperature whose zero-order TMR_ad is 24 h.

    Equation: g(T) = 0 of :func:`td_for_time` with t = 86 400 s.

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float or None
        TD24 [K] (``None`` outside [150 K, 1500 K]).

    Validity: as :func:`td_for_time`.

    Examples
    --------
    >>> round(td24(1800.0, 100e3, 453.15, 50.0) - 273.15, 3)  # METHODS.md C3.2
    104.449

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11.
    """
    return td_for_time(DAY, specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol,
                       reference_temperature_k, heat_release_rate_at_reference_w_per_kg)


def td8(
    specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> float | None:
    """TD8: the start temperature whose zero-order TMR_ad is 8 h.

    Equation: g(T) = 0 of :func:`td_for_time` with t = 28 800 s.

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float or None
        TD8 [K].

    Validity: as :func:`td_for_time`.

    Examples
    --------
    >>> round(td8(1800.0, 100e3, 453.15, 50.0) - 273.15, 3)  # METHODS.md C3.2
    118.895

    References
    ----------
    Townsend & Tou 1980.
    """
    return td_for_time(8 * HOUR, specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol,
                       reference_temperature_k, heat_release_rate_at_reference_w_per_kg)
