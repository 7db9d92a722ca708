"""Cooling capacity, dosing time and A/V scale-up (METHODS.md §2.2).

The safety margin of capacity over peak heat release (1.3-2 are common
factors) is company practice; no published source was found for it.
"""

from __future__ import annotations

import math

from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite,
    require_non_negative,
    require_positive,
)

REFERENCES = ("stoessel2008", "methods_md")


def cooling_capacity(
    heat_transfer_coefficient_w_per_m2_k: float, area_m2: float, reactor_temperature_k: float,
    coolant_temperature_k: float,
) -> float:
    """Heat removal by a jacket: q_ex = U·A·(T_r − T_c).

    Equation: q_ex = U·A·ΔT.

    Parameters
    ----------
    heat_transfer_coefficient_w_per_m2_k : float
        Overall U at plant scale, measured or a documented estimate [W/(m² K)].
    area_m2 : float
        Wetted heat-transfer area A [m²].
    reactor_temperature_k : float
        T_r [K].
    coolant_temperature_k : float
        Jacket (mean) temperature T_c [K].

    Returns
    -------
    float
        q_ex [W] (negative if the coolant is warmer than the reactor).

    Validity: a constant U; use :func:`log_mean_temperature_difference` with
    inlet and outlet temperatures for a large jacket ΔT.

    Examples
    --------
    >>> cooling_capacity(350.0, 12.0, 303.15, 283.15)  # METHODS.md C2.2
    84000.0

    References
    ----------
    Stoessel 2008 ch. 9 (from memory); METHODS.md §2.2.
    """
    u = require_positive("heat_transfer_coefficient_w_per_m2_k", heat_transfer_coefficient_w_per_m2_k)
    a = require_positive("area_m2", area_m2)
    tr = require_absolute_temperature("reactor_temperature_k", reactor_temperature_k)
    tc = require_absolute_temperature("coolant_temperature_k", coolant_temperature_k)
    return u * a * (tr - tc)


def log_mean_temperature_difference(
    reactor_temperature_k: float, jacket_inlet_k: float, jacket_outlet_k: float
) -> float:
    """Log-mean temperature difference between the reactor and a jacket.

    Equation: ΔT_lm = [(T_r − T_in) − (T_r − T_out)] / ln[(T_r − T_in)/(T_r − T_out)].

    Parameters
    ----------
    reactor_temperature_k : float
        T_r [K].
    jacket_inlet_k : float
        Coolant inlet T_in [K].
    jacket_outlet_k : float
        Coolant outlet T_out [K].

    Returns
    -------
    float
        ΔT_lm [K] (the arithmetic difference when the two ends are equal).

    Validity: both ends of the same sign (no temperature cross).

    Examples
    --------
    >>> round(log_mean_temperature_difference(303.15, 278.15, 288.15), 3)
    19.576

    References
    ----------
    Heat-transfer textbooks; METHODS.md §2.2.
    """
    tr = require_absolute_temperature("reactor_temperature_k", reactor_temperature_k)
    d1 = tr - require_absolute_temperature("jacket_inlet_k", jacket_inlet_k)
    d2 = tr - require_absolute_temperature("jacket_outlet_k", jacket_outlet_k)
    if d1 * d2 <= 0.0:
        raise CalcInputError("jacket_outlet_k", jacket_outlet_k,
                             "must leave the reactor-jacket difference of one sign at both ends")
    if math.isclose(d1, d2, rel_tol=1e-12):
        return d1
    return (d1 - d2) / math.log(d1 / d2)


def specific_cooling_capacity(cooling_capacity_w: float, mass_kg: float) -> float:
    """Cooling capacity per kg of reaction mass, to compare with the calorimeter's W/kg.

    Equation: q_ex′ = q_ex/m (= U·(A/V)·ΔT/ρ).

    Parameters
    ----------
    cooling_capacity_w : float
        q_ex [W].
    mass_kg : float
        Reaction mass [kg].

    Returns
    -------
    float
        q_ex′ [W/kg].

    Validity: any.

    Examples
    --------
    >>> specific_cooling_capacity(84000.0, 5000.0)  # METHODS.md C2.2
    16.8

    References
    ----------
    METHODS.md §2.2.
    """
    q = require_finite("cooling_capacity_w", cooling_capacity_w)
    return q / require_positive("mass_kg", mass_kg)


def plant_peak_heat_release(specific_heat_release_rate_w_per_kg: float, mass_kg: float) -> float:
    """Plant peak heat release from the lab peak in W/kg and the plant mass.

    Equation: q_rx,max,plant = q′_max,lab · m_plant.

    Parameters
    ----------
    specific_heat_release_rate_w_per_kg : float
        Peak specific heat-release rate from the calorimeter [W/kg].
    mass_kg : float
        Plant reaction mass [kg].

    Returns
    -------
    float
        Peak heat release [W].

    Validity: same recipe, dosing time and temperature at both scales.

    Examples
    --------
    >>> plant_peak_heat_release(33.25, 5000.0)
    166250.0

    References
    ----------
    METHODS.md §2.2.
    """
    q = require_non_negative("specific_heat_release_rate_w_per_kg", specific_heat_release_rate_w_per_kg)
    return q * require_positive("mass_kg", mass_kg)


def cooling_margin(cooling_capacity_w: float, peak_heat_release_w: float) -> float:
    """Ratio of cooling capacity to the peak heat release.

    Equation: margin = q_ex / q_rx,max (≥ 1.3-2 is common practice, no source).

    Parameters
    ----------
    cooling_capacity_w : float
        q_ex [W].
    peak_heat_release_w : float
        q_rx,max at plant scale [W].

    Returns
    -------
    float
        Margin [-].

    Validity: peak > 0.

    Examples
    --------
    >>> round(cooling_margin(84000.0, 166250.0), 3)
    0.505

    References
    ----------
    Common practice, no source (METHODS.md §8).
    """
    q = require_finite("cooling_capacity_w", cooling_capacity_w)
    return q / require_positive("peak_heat_release_w", peak_heat_release_w)


def cooling_time_constant(
    mass_kg: float, specific_heat_capacity_j_per_kg_k: float, heat_transfer_capacity_w_per_k: float
) -> float:
    """Cooling time constant of a stirred vessel.

    Equation: τ = m·c_p/(U·A).

    Parameters
    ----------
    mass_kg : float
        Reaction mass [kg].
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    heat_transfer_capacity_w_per_k : float
        U·A [W/K].

    Returns
    -------
    float
        τ [s].

    Validity: lumped, well-stirred contents.

    Examples
    --------
    >>> round(cooling_time_constant(5000.0, 2000.0, 350.0 * 12.0))  # METHODS.md C2.2
    2381

    References
    ----------
    METHODS.md §2.2.
    """
    m = require_positive("mass_kg", mass_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    ua = require_positive("heat_transfer_capacity_w_per_k", heat_transfer_capacity_w_per_k)
    return m * cp / ua


def adiabatic_rise_rate(
    heat_release_rate_w: float, mass_kg: float, specific_heat_capacity_j_per_kg_k: float
) -> float:
    """Temperature rise rate on cooling failure.

    Equation: dT/dt = q_rx/(m·c_p).

    Parameters
    ----------
    heat_release_rate_w : float
        q_rx [W].
    mass_kg : float
        Reaction mass [kg].
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].

    Returns
    -------
    float
        dT/dt [K/s].

    Validity: adiabatic, φ = 1.

    Examples
    --------
    >>> round(adiabatic_rise_rate(16.6254, 0.5, 2000.0) * 60, 3)  # METHODS.md C1.7 note
    0.998

    References
    ----------
    METHODS.md §2.2.
    """
    q = require_finite("heat_release_rate_w", heat_release_rate_w)
    m = require_positive("mass_kg", mass_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    return q / (m * cp)
