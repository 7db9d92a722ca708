"""Adiabatic temperature rise and MTSR (METHODS.md §1.1).

Heat released by the reaction is positive throughout (METHODS.md §10):
pass −Δ_rH, not Δ_rH. Assumptions of every function here: the heat goes only
into the reaction mass (φ = 1, conservative at plant scale), c_p constant over
the interval, no evaporation and no heat loss.
"""

from __future__ import annotations

from calcs.errors import (
    require_absolute_temperature,
    require_finite,
    require_fraction,
    require_non_negative,
    require_positive,
)

REFERENCES = ("stoessel2008",)


def adiabatic_temperature_rise(heat_j: float, mass_kg: float, specific_heat_capacity_j_per_kg_k: float) -> float:
    """Adiabatic temperature rise from a quantity of heat and a thermal mass.

    Equation: ΔT_ad = Q / (m·c_p).

    Parameters
    ----------
    heat_j : float
        Heat released [J] (positive for an exotherm).
    mass_kg : float
        Reaction mass receiving the heat [kg].
    specific_heat_capacity_j_per_kg_k : float
        Specific heat capacity of the reaction mass [J/(kg K)].

    Returns
    -------
    float
        ΔT_ad [K].

    Validity: φ = 1, constant c_p, no evaporation.

    Examples
    --------
    >>> adiabatic_temperature_rise(60000.0, 0.5, 2000.0)
    60.0

    References
    ----------
    Stoessel 2008, Thermal Safety of Chemical Processes, ch. 2-3.
    """
    q = require_finite("heat_j", heat_j)
    m = require_positive("mass_kg", mass_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    return q / (m * cp)


def adiabatic_temperature_rise_specific(
    specific_heat_j_per_kg: float, specific_heat_capacity_j_per_kg_k: float
) -> float:
    """Adiabatic temperature rise from a specific heat of reaction.

    Equation: ΔT_ad = Q′ / c_p, with Q′ per kg of reaction mass.

    Parameters
    ----------
    specific_heat_j_per_kg : float
        Heat released per kg of reaction mass [J/kg] (not per kg of reagent).
    specific_heat_capacity_j_per_kg_k : float
        Specific heat capacity of the reaction mass [J/(kg K)].

    Returns
    -------
    float
        ΔT_ad [K].

    Validity: φ = 1, constant c_p.

    Examples
    --------
    >>> adiabatic_temperature_rise_specific(400e3, 2000.0)  # METHODS.md C1.4
    200.0

    References
    ----------
    Stoessel 2008, Thermal Safety of Chemical Processes, ch. 2.
    """
    q = require_finite("specific_heat_j_per_kg", specific_heat_j_per_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    return q / cp


def adiabatic_temperature_rise_molar(
    molar_heat_j_per_mol: float,
    amount_mol: float,
    mass_kg: float,
    specific_heat_capacity_j_per_kg_k: float,
) -> float:
    """Adiabatic temperature rise from a molar reaction enthalpy and an amount.

    Equation: ΔT_ad = (−Δ_rH)·n_lim / (m·c_p).

    Parameters
    ----------
    molar_heat_j_per_mol : float
        Heat released per mol of the limiting reactant, −Δ_rH [J/mol].
    amount_mol : float
        Amount of the limiting reactant n_lim [mol].
    mass_kg : float
        Reaction mass [kg].
    specific_heat_capacity_j_per_kg_k : float
        Specific heat capacity of the reaction mass [J/(kg K)].

    Returns
    -------
    float
        ΔT_ad [K].

    Validity: complete conversion of the limiting reactant, φ = 1.

    Examples
    --------
    >>> round(adiabatic_temperature_rise_molar(120e3, 2.0, 0.80, 1900.0), 3)  # C1.2
    157.895

    References
    ----------
    Stoessel 2008, Thermal Safety of Chemical Processes, ch. 2.
    """
    h = require_finite("molar_heat_j_per_mol", molar_heat_j_per_mol)
    n = require_non_negative("amount_mol", amount_mol)
    m = require_positive("mass_kg", mass_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    return h * n / (m * cp)


def adiabatic_temperature_rise_concentration(
    molar_heat_j_per_mol: float,
    concentration_mol_per_m3: float,
    density_kg_per_m3: float,
    specific_heat_capacity_j_per_kg_k: float,
) -> float:
    """Adiabatic temperature rise from a molar reaction enthalpy and a concentration.

    Equation: ΔT_ad = (−Δ_rH)·c_lim / (ρ·c_p).

    Parameters
    ----------
    molar_heat_j_per_mol : float
        Heat released per mol of the limiting reactant, −Δ_rH [J/mol].
    concentration_mol_per_m3 : float
        Concentration of the limiting reactant [mol/m³] (1 mol/L = 1000 mol/m³).
    density_kg_per_m3 : float
        Density of the reaction mass [kg/m³].
    specific_heat_capacity_j_per_kg_k : float
        Specific heat capacity of the reaction mass [J/(kg K)].

    Returns
    -------
    float
        ΔT_ad [K].

    Validity: complete conversion, φ = 1.

    Examples
    --------
    >>> round(adiabatic_temperature_rise_concentration(85e3, 1200.0, 950.0, 2100.0), 3)  # C1.3
    51.128

    References
    ----------
    Stoessel 2008, Thermal Safety of Chemical Processes, ch. 2.
    """
    h = require_finite("molar_heat_j_per_mol", molar_heat_j_per_mol)
    c = require_non_negative("concentration_mol_per_m3", concentration_mol_per_m3)
    rho = require_positive("density_kg_per_m3", density_kg_per_m3)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    return h * c / (rho * cp)


def mtsr_batch(process_temperature_k: float, adiabatic_rise_k: float, conversion: float = 0.0) -> float:
    """Maximum temperature of the synthesis reaction (MTSR) of a batch process.

    Equation: MTSR = T_p + (1 − X)·ΔT_ad; the worst case is X = 0.

    Parameters
    ----------
    process_temperature_k : float
        Process temperature T_p [K].
    adiabatic_rise_k : float
        ΔT_ad of the whole charge [K].
    conversion : float
        Conversion X reached at the moment of cooling failure [-] (default 0).

    Returns
    -------
    float
        MTSR [K].

    Validity: all reactants charged at the start; φ = 1.

    Examples
    --------
    >>> round(mtsr_batch(303.15, 60.0) - 273.15, 6)  # METHODS.md C1.6
    90.0
    >>> round(mtsr_batch(303.15, 60.0, conversion=0.4) - 273.15, 6)
    66.0

    References
    ----------
    Stoessel 2008, Thermal Safety of Chemical Processes, ch. 3.
    """
    tp = require_absolute_temperature("process_temperature_k", process_temperature_k)
    dt = require_finite("adiabatic_rise_k", adiabatic_rise_k)
    x = require_fraction("conversion", conversion)
    return tp + (1.0 - x) * dt


def mtsr_semi_batch(process_temperature_k: float, adiabatic_rise_k: float, max_accumulation: float) -> float:
    """MTSR of a semi-batch process from the maximum thermal accumulation.

    Equation: MTSR = T_p + X_ac,max·ΔT_ad (Stoessel's form, ΔT_ad on the final
    mass; use :func:`calcs.accumulation.analyse_accumulation` for the exact
    m(t) form when a calorimetry record exists).

    Parameters
    ----------
    process_temperature_k : float
        Process temperature T_p [K].
    adiabatic_rise_k : float
        ΔT_ad of the full charge referred to the final mass [K].
    max_accumulation : float
        Maximum thermal accumulation X_ac [-].

    Returns
    -------
    float
        MTSR [K].

    Validity: dosing stops at the cooling failure; the final-mass basis
    underestimates MTSR before the end of feed (METHODS.md §1.1 note).

    Examples
    --------
    >>> round(mtsr_semi_batch(303.15, 60.0, 0.166254) - 273.15, 3)  # C1.7 end of feed
    39.975

    References
    ----------
    Stoessel 2008, Thermal Safety of Chemical Processes, ch. 7 (from memory).
    """
    tp = require_absolute_temperature("process_temperature_k", process_temperature_k)
    dt = require_finite("adiabatic_rise_k", adiabatic_rise_k)
    x = require_fraction("max_accumulation", max_accumulation)
    return tp + x * dt
