"""Cooling capacity, dosing time and A/V scale-up (METHODS.md §2.2).

The safety margin of capacity over peak heat release (1.3-2 are common
factors) is company practice; no published source was found for it.
"""

from __future__ import annotations

import math

from scipy import optimize

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


def minimum_dosing_time(total_heat_j: float, cooling_capacity_w: float) -> float:
    """Minimum dosing time of a dosing-controlled reaction at a given cooling capacity.

    Equation: t_d,min ≈ Q_tot,plant / q_ex,max [DERIVED].

    Parameters
    ----------
    total_heat_j : float
        Total reaction heat at plant scale [J].
    cooling_capacity_w : float
        q_ex,max [W].

    Returns
    -------
    float
        t_d,min [s].

    Validity: fast reaction (q_rx ≈ ṁ_feed·Q′_feed); see
    :func:`minimum_dosing_time_first_order` for a pseudo-first-order reaction.

    Examples
    --------
    >>> round(minimum_dosing_time(600e6, 84000.0))  # METHODS.md C2.2
    7143

    References
    ----------
    METHODS.md §2.2 [DERIVED].
    """
    q = require_non_negative("total_heat_j", total_heat_j)
    return q / require_positive("cooling_capacity_w", cooling_capacity_w)


def minimum_dosing_time_first_order(
    specific_heat_j_per_kg: float, rate_constant_per_s: float,
    specific_cooling_capacity_w_per_kg: float,
) -> float:
    """Minimum linear dosing time of a pseudo-first-order reaction whose peak equals q_ex′.

    Equation: (Q′/t_d)·(1 − e^{−k·t_d}) = q_ex′, solved for t_d by Brent's method
    (the left side is the heat-release rate at the end of a linear feed).

    Parameters
    ----------
    specific_heat_j_per_kg : float
        Q′ per kg of final reaction mass [J/kg].
    rate_constant_per_s : float
        Pseudo-first-order k [1/s].
    specific_cooling_capacity_w_per_kg : float
        q_ex′ [W/kg].

    Returns
    -------
    float
        t_d,min [s]; 0 when Q′·k ≤ q_ex′ (even an instant feed can be cooled).

    Validity: linear feed, constant k, heat release referred to the final mass.

    Examples
    --------
    >>> round(minimum_dosing_time_first_order(120e3, 0.1 / 60, 16.8) / 60, 2)  # C2.2
    119.05

    References
    ----------
    METHODS.md C2.2 [COMPUTED]; Stoessel 2008 ch. 7.
    """
    qs = require_positive("specific_heat_j_per_kg", specific_heat_j_per_kg)
    k = require_positive("rate_constant_per_s", rate_constant_per_s)
    qx = require_positive("specific_cooling_capacity_w_per_kg", specific_cooling_capacity_w_per_kg)
    if qs * k <= qx:
        return 0.0

    def f(td: float) -> float:
        return qs * -math.expm1(-k * td) / td - qx

    return optimize.brentq(f, 1e-12 / k, qs / qx * 2.0 + 1.0, xtol=1e-9, rtol=1e-13)


def accumulation_end_of_feed_first_order(rate_constant_per_s: float, dosing_time_s: float) -> float:
    """Accumulation at the end of a linear feed for a pseudo-first-order reaction.

    Equation: X_ac(t_d) = (1 − e^{−k·t_d}) / (k·t_d).

    Parameters
    ----------
    rate_constant_per_s : float
        k [1/s].
    dosing_time_s : float
        t_d [s].

    Returns
    -------
    float
        X_ac(t_d) [-].

    Validity: linear feed, constant k.

    Examples
    --------
    >>> round(accumulation_end_of_feed_first_order(0.1 / 60, 119.05 * 60), 4)  # C2.2
    0.084

    References
    ----------
    METHODS.md C1.7 and C2.2.
    """
    k = require_positive("rate_constant_per_s", rate_constant_per_s)
    td = require_positive("dosing_time_s", dosing_time_s)
    return -math.expm1(-k * td) / (k * td)


def area_to_volume_similar(
    reference_area_to_volume_per_m: float, reference_volume_m3: float, volume_m3: float
) -> float:
    """A/V of a geometrically similar vessel of another volume.

    Equation: (A/V)₂ = (A/V)₁·(V₁/V₂)^{1/3}.

    Parameters
    ----------
    reference_area_to_volume_per_m : float
        (A/V)₁ [1/m].
    reference_volume_m3 : float
        V₁ [m³].
    volume_m3 : float
        V₂ [m³].

    Returns
    -------
    float
        (A/V)₂ [1/m].

    Validity: geometric similarity and equal filling ratio.

    Examples
    --------
    >>> round(area_to_volume_similar(58.12, 0.5e-3, 5.0), 3)  # METHODS.md C2.3
    2.698

    References
    ----------
    METHODS.md §2.2 [DERIVED].
    """
    av = require_positive("reference_area_to_volume_per_m", reference_area_to_volume_per_m)
    v1 = require_positive("reference_volume_m3", reference_volume_m3)
    v2 = require_positive("volume_m3", volume_m3)
    return av * (v1 / v2) ** (1.0 / 3.0)


def cylinder_h_equals_d(volume_m3: float) -> tuple[float, float]:
    """Diameter and A/V of a cylinder with H = D cooled through wall and bottom.

    Equation: V = πD³/4, A = 5πD²/4, A/V = 5/D.

    Parameters
    ----------
    volume_m3 : float
        Filled volume V [m³].

    Returns
    -------
    tuple of float
        (D [m], A/V [1/m]).

    Validity: full cylinder, flat bottom.

    Examples
    --------
    >>> [round(x, 4) for x in cylinder_h_equals_d(0.5e-3)]  # METHODS.md C2.3
    [0.086, 58.1224]

    References
    ----------
    METHODS.md §2.2 [DERIVED].
    """
    v = require_positive("volume_m3", volume_m3)
    d = (4.0 * v / math.pi) ** (1.0 / 3.0)
    return d, 5.0 / d


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
