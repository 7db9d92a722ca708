"""Screening estimates from a single DSC run (METHODS.md §3.3, §7, §8).

Everything here is a **screening estimate**, not a kinetic result: a kinetic
TD24 (isothermal or adiabatic data, several heating rates) supersedes it.

The defaults of :func:`td24_from_dsc_onset` — zero order, E_a = 50 kJ/mol and
q = 20 W/kg at the detected onset (scan about 4 K/min, closed crucible) — are
quoted for the Keller et al. 1997 method [MEMORY, not confirmed: check the
paper]; they are arguments, and the result always names them.
"""

from __future__ import annotations

import math

from calcs.constants import KCAL, T_ZERO_C
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_non_negative,
    require_positive,
)
from calcs.result import Result
from calcs.tmr import td_for_time, tmr_zero_order_at

REFERENCES = ("keller1997", "yoshida1995", "un_mtc_app6", "clp_annex1")

#: [MEMORY, not confirmed] values usually quoted for the Keller et al. 1997 method.
SCREENING_ACTIVATION_ENERGY_J_PER_MOL = 50e3
SCREENING_HEAT_RELEASE_RATE_W_PER_KG = 20.0

ONSET_RULE_CRITICISM = (
    "fixed-margin onset rules are criticised: the detected onset depends on sensitivity, "
    "sample mass, heating rate and phi, and a fixed margin ignores E_a, c_p, scale and hold "
    "time (Hofelich & Thomas 1989; J. Loss Prev. Process Ind. 15 (2002) 163)"
)


def td24_from_dsc_onset(
    onset_temperature_k: float, specific_heat_capacity_j_per_kg_k: float,
    activation_energy_j_per_mol: float = SCREENING_ACTIVATION_ENERGY_J_PER_MOL,
    heat_release_rate_at_onset_w_per_kg: float = SCREENING_HEAT_RELEASE_RATE_W_PER_KG,
    time_s: float = 86400.0,
) -> Result:
    """TD24 screening estimate from a single DSC onset (zero order, assumed E_a and q).

    Equation: TD24 = root of ln[c_p·R·T²/(E_a·q_on)] + (E_a/R)(1/T − 1/T_on) − ln(86 400 s)
    (:func:`calcs.tmr.td_for_time` with q_ref = q_on, T_ref = T_on).

    Parameters
    ----------
    onset_temperature_k : float
        Detected DSC onset T_on [K] (closed crucible, about 4 K/min).
    specific_heat_capacity_j_per_kg_k : float
        c_p of the material [J/(kg K)].
    activation_energy_j_per_mol : float
        Assumed E_a [J/mol]; default 50 kJ/mol [MEMORY, not confirmed].
    heat_release_rate_at_onset_w_per_kg : float
        Assumed q at the detected onset [W/kg]; default 20 W/kg [MEMORY, not confirmed].
    time_s : float
        Target TMR [s] (86 400 s for TD24).

    Returns
    -------
    Result
        value TD24 [K], method "td24.dsc_onset_screening", the assumed parameters,
        and a warning that labels it a screening estimate.

    Validity: not for autocatalytic decompositions; Keller et al. report DSC-based
    TMRad estimates at 10-70 % of the simulated adiabatic values (conservative).

    Examples
    --------
    >>> round(td24_from_dsc_onset(423.15, 1800.0).value - 273.15, 2)  # METHODS.md C3.3
    57.69

    References
    ----------
    Keller, Stenger, Dyer-Smith, Stoessel 1997, J. Loss Prev. Process Ind. 10(1) 31-41.
    """
    t_on = require_absolute_temperature("onset_temperature_k", onset_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    q = require_positive("heat_release_rate_at_onset_w_per_kg", heat_release_rate_at_onset_w_per_kg)
    value = td_for_time(time_s, specific_heat_capacity_j_per_kg_k, e, t_on, q)
    note = (
        f"TD24 is a screening estimate from a single DSC onset (assumed Ea {e / 1000:g} kJ/mol, "
        f"q {q:g} W/kg at onset)"
    )
    return Result(
        value=value, unit="K", method="td24.dsc_onset_screening", warnings=(note,),
        parameters={"label": "screening estimate", "activation_energy_j_per_mol": e,
                    "heat_release_rate_at_onset_w_per_kg": q, "onset_temperature_k": t_on,
                    "kinetics": "zero order"},
        references=("keller1997", "townsend_tou1980"),
    )


def _yoshida(energy_j_per_kg: float, onset_k: float, slope: float, const: float) -> float:
    e = require_positive("decomposition_energy_j_per_kg", energy_j_per_kg)
    t = require_absolute_temperature("onset_temperature_k", onset_k)
    t_c = t - T_ZERO_C
    if t_c <= 25.0:
        raise CalcInputError("onset_temperature_k", onset_k, "must be above 25 °C (298.15 K)")
    q_cal_per_g = e / KCAL  # J/kg -> cal/g: /1000 g/kg * 1000 cal/kcal / 4184 J/kcal
    return math.log10(q_cal_per_g) - slope * math.log10(t_c - 25.0) - const


def yoshida_explosive_propagation(decomposition_energy_j_per_kg: float, onset_temperature_k: float) -> float:
    """Yoshida explosive-propagation index EP from DSC energy and onset.

    Equation: EP = log₁₀Q_DSC − 0.38·log₁₀(T_DSC − 25) − 1.67, Q in cal/g, T in °C.

    Parameters
    ----------
    decomposition_energy_j_per_kg : float
        Exothermic decomposition energy [J/kg] (converted ÷ 4184 to cal/g).
    onset_temperature_k : float
        DSC onset in a sealed cell [K] (above 25 °C).

    Returns
    -------
    float
        EP [-]; EP ≥ 0 means potentially able to propagate an explosion.

    Validity: a screening correlation for organic compounds; a negative value is
    not proof of safety when explosophore groups are present.

    Examples
    --------
    >>> round(yoshida_explosive_propagation(2000e3, 423.15), 3)  # METHODS.md C7.1
    0.213

    References
    ----------
    Yoshida, Wada, Foster 1995, Safety of Reactive Chemicals and Pyrotechnics (from memory).
    """
    return _yoshida(decomposition_energy_j_per_kg, onset_temperature_k, 0.38, 1.67)


def yoshida_shock_sensitivity(decomposition_energy_j_per_kg: float, onset_temperature_k: float) -> float:
    """Yoshida shock-sensitivity index SS from DSC energy and onset.

    Equation: SS = log₁₀Q_DSC − 0.72·log₁₀(T_DSC − 25) − 0.98, Q in cal/g, T in °C.

    Parameters
    ----------
    decomposition_energy_j_per_kg : float
        Exothermic decomposition energy [J/kg].
    onset_temperature_k : float
        DSC onset in a sealed cell [K] (above 25 °C).

    Returns
    -------
    float
        SS [-]; SS ≥ 0 means potentially shock sensitive (drop-weight test indicated).

    Validity: as :func:`yoshida_explosive_propagation`.

    Examples
    --------
    >>> round(yoshida_shock_sensitivity(2000e3, 423.15), 3)  # METHODS.md C7.1
    0.19

    References
    ----------
    Yoshida, Wada, Foster 1995 (from memory).
    """
    return _yoshida(decomposition_energy_j_per_kg, onset_temperature_k, 0.72, 0.98)


def decomposition_energy_screens(decomposition_energy_j_per_kg: float) -> dict[str, bool]:
    """Decomposition-energy screens: CLP/UN 300 J/g and the 500 J/g high-energy screen.

    Equation: below_300 = Q < 300 J/g; at_or_above_500 = Q ≥ 500 J/g.

    Parameters
    ----------
    decomposition_energy_j_per_kg : float
        Exothermic decomposition energy [J/kg] (1 J/g = 1000 J/kg).

    Returns
    -------
    dict
        ``below_300_j_per_g`` (self-reactive / desensitised-explosive procedures
        not needed, CLP Annex I 2.8.4.2(b), 2.17.4.1(b) [READ]) and
        ``at_or_above_500_j_per_g`` (high energy: handle as potentially explosive
        and test further; aligned with the UN MTC Appendix 6 500 J/g screen
        [MEMORY]; in-plant use is common practice, no primary source).

    Validity: the UN 500 J/g screen also needs an onset below 500 °C and applies
    to organic substances with explosophores.

    Examples
    --------
    >>> decomposition_energy_screens(450e3)
    {'below_300_j_per_g': False, 'at_or_above_500_j_per_g': False}

    References
    ----------
    CLP Regulation (EC) 1272/2008 Annex I; UN Manual of Tests and Criteria, Appendix 6.
    """
    e = require_non_negative("decomposition_energy_j_per_kg", decomposition_energy_j_per_kg)
    return {"below_300_j_per_g": e < 300e3, "at_or_above_500_j_per_g": e >= 500e3}


ATOMIC_MASS_G_PER_MOL = {"C": 12.011, "H": 1.008, "N": 14.007, "O": 15.999}  # IUPAC conventional


def oxygen_balance(
    carbon: float, hydrogen: float, nitrogen: float, oxygen: float,
    molar_mass_g_per_mol: float | None = None,
) -> float:
    """Oxygen balance of C_xH_yN_wO_z to CO₂ and H₂O, in percent.

    Equation: OB% = −1600·(2x + y/2 − z)/M, M in g/mol.

    Parameters
    ----------
    carbon : float
        Number of C atoms x.
    hydrogen : float
        Number of H atoms y.
    nitrogen : float
        Number of N atoms w (enters only M).
    oxygen : float
        Number of O atoms z.
    molar_mass_g_per_mol : float or None
        M [g/mol]; computed from IUPAC conventional atomic weights when ``None``.

    Returns
    -------
    float
        OB [%].

    Validity: C, H, N, O compounds only (other elements: give M and adapt).

    Examples
    --------
    >>> round(oxygen_balance(7, 5, 3, 6), 2)  # TNT, METHODS.md §7.2
    -73.97

    References
    ----------
    Textbook definition (from memory); METHODS.md §7.2.
    """
    x = require_non_negative("carbon", carbon)
    y = require_non_negative("hydrogen", hydrogen)
    w = require_non_negative("nitrogen", nitrogen)
    z = require_non_negative("oxygen", oxygen)
    if molar_mass_g_per_mol is None:
        a = ATOMIC_MASS_G_PER_MOL
        m = x * a["C"] + y * a["H"] + w * a["N"] + z * a["O"]
    else:
        m = molar_mass_g_per_mol
    m = require_positive("molar_mass_g_per_mol", m)
    return -1600.0 * (2.0 * x + y / 2.0 - z) / m


def onset_margin_rule(
    process_temperature_k: float, onset_temperature_k: float, margin_k: float = 100.0,
    instrument: str = "dsc",
) -> Result:
    """The "T_p ≤ onset − margin" screens (DSC − 100 K, ARC − 50 K), reported with their criticism.

    Equation: passes = T_p ≤ T_onset − margin.

    Parameters
    ----------
    process_temperature_k : float
        T_p [K].
    onset_temperature_k : float
        Detected onset [K].
    margin_k : float
        Margin [K]: 100 K for DSC (a test laboratory's stated practice [READ]),
        50 K for ARC (Process Saf. Prog. 36 (2017) 280 [READ]).
    instrument : str
        "dsc" or "arc", for the label.

    Returns
    -------
    Result
        value True/False, method "screen.onset_minus_100k" or
        "screen.onset_minus_50k", the criticism as a warning.

    Validity: common practice, not a standard; under the C3.3 assumptions the
    100 K rule is not conservative for DSC onsets above about 174 °C (c_p 1.8 kJ/(kg K)).

    Examples
    --------
    >>> onset_margin_rule(373.15, 523.15).value
    True

    References
    ----------
    Hofelich & Thomas 1989 (from memory); J. Loss Prev. Process Ind. 15 (2002) 163-168;
    Process Saf. Prog. 36 (2017) 280-283.
    """
    tp = require_absolute_temperature("process_temperature_k", process_temperature_k)
    t_on = require_absolute_temperature("onset_temperature_k", onset_temperature_k)
    margin = require_non_negative("margin_k", margin_k)
    if instrument not in ("dsc", "arc"):
        raise CalcInputError("instrument", instrument, "must be 'dsc' or 'arc'")
    return Result(
        value=tp <= t_on - margin, unit="", method=f"screen.onset_minus_{margin:g}k",
        warnings=(ONSET_RULE_CRITICISM,),
        parameters={"margin_k": margin, "instrument": instrument, "label": "screen"},
        references=("hofelich_thomas1989", "onset_misuse2002", "onset_sensitivity2017"),
    )


def tmr_at_onset_minus_margin(
    onset_temperature_k: float, specific_heat_capacity_j_per_kg_k: float, margin_k: float = 100.0,
    activation_energy_j_per_mol: float = SCREENING_ACTIVATION_ENERGY_J_PER_MOL,
    heat_release_rate_at_onset_w_per_kg: float = SCREENING_HEAT_RELEASE_RATE_W_PER_KG,
) -> float:
    """Zero-order TMR_ad at "onset − margin" under the screening assumptions.

    Equation: TMR_ad(T_on − Δ) = c_p·R·T²/(E_a·q_on·exp[−(E_a/R)(1/T − 1/T_on)]).

    Parameters
    ----------
    onset_temperature_k : float
        Detected onset [K].
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    margin_k : float
        Margin Δ [K].
    activation_energy_j_per_mol : float
        Assumed E_a [J/mol] (default 50 kJ/mol, [MEMORY]).
    heat_release_rate_at_onset_w_per_kg : float
        Assumed q at onset [W/kg] (default 20 W/kg, [MEMORY]).

    Returns
    -------
    float
        TMR_ad [s].

    Validity: as :func:`td24_from_dsc_onset`.

    Examples
    --------
    >>> round(tmr_at_onset_minus_margin(473.15, 1800.0) / 3600, 2)  # METHODS.md C3.3
    17.45

    References
    ----------
    Keller et al. 1997; METHODS.md C3.3 [COMPUTED].
    """
    t_on = require_absolute_temperature("onset_temperature_k", onset_temperature_k)
    return tmr_zero_order_at(t_on - margin_k, specific_heat_capacity_j_per_kg_k,
                             activation_energy_j_per_mol, t_on, heat_release_rate_at_onset_w_per_kg)
