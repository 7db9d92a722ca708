"""Barrier checks at MTT for an open system: evaporative cooling, condenser and vapour line
(METHODS.md §13.1), and the time left for emergency measures (§13.3).

For criticality classes 3 and 4 the case rests on the technical barrier at MTT: the heat
released by the synthesis reaction at MTT boils off solvent, and the condenser must take the
vapour without the vapour line flooding. Each function here is one step of that check, in SI
floats; the step that decides a pass or a fail says which margin it used.
"""

from __future__ import annotations

import math

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_non_negative,
    require_positive,
)

#: Gravitational acceleration [m/s²]; standard value, exact by definition (NIST SP 811).
G_N = 9.80665

#: Wallis flooding constants for counter-current vapour/condensate flow in a vertical line:
#: C between 0.7 and 1.0 by the end geometry, m = 1 for turbulent flow (Wallis 1969,
#: from memory). 0.7 is the lower, cautious end of the range.
WALLIS_C = 0.7
WALLIS_M = 1.0

REFERENCES = ("stoessel2008", "wallis1969", "methods_md")


def heat_release_rate_at(
    rate_at_reference_w_per_kg: float, reference_temperature_k: float, temperature_k: float,
    activation_energy_j_per_mol: float,
) -> float:
    """Specific heat-release rate of the synthesis reaction moved to another temperature.

    Equation: q(T) = q(T_ref)·exp[−(E/R)·(1/T − 1/T_ref)] (Arrhenius, same conversion).

    Parameters
    ----------
    rate_at_reference_w_per_kg : float
        Heat-release rate q(T_ref) of the accumulated reagent [W/kg].
    reference_temperature_k : float
        Temperature at which it was measured [K].
    temperature_k : float
        Temperature to move it to, usually MTT [K].
    activation_energy_j_per_mol : float
        Activation energy of the synthesis reaction [J/mol]; 0 keeps the rate.

    Returns
    -------
    float
        q(T) [W/kg].

    Validity: one rate-determining step with the same conversion at both temperatures; the
    peak rate measured at T_p is no bound at MTT without kinetics.

    Examples
    --------
    >>> round(heat_release_rate_at(10.0, 303.15, 353.15, 60e3), 2)
    290.88

    References
    ----------
    METHODS.md §13.1 (derived); Stoessel 2008 ch. 8 (from memory).
    """
    q = require_non_negative("rate_at_reference_w_per_kg", rate_at_reference_w_per_kg)
    t_ref = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    t = require_absolute_temperature("temperature_k", temperature_k)
    e = require_non_negative("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return q * math.exp(-(e / R) * (1.0 / t - 1.0 / t_ref))


def boil_off_rate(heat_release_w: float, latent_heat_j_per_kg: float) -> float:
    """Vapour mass flow that a heat release boils off at the boiling point.

    Equation: ṁ_v = q_rx / Δh_v.

    Parameters
    ----------
    heat_release_w : float
        Heat released by the reaction mass at MTT [W].
    latent_heat_j_per_kg : float
        Enthalpy of vaporisation of the solvent at MTT [J/kg].

    Returns
    -------
    float
        ṁ_v [kg/s].

    Validity: all the heat goes into evaporation (no sensible heating at MTT, no loss).

    Examples
    --------
    >>> round(boil_off_rate(100e3, 2.2567e6), 5)
    0.04431

    References
    ----------
    METHODS.md §13.1 (energy balance).
    """
    q = require_non_negative("heat_release_w", heat_release_w)
    h = require_positive("latent_heat_j_per_kg", latent_heat_j_per_kg)
    return q / h


def vapour_density(pressure_pa: float, molar_mass_kg_per_mol: float, temperature_k: float) -> float:
    """Density of the vapour as an ideal gas.

    Equation: ρ_v = P·M/(R·T).

    Parameters
    ----------
    pressure_pa : float
        Absolute pressure [Pa].
    molar_mass_kg_per_mol : float
        Molar mass of the vapour [kg/mol].
    temperature_k : float
        Temperature of the vapour [K].

    Returns
    -------
    float
        ρ_v [kg/m³].

    Validity: ideal gas; a few per cent low near the critical point.

    Examples
    --------
    >>> round(vapour_density(101325.0, 0.018015, 373.15), 4)
    0.5883

    References
    ----------
    Ideal-gas law; METHODS.md §13.1.
    """
    p = require_positive("pressure_pa", pressure_pa)
    m = require_positive("molar_mass_kg_per_mol", molar_mass_kg_per_mol)
    t = require_absolute_temperature("temperature_k", temperature_k)
    return p * m / (R * t)


def vapour_line_velocity(mass_flow_kg_per_s: float, vapour_density_kg_per_m3: float,
                         line_diameter_m: float) -> float:
    """Superficial vapour velocity in a round vapour line.

    Equation: u = ṁ_v / (ρ_v·π·d²/4).

    Parameters
    ----------
    mass_flow_kg_per_s : float
        Vapour mass flow ṁ_v [kg/s].
    vapour_density_kg_per_m3 : float
        ρ_v [kg/m³].
    line_diameter_m : float
        Inner diameter of the vapour line [m].

    Returns
    -------
    float
        u [m/s].

    Validity: the whole flow in one line of constant diameter.

    Examples
    --------
    >>> round(vapour_line_velocity(0.05, 0.5883, 0.1), 2)
    10.82

    References
    ----------
    Continuity equation; METHODS.md §13.1.
    """
    w = require_non_negative("mass_flow_kg_per_s", mass_flow_kg_per_s)
    rho = require_positive("vapour_density_kg_per_m3", vapour_density_kg_per_m3)
    d = require_positive("line_diameter_m", line_diameter_m)
    return w / (rho * math.pi * d * d / 4.0)


def flooding_velocity(line_diameter_m: float, liquid_density_kg_per_m3: float,
                      vapour_density_kg_per_m3: float, wallis_c: float = WALLIS_C,
                      wallis_m: float = WALLIS_M) -> float:
    """Vapour velocity at which the condensate flowing back down a vertical line floods it.

    Equation (Wallis): √j_g* + m·√j_l* = C, with j_k* = j_k·√ρ_k / √(g·d·(ρ_l − ρ_g)); all
    the vapour condenses and returns, so j_l = j_g·ρ_g/ρ_l and
    j_g = [C / (1 + m·(ρ_g/ρ_l)^¼)]²·√(g·d·(ρ_l − ρ_g)/ρ_g).

    Parameters
    ----------
    line_diameter_m : float
        Inner diameter of the vertical vapour line [m].
    liquid_density_kg_per_m3 : float
        Density of the condensate ρ_l [kg/m³].
    vapour_density_kg_per_m3 : float
        Density of the vapour ρ_g [kg/m³]; below ρ_l.
    wallis_c : float
        Wallis constant C [-] (0.7 to 1.0; the default 0.7 is the cautious end).
    wallis_m : float
        Wallis slope m [-] (1 for turbulent flow).

    Returns
    -------
    float
        Superficial vapour velocity at flooding j_g [m/s].

    Validity: vertical lines of some centimetres to a few decimetres, counter-current
    flow of the whole condensate; level swell in the vessel is a separate limit.

    Examples
    --------
    >>> round(flooding_velocity(0.1, 958.0, 0.5883), 2)
    14.61

    References
    ----------
    G.B. Wallis, One-dimensional Two-phase Flow, McGraw-Hill, 1969 (from memory);
    Stoessel 2008 discusses flooding for this check (from memory).
    """
    d = require_positive("line_diameter_m", line_diameter_m)
    rho_l = require_positive("liquid_density_kg_per_m3", liquid_density_kg_per_m3)
    rho_g = require_positive("vapour_density_kg_per_m3", vapour_density_kg_per_m3)
    c = require_positive("wallis_c", wallis_c)
    m = require_non_negative("wallis_m", wallis_m)
    if rho_g >= rho_l:
        raise CalcInputError("vapour_density_kg_per_m3", rho_g,
                             f"must be below the liquid density {rho_l:g} kg/m³")
    j_star = (c / (1.0 + m * (rho_g / rho_l) ** 0.25)) ** 2
    return j_star * math.sqrt(G_N * d * (rho_l - rho_g) / rho_g)


def condenser_duty(heat_transfer_coefficient_w_per_m2_k: float, area_m2: float,
                   mean_temperature_difference_k: float) -> float:
    """Heat a condenser can take.

    Equation: Q_c = U·A·ΔT_lm.

    Parameters
    ----------
    heat_transfer_coefficient_w_per_m2_k : float
        Overall U of the condenser [W/(m² K)].
    area_m2 : float
        Its heat-transfer area [m²].
    mean_temperature_difference_k : float
        Log-mean temperature difference between condensing vapour and coolant [K].

    Returns
    -------
    float
        Q_c [W].

    Validity: U for condensing service of the solvent at hand; inert gas in the vapour
    lowers it strongly.

    Examples
    --------
    >>> condenser_duty(800.0, 5.0, 60.0)
    240000.0

    References
    ----------
    METHODS.md §13.1 and §2.2 (log-mean form).
    """
    u = require_positive("heat_transfer_coefficient_w_per_m2_k", heat_transfer_coefficient_w_per_m2_k)
    a = require_positive("area_m2", area_m2)
    dt = require_positive("mean_temperature_difference_k", mean_temperature_difference_k)
    return u * a * dt


def time_margin(time_available_s: float, response_time_s: float) -> dict:
    """How much time a measure leaves before the runaway: TMRad against its response time.

    Equation: margin = TMR_ad − t_response; ratio = TMR_ad / t_response.

    Parameters
    ----------
    time_available_s : float
        TMR_ad at the temperature where the measure must act (MTSR or MTT) [s]; ``inf``
        when there is no runaway.
    response_time_s : float
        Time from the demand to the measure being effective [s].

    Returns
    -------
    dict
        ``margin_s`` [s] (negative: too late), ``ratio`` [-], ``passes`` (margin > 0).

    Validity: TMR_ad is itself an estimate at φ = 1; the margin a company demands
    beyond zero is its own rule.

    Examples
    --------
    >>> time_margin(7200.0, 1800.0)["margin_s"]
    5400.0

    References
    ----------
    METHODS.md §13.3; Stoessel 2008 ch. 3 (from memory).
    """
    tmr = float(time_available_s)
    if tmr != math.inf:  # +inf means no runaway at all; anything else must be a real time
        tmr = require_non_negative("time_available_s", time_available_s)
    t = require_positive("response_time_s", response_time_s)
    return {"margin_s": tmr - t, "ratio": tmr / t, "passes": tmr > t}


def log_mean_temperature_difference(condensing_temperature_k: float, coolant_inlet_k: float,
                                    coolant_outlet_k: float) -> float:
    """Log-mean temperature difference of a condenser: vapour condensing at one temperature.

    Equation: ΔT_lm = (ΔT₁ − ΔT₂)/ln(ΔT₁/ΔT₂), ΔT₁ = T_c − T_in, ΔT₂ = T_c − T_out
    (ΔT₁ when the coolant does not warm).

    Parameters
    ----------
    condensing_temperature_k : float
        Temperature at which the vapour condenses (MTT for the barrier at MTT) [K].
    coolant_inlet_k : float
        Coolant inlet temperature [K].
    coolant_outlet_k : float
        Coolant outlet temperature [K], at least the inlet and below the condensing one.

    Returns
    -------
    float
        ΔT_lm [K].

    Validity: isothermal condensation of a pure vapour (no subcooling, no inert gas);
    counter- and co-current give the same ΔT_lm when one side is isothermal.

    Examples
    --------
    >>> round(log_mean_temperature_difference(383.75, 288.15, 298.15), 2)
    90.51

    References
    ----------
    Any heat-transfer text (e.g. Incropera & DeWitt, log-mean temperature difference);
    METHODS.md §13.1.
    """
    tc = require_absolute_temperature("condensing_temperature_k", condensing_temperature_k)
    tin = require_absolute_temperature("coolant_inlet_k", coolant_inlet_k)
    tout = require_absolute_temperature("coolant_outlet_k", coolant_outlet_k)
    if tout < tin:
        raise CalcInputError("coolant_outlet_k", tout, f"must be at least the inlet {tin:g} K")
    if tout >= tc:
        raise CalcInputError("coolant_outlet_k", tout,
                             f"must be below the condensing temperature {tc:g} K")
    d1, d2 = tc - tin, tc - tout
    return d1 if math.isclose(d1, d2) else (d1 - d2) / math.log(d1 / d2)
