"""An adiabatic (ARC-type) run: onset, self-heat rate, φ correction of the whole curve,
measured TMR, pressure and non-condensable gas (METHODS.md §12.5, §3.7).

φ correction of the whole curve [MEMORY: Fisher et al. 1992 (DIERS project manual);
ASTM E1981], each point mapped at the same conversion, derived in a few lines from
dT/dt = (ΔT_ad/φ)·k(T)·f(α) [DERIVED]:

* onset: 1/T₀,ad = 1/T₀,m + (R/E)·ln φ;
* temperature: T_ad = T₀,ad + φ·(T_m − T₀,m);
* self-heat rate: (dT/dt)_ad = φ·(dT/dt)_m·exp[(E/R)(1/T_m − 1/T_ad)];
* time: t_ad = ∫ dT_ad/(dT/dt)_ad, so TMR_ad(T_ad) = t_ad,max − t_ad(T_ad).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import integrate

from calcs.constants import R
from calcs.errors import CalcInputError, require_finite_array, require_positive

REFERENCES = ("fisher1992", "astm_e1981", "townsend_tou1980")
DETECTION_SENSITIVITY_K_PER_S = 0.02 / 60.0  # 0.02 K/min: common practice, no source


@dataclass(frozen=True)
class AdiabaticRun:
    """What one adiabatic run yields (measured, before the φ correction)."""

    onset_k: float
    onset_time_s: float
    max_rate_k_per_s: float
    temperature_at_max_rate_k: float
    time_at_max_rate_s: float
    measured_rise_k: float
    tmr_from_onset_s: float
    self_heat_rate_k_per_s: np.ndarray
    max_pressure_pa: float | None
    max_pressure_rate_pa_per_s: float | None
    warnings: tuple[str, ...]


def analyse_adiabatic_run(
    time_s,
    temperature_k,
    pressure_pa=None,
    sensitivity_k_per_s: float = DETECTION_SENSITIVITY_K_PER_S,
) -> AdiabaticRun:
    """Onset at the detection sensitivity, self-heat rate, measured TMR and pressure figures.

    Equation: m_T = dT/dt (central differences); onset = first point from which m_T
    stays ≥ the sensitivity up to the maximum rate; TMR_meas = t(max m_T) − t(onset);
    ΔT_meas = T_max − T_onset; max P and max dP/dt.

    Parameters
    ----------
    time_s : array_like
        Time [s], increasing.
    temperature_k : array_like
        Sample temperature [K].
    pressure_pa : array_like or None
        Cell pressure [Pa].
    sensitivity_k_per_s : float
        Detection sensitivity [K/s] (0.02 K/min).

    Returns
    -------
    AdiabaticRun
        Onset [K], rates [K/s], times [s], pressure figures [Pa, Pa/s].

    Validity: the exothermic part of a heat-wait-search or isothermal-age run;
    steps of the heater before the onset are ignored.

    Examples
    --------
    >>> t = np.linspace(0, 1000, 1001)
    >>> run = analyse_adiabatic_run(t, 400 + 50 / (1 + np.exp(-(t - 600) / 40)))
    >>> round(run.time_at_max_rate_s), round(run.onset_k, 1)
    (600, 400.0)

    References
    ----------
    ASTM E1981; Townsend & Tou 1980.
    """
    t = require_finite_array("time_s", time_s)
    temp = require_finite_array("temperature_k", temperature_k)
    if len(t) != len(temp) or len(t) < 5:
        raise CalcInputError("temperature_k", len(temp), "needs 5+ rows, as many as time_s")
    if np.any(np.diff(t) <= 0):
        raise CalcInputError("time_s", t, "must increase from row to row")
    s = require_positive("sensitivity_k_per_s", sensitivity_k_per_s)
    rate = np.gradient(temp, t)
    im = int(np.argmax(rate))
    if rate[im] < s:
        raise CalcInputError(
            "temperature_k",
            float(rate[im]),
            f"self-heat rate never reaches the sensitivity {s * 60:g} K/min",
        )
    below = np.flatnonzero(rate[:im] < s)
    io = int(below[-1]) + 1 if below.size else 0
    p_max = dp_max = None
    warnings = []
    if pressure_pa is not None:
        p = require_finite_array("pressure_pa", pressure_pa)
        if len(p) != len(t):
            raise CalcInputError("pressure_pa", len(p), "must have as many rows as time_s")
        p_max, dp_max = float(p.max()), float(np.gradient(p, t).max())
    if io == 0:
        warnings.append("the run starts above the detection sensitivity: onset is the first row")
    return AdiabaticRun(
        float(temp[io]),
        float(t[io]),
        float(rate[im]),
        float(temp[im]),
        float(t[im]),
        float(temp[io:].max() - temp[io]),
        float(t[im] - t[io]),
        rate,
        p_max,
        dp_max,
        tuple(warnings),
    )


def phi_correct_curve(
    temperature_k, self_heat_rate_k_per_s, phi: float, activation_energy_j_per_mol: float
):
    """φ correction of a whole self-heat-rate curve, with the corrected time and TMR(T).

    Equation: T_ad = T₀,ad + φ(T_m − T₀,m) with 1/T₀,ad = 1/T₀,m + (R/E)ln φ;
    (dT/dt)_ad = φ·(dT/dt)_m·exp[(E/R)(1/T_m − 1/T_ad)]; t_ad = ∫dT_ad/(dT/dt)_ad
    (trapezoid on 1/rate); TMR_ad = t_ad at the maximum rate − t_ad.

    Parameters
    ----------
    temperature_k : array_like
        Measured T from the onset onwards [K], increasing.
    self_heat_rate_k_per_s : array_like
        Measured dT/dt at those points [K/s], > 0.
    phi : float
        φ of the test [-] (≥ 1).
    activation_energy_j_per_mol : float
        E [J/mol] (from the run or the fitted kinetics).

    Returns
    -------
    tuple
        (T_ad [K], (dT/dt)_ad [K/s], t_ad [s], TMR_ad(T_ad) [s]).

    Validity: single-step kinetics, the same conversion at mapped points; φ close
    to the plant's (1) is the target.

    Examples
    --------
    >>> t_ad, r_ad, _, _ = phi_correct_curve([423.15, 433.15], [0.02 / 60, 0.04 / 60],
    ...                                      1.936, 100e3)
    >>> round(float(t_ad[0]), 3), round(float(r_ad[0]) * 60, 4)  # METHODS.md C3.7 onset
    (413.538, 0.02)

    References
    ----------
    Fisher et al. 1992 (DIERS project manual, from memory); ASTM E1981; METHODS.md §3.7.
    """
    tm = require_finite_array("temperature_k", temperature_k)
    rm = require_finite_array("self_heat_rate_k_per_s", self_heat_rate_k_per_s)
    if len(tm) != len(rm) or len(tm) < 2:
        raise CalcInputError("self_heat_rate_k_per_s", len(rm), "needs 2+ rows, as many as T")
    if rm.min() <= 0:
        raise CalcInputError("self_heat_rate_k_per_s", float(rm.min()), "must be > 0")
    ph = float(phi)
    if not ph >= 1.0:
        raise CalcInputError("phi", phi, "must be at least 1")
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    t0 = 1.0 / (1.0 / tm[0] + (R / e) * math.log(ph))
    t_ad = t0 + ph * (tm - tm[0])
    r_ad = ph * rm * np.exp((e / R) * (1.0 / tm - 1.0 / t_ad))
    time_ad = integrate.cumulative_trapezoid(1.0 / r_ad, t_ad, initial=0.0)
    im = int(np.argmax(r_ad))
    return t_ad, r_ad, time_ad, time_ad[im] - time_ad


def non_condensable_gas(
    pressure_after_cooling_pa: float,
    temperature_k: float,
    free_volume_m3: float,
    initial_pressure_pa: float = 0.0,
) -> float:
    """Non-condensable gas formed, from the pressure after cooling back to the start.

    Equation: n = (P_after − P_initial)·V_free/(R·T) (ideal gas).

    Parameters
    ----------
    pressure_after_cooling_pa : float
        Cell pressure after cooling [Pa].
    temperature_k : float
        Temperature at that reading [K].
    free_volume_m3 : float
        Gas volume of the cell [m³].
    initial_pressure_pa : float
        Pressure at the same temperature before the run [Pa].

    Returns
    -------
    float
        Gas formed [mol].

    Validity: ideal gas; the vapour of the residue neglected (or in P_initial).

    Examples
    --------
    >>> round(non_condensable_gas(301325.0, 298.15, 1e-5, 101325.0) * 1e3, 3)
    0.807

    References
    ----------
    METHODS.md §12.5; ideal-gas law.
    """
    p = float(pressure_after_cooling_pa) - float(initial_pressure_pa)
    t = require_positive("temperature_k", temperature_k)
    v = require_positive("free_volume_m3", free_volume_m3)
    return max(p, 0.0) * v / (R * t)
