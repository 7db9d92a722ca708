"""Minimum dosing time and A/V scale-up of geometrically similar vessels (METHODS.md §2.2)."""

from __future__ import annotations

import math

from scipy import optimize

from calcs.errors import require_non_negative, require_positive

REFERENCES = ("stoessel2008", "methods_md")


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
