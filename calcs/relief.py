"""Relief screening for a runaway at the set pressure (DIERS methods, METHODS.md §13.2).

Screening only: these closed forms tell a committee whether an installed relief area is of
the right order. A relief specialist confirms the design with the full DIERS methodology,
measured venting data and the vent line. Every result here says so.

- tempered (vapour) systems: Leung's simplified mass flow (homogeneous vessel venting);
- two-phase flux: Leung's ω method for critical (choked) flow from a vessel, whose
  high-ω limit is Fauske's equilibrium rate model (ERM);
- gassy systems: the volumetric balance of homogeneous venting.
"""

from __future__ import annotations

import math

from scipy.optimize import brentq

from calcs.errors import (
    require_absolute_temperature,
    require_non_negative,
    require_positive,
)

#: The caution every relief number carries.
SCREENING_NOTE = ("relief screening by a closed-form DIERS method; a relief specialist must "
                  "confirm the design")

REFERENCES = ("leung1986", "fauske1985", "fisher1992_diers", "ccps2017_relief", "methods_md")


def leung_tempered_mass_flow(
    initial_mass_kg: float, heat_release_w_per_kg: float, vessel_volume_m3: float,
    latent_heat_j_per_kg: float, specific_volume_change_m3_per_kg: float,
    specific_heat_j_per_kg_k: float, overpressure_temperature_rise_k: float,
) -> float:
    """Relief mass flow a tempered (vapour) system needs: Leung's simplified method.

    Equation: W = m₀·q / [ (V·h_fg/(m₀·v_fg))^½ + (c·ΔT)^½ ]².

    Parameters
    ----------
    initial_mass_kg : float
        Reaction mass in the vessel m₀ [kg].
    heat_release_w_per_kg : float
        Specific heat-release rate q, the mean over set and maximum pressure [W/kg].
    vessel_volume_m3 : float
        Vessel volume V [m³].
    latent_heat_j_per_kg : float
        Enthalpy of vaporisation h_fg [J/kg].
    specific_volume_change_m3_per_kg : float
        v_fg = v_g − v_f at relief conditions [m³/kg].
    specific_heat_j_per_kg_k : float
        Liquid specific heat c [J/(kg K)].
    overpressure_temperature_rise_k : float
        ΔT, the rise of the boiling temperature over the allowed overpressure [K].

    Returns
    -------
    float
        W [kg/s]; with ΔT = 0 it reduces to q·m₀²·v_fg/(V·h_fg).

    Validity: homogeneous vessel venting, constant q and properties, overpressure up to
    about 30 % of the absolute set pressure; tempered systems only (no gas generation).

    Examples
    --------
    >>> round(leung_tempered_mass_flow(4000.0, 200.0, 5.0, 2.2e6, 0.8, 4000.0, 10.0), 2)
    11.96

    References
    ----------
    J.C. Leung, 'Simplified vent sizing equations for emergency relief requirements in
    reactors and storage vessels', AIChE J. 32 (1986) 1622-1634 (form as in METHODS.md
    §13.2, from memory); CCPS, Guidelines for Pressure Relief and Effluent Handling
    Systems, 2nd ed., 2017.
    """
    m0 = require_positive("initial_mass_kg", initial_mass_kg)
    q = require_non_negative("heat_release_w_per_kg", heat_release_w_per_kg)
    v = require_positive("vessel_volume_m3", vessel_volume_m3)
    h = require_positive("latent_heat_j_per_kg", latent_heat_j_per_kg)
    vfg = require_positive("specific_volume_change_m3_per_kg", specific_volume_change_m3_per_kg)
    c = require_positive("specific_heat_j_per_kg_k", specific_heat_j_per_kg_k)
    dt = require_non_negative("overpressure_temperature_rise_k", overpressure_temperature_rise_k)
    return m0 * q / (math.sqrt(v * h / (m0 * vfg)) + math.sqrt(c * dt)) ** 2


def omega_flashing(pressure_pa: float, temperature_k: float, liquid_specific_volume_m3_per_kg: float,
                   specific_volume_change_m3_per_kg: float, latent_heat_j_per_kg: float,
                   specific_heat_j_per_kg_k: float) -> float:
    """Leung's ω of a saturated liquid entering the relief (low-quality flashing flow).

    Equation: ω = c·T·P·(v_fg/h_fg)²/v_f.

    Parameters
    ----------
    pressure_pa : float
        Stagnation (relief) pressure P₀ [Pa].
    temperature_k : float
        Saturation temperature T₀ [K].
    liquid_specific_volume_m3_per_kg : float
        v_f [m³/kg].
    specific_volume_change_m3_per_kg : float
        v_fg [m³/kg].
    latent_heat_j_per_kg : float
        h_fg [J/kg].
    specific_heat_j_per_kg_k : float
        Liquid specific heat c [J/(kg K)].

    Returns
    -------
    float
        ω [-]; large values (≫ 4) mean strongly flashing flow.

    Validity: saturated liquid at the inlet (quality near zero), homogeneous equilibrium.

    Examples
    --------
    >>> round(omega_flashing(2e5, 393.36, 0.00106, 0.8846, 2.2016e6, 4245.0), 1)
    50.9

    References
    ----------
    J.C. Leung, AIChE J. 32 (1986) 1743-1746 (the ω method, from memory).
    """
    p = require_positive("pressure_pa", pressure_pa)
    t = require_absolute_temperature("temperature_k", temperature_k)
    vf = require_positive("liquid_specific_volume_m3_per_kg", liquid_specific_volume_m3_per_kg)
    vfg = require_positive("specific_volume_change_m3_per_kg", specific_volume_change_m3_per_kg)
    h = require_positive("latent_heat_j_per_kg", latent_heat_j_per_kg)
    c = require_positive("specific_heat_j_per_kg_k", specific_heat_j_per_kg_k)
    return c * t * p * (vfg / h) ** 2 / vf


def omega_critical_pressure_ratio(omega: float) -> float:
    """Critical (choking) pressure ratio η_c of two-phase flow by Leung's ω method.

    Equation: η_c² + (ω² − 2ω)(1 − η_c)² + 2ω²·ln η_c + 2ω²(1 − η_c) = 0, root in (0, 1).

    Parameters
    ----------
    omega : float
        Compressibility parameter ω [-] (ω = 1: isothermal ideal gas).

    Returns
    -------
    float
        η_c = P_c/P₀ [-].

    Validity: ω from about 0.05 upwards; homogeneous equilibrium flow through an ideal
    nozzle.

    Examples
    --------
    >>> round(omega_critical_pressure_ratio(1.0), 4)  # isothermal gas: exp(-1/2)
    0.6065

    References
    ----------
    J.C. Leung, AIChE J. 32 (1986) 1743; J.C. Leung, 'The omega method for discharge rate
    evaluation', 1995 (from memory).
    """
    w = require_positive("omega", omega)

    def f(eta: float) -> float:
        return (eta * eta + (w * w - 2.0 * w) * (1.0 - eta) ** 2 + 2.0 * w * w * math.log(eta)
                + 2.0 * w * w * (1.0 - eta))

    return brentq(f, 1e-9, 1.0 - 1e-12, xtol=1e-14, rtol=1e-12)


def omega_critical_mass_flux(omega: float, pressure_pa: float,
                             specific_volume_m3_per_kg: float) -> float:
    """Choked two-phase mass flux through an ideal nozzle by Leung's ω method.

    Equation: G_c = η_c·√(P₀/(v₀·ω)).

    Parameters
    ----------
    omega : float
        ω [-].
    pressure_pa : float
        Stagnation pressure P₀ [Pa].
    specific_volume_m3_per_kg : float
        Specific volume at the inlet v₀ [m³/kg].

    Returns
    -------
    float
        G_c [kg/(m² s)], before any discharge coefficient.

    Validity: as :func:`omega_critical_pressure_ratio`; a vent line with friction passes
    less (screening ignores it).

    Examples
    --------
    >>> round(omega_critical_mass_flux(1.0, 2e5, 1.0), 1)  # isothermal gas, rho = 1
    271.2

    References
    ----------
    J.C. Leung, AIChE J. 32 (1986) 1743 (from memory).
    """
    w = require_positive("omega", omega)
    p = require_positive("pressure_pa", pressure_pa)
    v0 = require_positive("specific_volume_m3_per_kg", specific_volume_m3_per_kg)
    return omega_critical_pressure_ratio(w) * math.sqrt(p / (v0 * w))


def erm_mass_flux(latent_heat_j_per_kg: float, specific_volume_change_m3_per_kg: float,
                  specific_heat_j_per_kg_k: float, temperature_k: float) -> float:
    """Flashing two-phase mass flux by Fauske's equilibrium rate model (ERM).

    Equation: G = (h_fg/v_fg)·(1/(c·T))^½.

    Parameters
    ----------
    latent_heat_j_per_kg : float
        h_fg [J/kg].
    specific_volume_change_m3_per_kg : float
        v_fg [m³/kg].
    specific_heat_j_per_kg_k : float
        Liquid specific heat c [J/(kg K)].
    temperature_k : float
        Relief temperature T [K].

    Returns
    -------
    float
        G [kg/(m² s)], the high-ω limit of the ω method.

    Validity: saturated, strongly flashing liquid (ω ≫ 4), short vent lines (friction
    neglected).

    Examples
    --------
    >>> round(erm_mass_flux(2.2016e6, 0.8846, 4245.0, 393.36), 1)
    1926.0

    References
    ----------
    H.K. Fauske, 'Emergency relief system design', Chem. Eng. Prog. 81(8) (1985) 53-56
    (from memory); METHODS.md §13.2.
    """
    h = require_positive("latent_heat_j_per_kg", latent_heat_j_per_kg)
    vfg = require_positive("specific_volume_change_m3_per_kg", specific_volume_change_m3_per_kg)
    c = require_positive("specific_heat_j_per_kg_k", specific_heat_j_per_kg_k)
    t = require_absolute_temperature("temperature_k", temperature_k)
    return (h / vfg) / math.sqrt(c * t)


def gassy_mass_flow(gas_volume_rate_m3_per_s: float, initial_mass_kg: float,
                    vessel_volume_m3: float) -> float:
    """Relief mass flow a gassy system needs under homogeneous vessel venting.

    Equation: W = Q_g·m₀/V (the vent must pass the volume the gas is generated at, as a
    mixture of the vessel's mean density).

    Parameters
    ----------
    gas_volume_rate_m3_per_s : float
        Peak gas generation Q_g at relief pressure and temperature [m³/s].
    initial_mass_kg : float
        Reaction mass m₀ [kg].
    vessel_volume_m3 : float
        Vessel volume V [m³].

    Returns
    -------
    float
        W [kg/s].

    Validity: non-condensable gas, no tempering; homogeneous venting (the conservative
    assumption for foaming or viscous masses).

    Examples
    --------
    >>> gassy_mass_flow(0.02, 4000.0, 5.0)
    16.0

    References
    ----------
    H.G. Fisher et al., Emergency Relief System Design Using DIERS Technology, AIChE, 1992;
    CCPS 2017 (gassy systems, from memory).
    """
    qg = require_non_negative("gas_volume_rate_m3_per_s", gas_volume_rate_m3_per_s)
    m0 = require_positive("initial_mass_kg", initial_mass_kg)
    v = require_positive("vessel_volume_m3", vessel_volume_m3)
    return qg * m0 / v


def required_area(mass_flow_kg_per_s: float, mass_flux_kg_per_m2_s: float,
                  discharge_coefficient: float = 1.0) -> float:
    """Relief area that passes a mass flow at a mass flux.

    Equation: A = W / (K_d·G).

    Parameters
    ----------
    mass_flow_kg_per_s : float
        Required relief mass flow W [kg/s].
    mass_flux_kg_per_m2_s : float
        Mass flux G [kg/(m² s)].
    discharge_coefficient : float
        K_d [-], as the flux method states (1 for an ideal nozzle).

    Returns
    -------
    float
        A [m²].

    Validity: as the flux method used.

    Examples
    --------
    >>> round(required_area(11.8, 1924.2, 0.8), 5)
    0.00767

    References
    ----------
    METHODS.md §13.2.
    """
    w = require_non_negative("mass_flow_kg_per_s", mass_flow_kg_per_s)
    g = require_positive("mass_flux_kg_per_m2_s", mass_flux_kg_per_m2_s)
    kd = require_positive("discharge_coefficient", discharge_coefficient)
    return w / (kd * g)
