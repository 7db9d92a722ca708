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
from calcs.result import Result

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


def first_order_activation_energy(
    temperature_k,
    self_heat_rate_k_per_s,
    onset_k: float,
    final_k: float,
    conversion_range: tuple[float, float] = (0.05, 0.8),
) -> Result:
    """E of an adiabatic run from its self-heat rate, first order (Townsend & Tou 1980).

    Equation: α = (T − T₀)/(T_f − T₀); k(T) = m_T/(T_f − T) for n = 1;
    ln k = ln A − E/(R·T), least squares over α in ``conversion_range``.

    Parameters
    ----------
    temperature_k : array_like
        Sample temperature [K], onset to maximum.
    self_heat_rate_k_per_s : array_like
        Self-heat rate m_T at those points [K/s].
    onset_k : float
        T₀ of the exotherm [K].
    final_k : float
        Highest temperature of the exotherm T_f [K].
    conversion_range : tuple
        (α_low, α_high) used for the fit [-].

    Returns
    -------
    Result
        E [J/mol]; parameters: ln A [ln(1/s)], standard error of E, r², points used.

    Validity: single-step first-order decomposition; the same φ throughout the run
    (E does not depend on φ: k = m_T/(T_f − T) holds at any φ). A poor straight line
    (r² < 0.998, a limit chosen here: a third-order run gives 0.994) is warned about:
    the reaction is then not first order.

    Examples
    --------
    >>> temp = np.linspace(400.0, 500.0, 101)
    >>> k = 1e9 * np.exp(-100e3 / (R * temp))
    >>> round(first_order_activation_energy(temp, k * (500.0 - temp), 400.0, 500.0).value)
    100000

    References
    ----------
    Townsend & Tou 1980 (the pseudo-rate constant of an adiabatic run).
    """
    temp = require_finite_array("temperature_k", temperature_k)
    rate = require_finite_array("self_heat_rate_k_per_s", self_heat_rate_k_per_s)
    t0, tf = float(onset_k), float(final_k)
    if not tf > t0:
        raise CalcInputError("final_k", final_k, "must be above the onset")
    alpha = (temp - t0) / (tf - t0)
    lo, hi = conversion_range
    keep = (alpha >= lo) & (alpha <= hi) & (rate > 0) & (temp < tf)
    if keep.sum() < 5:
        return Result(None, "J/mol", "arc.first_order_activation_energy",
                      ("fewer than 5 points between 5 % and 80 % conversion: E unknown",))
    x, y = 1.0 / temp[keep], np.log(rate[keep] / (tf - temp[keep]))
    (slope, intercept), cov = np.polyfit(x, y, 1, cov=True)
    fitted = slope * x + intercept
    r2 = 1.0 - float(np.sum((y - fitted) ** 2) / np.sum((y - y.mean()) ** 2))
    warnings = []
    if r2 < 0.998:
        warnings.append(f"ln k vs 1/T is not a straight line (r² = {r2:.3f}): not first "
                        "order, E from the run is doubtful")
    e = -float(slope) * R
    if e <= 0:
        return Result(None, "J/mol", "arc.first_order_activation_energy",
                      ("the rate constant does not rise with temperature: E unknown",))
    return Result(
        e,
        "J/mol",
        "arc.first_order_activation_energy",
        tuple(warnings),
        {"ln_a_per_s": float(intercept), "stderr_j_per_mol": float(math.sqrt(cov[0, 0])) * R,
         "r_squared": r2, "points": int(keep.sum())},
        ("townsend_tou1980",),
    )


def gas_after_cooling(
    temperature_k,
    pressure_pa,
    free_volume_m3: float | None,
    sample_mass_kg: float,
    tolerance_k: float = 5.0,
) -> Result:
    """Non-condensable gas of a run whose file goes on until the cell has cooled back.

    Equation: if the last temperature is within ``tolerance_k`` of the first one,
    n = (P_last − P_first)·V_free/(R·T_last) (:func:`non_condensable_gas`), per kg of
    sample.

    Parameters
    ----------
    temperature_k : array_like
        Sample temperature [K].
    pressure_pa : array_like
        Cell pressure [Pa].
    free_volume_m3 : float or None
        Gas volume of the cell [m³]; None: only the pressure rise is given.
    sample_mass_kg : float
        Sample mass [kg].
    tolerance_k : float
        How close to the start the cell must have cooled [K] (common practice, no source).

    Returns
    -------
    Result
        Gas [mol/kg] or None; parameters: pressure rise after cooling [Pa], n [mol].

    Validity: ideal gas; the residue's vapour pressure at the start temperature is
    taken as part of the initial pressure.

    Examples
    --------
    >>> r = gas_after_cooling([298.15, 500.0, 298.15], [101325.0, 9e5, 301325.0], 1e-5, 5e-3)
    >>> round(r.value, 4)
    0.1614

    References
    ----------
    METHODS.md §12.5; ideal-gas law.
    """
    temp = require_finite_array("temperature_k", temperature_k)
    p = require_finite_array("pressure_pa", pressure_pa)
    m = require_positive("sample_mass_kg", sample_mass_kg)
    if abs(temp[-1] - temp[0]) > tolerance_k:
        return Result(None, "mol/kg", "arc.gas_after_cooling",
                      (f"the file ends at {temp[-1] - temp[0]:+.1f} K from its start "
                       "temperature: the cell did not cool back, non-condensable gas unknown",))
    rise = float(p[-1] - p[0])
    params = {"pressure_rise_after_cooling_pa": rise,
              "temperature_after_cooling_k": float(temp[-1])}
    if free_volume_m3 is None:
        return Result(None, "mol/kg", "arc.gas_after_cooling",
                      ("no free volume of the cell: only the pressure rise after cooling "
                       "is known",), params)
    n = non_condensable_gas(float(p[-1]), float(temp[-1]), free_volume_m3, float(p[0]))
    return Result(n / m, "mol/kg", "arc.gas_after_cooling", (), {**params, "gas_mol": n},
                  ("methods_md",))


def corrected_run(time_s, temperature_k, run: AdiabaticRun, phi: float,
                  activation_energy_j_per_mol: float, points: int = 200) -> dict:
    """The φ-corrected curve of an analysed run, from the onset to the highest temperature.

    Equation: :func:`phi_correct_curve` on the rows from the onset to T_max where the
    self-heat rate is positive; TMR_ad at the corrected onset; T_f,ad = T₀,ad + φ·ΔT_meas.

    Parameters
    ----------
    time_s, temperature_k : array_like
        The run's columns [s], [K].
    run : AdiabaticRun
        Its analysis.
    phi : float
        φ of the cell [-].
    activation_energy_j_per_mol : float
        E [J/mol].
    points : int
        At most this many rows of the corrected curve are returned (evenly spaced).

    Returns
    -------
    dict
        onset_k, final_k, tmr_at_onset_s [s], curve {temperature_k, self_heat_rate_k_per_s,
        tmr_s}.

    Validity: as :func:`phi_correct_curve`.

    Examples
    --------
    >>> t = np.linspace(0, 1000, 1001)
    >>> temp = 400 + 50 / (1 + np.exp(-(t - 600) / 40))
    >>> run = analyse_adiabatic_run(t, temp)
    >>> c = corrected_run(t, temp, run, 1.0, 100e3)  # φ = 1: the measured run itself
    >>> round(c["onset_k"], 1), round(c["tmr_at_onset_s"]), round(run.tmr_from_onset_s)
    (400.0, 329, 329)

    References
    ----------
    Fisher et al. 1992; ASTM E1981.
    """
    t = np.asarray(time_s, float)
    temp = np.asarray(temperature_k, float)
    rate = run.self_heat_rate_k_per_s
    io = int(np.searchsorted(t, run.onset_time_s))
    it = io + int(np.argmax(temp[io:]))
    rows = np.arange(io, it + 1)
    positive = rate[rows] > 0
    if not positive.all():
        rows = rows[: int(np.argmin(positive))]
    t_ad, r_ad, _, tmr = phi_correct_curve(temp[rows], rate[rows], phi,
                                           activation_energy_j_per_mol)
    keep = np.unique(np.r_[np.linspace(0, len(rows) - 1, points).round().astype(int),
                           int(np.argmax(r_ad))])
    return {
        "onset_k": float(t_ad[0]),
        "final_k": float(t_ad[0] + phi * run.measured_rise_k),
        "tmr_at_onset_s": float(tmr[0]),
        "curve": {
            "temperature_k": t_ad[keep].tolist(),
            "self_heat_rate_k_per_s": r_ad[keep].tolist(),
            "tmr_s": tmr[keep].tolist(),
        },
    }
