"""Semenov and Frank-Kamenetskii thermal-explosion criteria (METHODS.md §6) [MEMORY; classical]."""

from __future__ import annotations

import math

from calcs.constants import R
from calcs.errors import CalcInputError, require_absolute_temperature, require_positive

REFERENCES = ("semenov1928", "frank_kamenetskii1955")

#: Critical Frank-Kamenetskii δ_c by geometry (r = half-thickness, radius, half side).
FK_CRITICAL_DELTA = {"slab": 0.878, "cylinder": 2.00, "sphere": 3.32, "cube": 2.52}


def semenov_critical_temperature_rise_approx(coolant_temperature_k: float,
                                             activation_energy_j_per_mol: float) -> float:
    """Semenov critical temperature excess over the coolant, first-order approximation.

    Equation: ΔT_crit ≈ R·T_c²/E.

    Parameters
    ----------
    coolant_temperature_k : float
        Coolant (surroundings) temperature T_c [K].
    activation_energy_j_per_mol : float
        E [J/mol].

    Returns
    -------
    float
        ΔT_crit [K].

    Validity: E/(R·T_c) ≫ 1; lumped, well-stirred mass.

    Examples
    --------
    >>> round(semenov_critical_temperature_rise_approx(353.15, 100e3), 2)  # METHODS.md C6.1
    10.37

    References
    ----------
    Semenov 1928 (from memory).
    """
    tc = require_absolute_temperature("coolant_temperature_k", coolant_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return R * tc * tc / e


def semenov_critical_temperature(coolant_temperature_k: float,
                                 activation_energy_j_per_mol: float) -> float:
    """Exact Semenov tangency temperature (also Stoessel's temperature of no return).

    Equation: T_crit = (E/2R)·[1 − √(1 − 4·R·T_c/E)].

    Parameters
    ----------
    coolant_temperature_k : float
        T_c [K].
    activation_energy_j_per_mol : float
        E [J/mol].

    Returns
    -------
    float
        T_crit [K].

    Validity: E > 4·R·T_c.

    Examples
    --------
    >>> round(semenov_critical_temperature(353.15, 100e3) - 353.15, 2)  # METHODS.md C6.1
    11.03

    References
    ----------
    Semenov 1928 (from memory); Stoessel 2008 (T_NR, from memory).
    """
    tc = require_absolute_temperature("coolant_temperature_k", coolant_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    disc = 1.0 - 4.0 * R * tc / e
    if disc < 0.0:
        raise CalcInputError("activation_energy_j_per_mol", e, "must exceed 4·R·T_c")
    return e / (2.0 * R) * (1.0 - math.sqrt(disc))


def semenov_number(mass_kg: float, heat_release_rate_w_per_kg: float,
                   activation_energy_j_per_mol: float, heat_transfer_capacity_w_per_k: float,
                   coolant_temperature_k: float) -> float:
    """Semenov number ψ; the lumped system is critical at ψ = 1/e.

    Equation: ψ = m·q(T_c)·E/(U·A·R·T_c²).

    Parameters
    ----------
    mass_kg : float
        Mass [kg].
    heat_release_rate_w_per_kg : float
        q(T_c) [W/kg].
    activation_energy_j_per_mol : float
        E [J/mol].
    heat_transfer_capacity_w_per_k : float
        U·A [W/K].
    coolant_temperature_k : float
        T_c [K].

    Returns
    -------
    float
        ψ [-].

    Validity: zero order, lumped.

    Examples
    --------
    >>> round(semenov_number(1000.0, 1.0, 100e3, 262.1, 353.15), 3)  # METHODS.md C6.1
    0.368

    References
    ----------
    Semenov 1928 (from memory).
    """
    m = require_positive("mass_kg", mass_kg)
    q = require_positive("heat_release_rate_w_per_kg", heat_release_rate_w_per_kg)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    ua = require_positive("heat_transfer_capacity_w_per_k", heat_transfer_capacity_w_per_k)
    tc = require_absolute_temperature("coolant_temperature_k", coolant_temperature_k)
    return m * q * e / (ua * R * tc * tc)


def semenov_critical_ua(mass_kg: float, heat_release_rate_w_per_kg: float,
                        activation_energy_j_per_mol: float, coolant_temperature_k: float) -> float:
    """Smallest U·A that keeps a lumped reacting mass subcritical.

    Equation: U·A_crit = e·m·q(T_c)·E/(R·T_c²).

    Parameters
    ----------
    mass_kg : float
        Mass [kg].
    heat_release_rate_w_per_kg : float
        q(T_c) [W/kg].
    activation_energy_j_per_mol : float
        E [J/mol].
    coolant_temperature_k : float
        T_c [K].

    Returns
    -------
    float
        U·A_crit [W/K].

    Validity: as :func:`semenov_number`.

    Examples
    --------
    >>> round(semenov_critical_ua(1000.0, 1.0, 100e3, 353.15), 1)  # METHODS.md C6.1
    262.1

    References
    ----------
    Semenov 1928 (from memory).
    """
    m = require_positive("mass_kg", mass_kg)
    q = require_positive("heat_release_rate_w_per_kg", heat_release_rate_w_per_kg)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    tc = require_absolute_temperature("coolant_temperature_k", coolant_temperature_k)
    return math.e * m * q * e / (R * tc * tc)


def frank_kamenetskii_critical_size(
    thermal_conductivity_w_per_m_k: float, density_kg_per_m3: float,
    heat_release_rate_w_per_kg: float, ambient_temperature_k: float,
    activation_energy_j_per_mol: float, geometry: str = "slab",
) -> float:
    """Critical half-thickness or radius of a conduction-limited reacting body.

    Equation: δ = (E/(R·T_a²))·ρ·q(T_a)·r²/λ = δ_c → r_crit = √(δ_c·λ·R·T_a²/(E·ρ·q)).

    Parameters
    ----------
    thermal_conductivity_w_per_m_k : float
        λ [W/(m K)].
    density_kg_per_m3 : float
        ρ [kg/m³].
    heat_release_rate_w_per_kg : float
        q(T_a) [W/kg].
    ambient_temperature_k : float
        Surface (ambient) temperature T_a [K].
    activation_energy_j_per_mol : float
        E [J/mol].
    geometry : str
        "slab" (δ_c 0.878), "cylinder" (2.00), "sphere" (3.32) or "cube" (about 2.52).

    Returns
    -------
    float
        r_crit [m].

    Validity: zero order, Biot number → ∞ (surface at T_a).

    Examples
    --------
    >>> round(frank_kamenetskii_critical_size(0.15, 1000.0, 0.1, 353.15, 100e3, "sphere"), 4)
    0.2272

    References
    ----------
    Frank-Kamenetskii 1955, Diffusion and Heat Transfer in Chemical Kinetics (from memory).
    """
    if geometry not in FK_CRITICAL_DELTA:
        raise CalcInputError("geometry", geometry, f"must be one of {sorted(FK_CRITICAL_DELTA)}")
    lam = require_positive("thermal_conductivity_w_per_m_k", thermal_conductivity_w_per_m_k)
    rho = require_positive("density_kg_per_m3", density_kg_per_m3)
    q = require_positive("heat_release_rate_w_per_kg", heat_release_rate_w_per_kg)
    ta = require_absolute_temperature("ambient_temperature_k", ambient_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return math.sqrt(FK_CRITICAL_DELTA[geometry] * lam * R * ta * ta / (e * rho * q))
