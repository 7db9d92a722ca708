"""Thermal-inertia (φ-factor) corrections for adiabatic calorimetry (METHODS.md §3.7).

Formulas [MEMORY] per METHODS.md: Townsend & Tou 1980; Fisher & Goetz 1991;
ASTM E1981 — standard, but not confirmed from the texts here.
"""

from __future__ import annotations

import math

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite,
    require_positive,
)

REFERENCES = ("townsend_tou1980", "fisher_goetz1991", "astm_e1981")


def _phi(value: float) -> float:
    p = require_finite("phi", value)
    if p < 1.0:
        raise CalcInputError("phi", value, "must be at least 1")
    return p


def phi_factor(
    sample_mass_kg: float, sample_cp_j_per_kg_k: float, cell_mass_kg: float,
    cell_cp_j_per_kg_k: float,
) -> float:
    """Thermal inertia φ of a sample in a test cell.

    Equation: φ = 1 + (m_cell·c_p,cell)/(m_s·c_p,s).

    Parameters
    ----------
    sample_mass_kg : float
        Sample mass m_s [kg].
    sample_cp_j_per_kg_k : float
        Sample c_p,s [J/(kg K)].
    cell_mass_kg : float
        Test-cell mass m_cell [kg].
    cell_cp_j_per_kg_k : float
        Test-cell c_p,cell [J/(kg K)].

    Returns
    -------
    float
        φ [-] (≥ 1).

    Validity: lumped sample and cell at one temperature.

    Examples
    --------
    >>> round(phi_factor(0.005, 2000.0, 0.018, 520.0), 3)  # METHODS.md C3.7
    1.936

    References
    ----------
    Townsend & Tou 1980; ASTM E1981 (from memory).
    """
    ms = require_positive("sample_mass_kg", sample_mass_kg)
    cs = require_positive("sample_cp_j_per_kg_k", sample_cp_j_per_kg_k)
    mc = require_positive("cell_mass_kg", cell_mass_kg)
    cc = require_positive("cell_cp_j_per_kg_k", cell_cp_j_per_kg_k)
    return 1.0 + mc * cc / (ms * cs)


def corrected_temperature_rise(phi: float, measured_rise_k: float) -> float:
    """Adiabatic temperature rise from a measured rise: ΔT_ad = φ·ΔT_meas.

    Equation: ΔT_ad = φ·ΔT_meas.

    Parameters
    ----------
    phi : float
        φ [-].
    measured_rise_k : float
        ΔT_meas [K].

    Returns
    -------
    float
        ΔT_ad [K].

    Validity: φ ≥ 1.

    Examples
    --------
    >>> round(corrected_temperature_rise(1.936, 150.0), 1)  # METHODS.md C3.7
    290.4

    References
    ----------
    Townsend & Tou 1980 (from memory).
    """
    return _phi(phi) * require_finite("measured_rise_k", measured_rise_k)


def corrected_onset_temperature(
    measured_onset_k: float, activation_energy_j_per_mol: float, phi: float
) -> float:
    """φ-corrected onset temperature (Fisher & Goetz).

    Equation: 1/T₀,corr = 1/T₀,meas + (R/E_a)·ln φ (so T₀,corr ≤ T₀,meas).

    Parameters
    ----------
    measured_onset_k : float
        Measured onset T₀,meas [K].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    phi : float
        φ [-].

    Returns
    -------
    float
        T₀,corr [K].

    Validity: zero-order extrapolation near the onset.

    Examples
    --------
    >>> round(corrected_onset_temperature(423.15, 100e3, 1.936), 3)  # METHODS.md C3.7
    413.538

    References
    ----------
    Fisher & Goetz 1991, J. Loss Prev. Process Ind. 4, 305-316 (from memory).
    """
    t = require_absolute_temperature("measured_onset_k", measured_onset_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return 1.0 / (1.0 / t + (R / e) * math.log(_phi(phi)))


def corrected_self_heat_rate(phi: float, measured_rate_k_per_s: float) -> float:
    """Adiabatic self-heat rate at the same temperature: φ·(dT/dt)_meas.

    Equation: (dT/dt)_ad = φ·(dT/dt)_meas.

    Parameters
    ----------
    phi : float
        φ [-].
    measured_rate_k_per_s : float
        Measured self-heat rate [K/s].

    Returns
    -------
    float
        Adiabatic self-heat rate [K/s].

    Validity: same temperature, low conversion.

    Examples
    --------
    >>> round(corrected_self_heat_rate(2.0, 0.02 / 60) * 60, 3)
    0.04

    References
    ----------
    Townsend & Tou 1980 (from memory).
    """
    return _phi(phi) * require_finite("measured_rate_k_per_s", measured_rate_k_per_s)


def corrected_tmr(phi: float, measured_tmr_s: float) -> float:
    """Adiabatic TMR at the same temperature: TMR_meas/φ.

    Equation: TMR_ad(T) ≈ TMR_meas(T)/φ.

    Parameters
    ----------
    phi : float
        φ [-].
    measured_tmr_s : float
        Measured TMR [s].

    Returns
    -------
    float
        TMR_ad [s].

    Validity: zero-order approximation, same temperature.

    Examples
    --------
    >>> round(corrected_tmr(1.936, 7200.0) / 60, 2)  # METHODS.md C3.7
    61.98

    References
    ----------
    Townsend & Tou 1980 (from memory).
    """
    return require_positive("measured_tmr_s", measured_tmr_s) / _phi(phi)


def corrected_final_temperature(
    corrected_onset_k: float, phi: float, measured_rise_k: float
) -> float:
    """φ-corrected final temperature: T_f,corr = T₀,corr + φ·ΔT_meas.

    Equation: T_f,corr = T₀,corr + φ·ΔT_meas.

    Parameters
    ----------
    corrected_onset_k : float
        T₀,corr [K].
    phi : float
        φ [-].
    measured_rise_k : float
        ΔT_meas [K].

    Returns
    -------
    float
        T_f,corr [K].

    Validity: complete reaction.

    Examples
    --------
    >>> round(corrected_final_temperature(413.538, 1.936, 150.0) - 273.15, 2)  # C3.7
    430.79

    References
    ----------
    Fisher & Goetz 1991 (from memory).
    """
    t = require_absolute_temperature("corrected_onset_k", corrected_onset_k)
    return t + _phi(phi) * require_finite("measured_rise_k", measured_rise_k)
