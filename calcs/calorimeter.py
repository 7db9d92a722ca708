"""Heat balance of a heat-flow reaction calorimeter (METHODS.md §2.1).

Sign convention: heat released by the reaction is positive. The balance is the
standard form [MEMORY per METHODS.md; Stoessel ch. 4, HarsBook ch. 5]:
q_rx = UA·(T_r − T_j) + (m·c_p + C_insert)·dT_r/dt + ṁ_d·c_p,d·(T_r − T_d) + q_loss − q_stir
(+ q_reflux + q_evap). Functions accept scalars or numpy arrays.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcs.errors import CalcInputError, require_finite, require_positive

REFERENCES = ("harsbook_ch5", "regenass1997", "stoessel2008")


@dataclass(frozen=True)
class HeatFlowTerms:
    """Each term of the heat balance [W] and their sum q_rx [W]."""

    heat_flow_w: float
    accumulation_w: float
    dosing_w: float
    loss_w: float
    stirrer_w: float
    reflux_w: float
    reaction_w: float


def heat_flow_balance(
    heat_transfer_capacity_w_per_k, reactor_minus_jacket_k, heat_capacity_j_per_k,
    reactor_temperature_rate_k_per_s, dosing_rate_kg_per_s=0.0, feed_cp_j_per_kg_k=0.0,
    reactor_temperature_k=0.0, feed_temperature_k=0.0, heat_loss_w=0.0, stirrer_power_w=0.0,
    reflux_w=0.0,
) -> HeatFlowTerms:
    """Reaction heat-release rate from the heat balance, with each term returned.

    Equation: q_rx = UA·(T_r − T_j) + (m·c_p + C_insert)·dT_r/dt
    + ṁ_d·c_p,d·(T_r − T_d) + q_loss − q_stir + q_reflux.

    Parameters
    ----------
    heat_transfer_capacity_w_per_k : float or array
        UA, calibrated [W/K].
    reactor_minus_jacket_k : float or array
        T_r − T_j [K].
    heat_capacity_j_per_k : float or array
        m·c_p + C_insert of contents and inserts [J/K].
    reactor_temperature_rate_k_per_s : float or array
        dT_r/dt [K/s].
    dosing_rate_kg_per_s : float or array
        Feed rate ṁ_d [kg/s].
    feed_cp_j_per_kg_k : float
        c_p of the feed [J/(kg K)].
    reactor_temperature_k : float or array
        T_r [K].
    feed_temperature_k : float or array
        T_d [K].
    heat_loss_w : float or array
        q_loss through the lid, from the baseline [W].
    stirrer_power_w : float or array
        q_stir, from the baseline [W].
    reflux_w : float or array
        q_reflux + q_evap when present [W].

    Returns
    -------
    HeatFlowTerms
        The terms [W] and q_rx [W].

    Validity: UA interpolated over the run (volume and viscosity change).

    Examples
    --------
    >>> t = heat_flow_balance(4.0, 2.5, 1000.0, 0.001, 1.5e-3 / 60, 2000.0, 318.15, 298.15, 0.2)
    >>> round(t.reaction_w, 3)  # METHODS.md C2.1
    12.2

    References
    ----------
    HarsBook ch. 5; Regenass 1997; Stoessel 2008 ch. 4 (from memory).
    """
    hf = np.multiply(heat_transfer_capacity_w_per_k, reactor_minus_jacket_k)
    acc = np.multiply(heat_capacity_j_per_k, reactor_temperature_rate_k_per_s)
    dos = np.multiply(np.multiply(dosing_rate_kg_per_s, feed_cp_j_per_kg_k),
                      np.subtract(reactor_temperature_k, feed_temperature_k))
    total = hf + acc + dos + heat_loss_w - np.asarray(stirrer_power_w) + reflux_w
    if not np.isfinite(total).all():
        raise CalcInputError("heat_flow_balance", total, "inputs must be finite")

    def f(x):
        return float(x) if np.ndim(x) == 0 else np.asarray(x, dtype=float)

    return HeatFlowTerms(f(hf), f(acc), f(dos), f(heat_loss_w), f(stirrer_power_w), f(reflux_w),
                         f(total))


def ua_from_calibration(calibration_power_w: float, delta_t_change_k: float) -> float:
    """UA from an electrical calibration pulse.

    Equation: UA = P_cal/ΔT_cal, ΔT_cal the change of (T_r − T_j) from the baseline.

    Parameters
    ----------
    calibration_power_w : float
        Heater power P_cal [W].
    delta_t_change_k : float
        Change of T_r − T_j [K].

    Returns
    -------
    float
        UA [W/K].

    Validity: steady state reached during the pulse.

    Examples
    --------
    >>> ua_from_calibration(10.0, 2.5)
    4.0

    References
    ----------
    HarsBook ch. 5; METHODS.md §2.1.
    """
    p = require_positive("calibration_power_w", calibration_power_w)
    return p / require_positive("delta_t_change_k", delta_t_change_k)


def ua_interpolated(time_s, time_before_s: float, ua_before_w_per_k: float, time_after_s: float,
                    ua_after_w_per_k: float):
    """UA(t) interpolated linearly in time between two calibrations.

    Equation: UA(t) = UA₁ + (UA₂ − UA₁)·(t − t₁)/(t₂ − t₁), held constant outside [t₁, t₂].

    Parameters
    ----------
    time_s : float or array
        Times [s].
    time_before_s : float
        Time of the calibration before the reaction [s].
    ua_before_w_per_k : float
        UA₁ [W/K].
    time_after_s : float
        Time of the calibration after the reaction [s].
    ua_after_w_per_k : float
        UA₂ [W/K].

    Returns
    -------
    numpy.ndarray
        UA(t) [W/K].

    Validity: linear change in time (interpolating in conversion is an alternative).

    Examples
    --------
    >>> ua_interpolated([0.0, 50.0, 100.0], 0.0, 4.0, 100.0, 5.0).tolist()
    [4.0, 4.5, 5.0]

    References
    ----------
    METHODS.md §2.1.
    """
    t1 = require_finite("time_before_s", time_before_s)
    t2 = require_finite("time_after_s", time_after_s)
    if t2 <= t1:
        raise CalcInputError("time_after_s", time_after_s, "must be later than time_before_s")
    return np.interp(np.asarray(time_s, dtype=float), [t1, t2],
                     [require_positive("ua_before_w_per_k", ua_before_w_per_k),
                      require_positive("ua_after_w_per_k", ua_after_w_per_k)])


def heat_capacity_from_ramp(heat_transfer_capacity_w_per_k: float, reactor_minus_jacket_k: float,
                            reactor_temperature_rate_k_per_s: float) -> float:
    """Heat capacity of contents and inserts from a temperature ramp without reaction.

    Equation: m·c_p + C_insert = −UA·(T_r − T_j)/(dT_r/dt) [DERIVED, q_rx = 0].

    Parameters
    ----------
    heat_transfer_capacity_w_per_k : float
        UA [W/K].
    reactor_minus_jacket_k : float
        T_r − T_j during the ramp [K] (negative when heating).
    reactor_temperature_rate_k_per_s : float
        dT_r/dt [K/s].

    Returns
    -------
    float
        m·c_p + C_insert [J/K].

    Validity: no reaction, losses and stirrer power removed with the baseline.

    Examples
    --------
    >>> heat_capacity_from_ramp(4.0, -0.5, 0.002)
    1000.0

    References
    ----------
    METHODS.md §2.1 [DERIVED].
    """
    ua = require_positive("heat_transfer_capacity_w_per_k", heat_transfer_capacity_w_per_k)
    d = require_finite("reactor_minus_jacket_k", reactor_minus_jacket_k)
    rate = require_finite("reactor_temperature_rate_k_per_s", reactor_temperature_rate_k_per_s)
    if rate == 0.0:
        raise CalcInputError("reactor_temperature_rate_k_per_s", rate, "must not be 0")
    c = -ua * d / rate
    if c <= 0.0:
        raise CalcInputError("reactor_minus_jacket_k", d, "must have the opposite sign of the ramp")
    return c


def specific_heat_capacity_from_ramp(heat_capacity_j_per_k: float, mass_kg: float,
                                     insert_heat_capacity_j_per_k: float = 0.0) -> float:
    """Specific heat capacity of the contents from the ramp heat capacity.

    Equation: c_p = (C_ramp − C_insert)/m.

    Parameters
    ----------
    heat_capacity_j_per_k : float
        m·c_p + C_insert from :func:`heat_capacity_from_ramp` [J/K].
    mass_kg : float
        Mass of the contents [kg].
    insert_heat_capacity_j_per_k : float
        C_insert of the inserts [J/K].

    Returns
    -------
    float
        c_p [J/(kg K)].

    Validity: C_insert known from an empty or reference run.

    Examples
    --------
    >>> specific_heat_capacity_from_ramp(1000.0, 0.45, 100.0)
    2000.0

    References
    ----------
    METHODS.md §2.1.
    """
    c = require_positive("heat_capacity_j_per_k", heat_capacity_j_per_k)
    m = require_positive("mass_kg", mass_kg)
    ci = require_finite("insert_heat_capacity_j_per_k", insert_heat_capacity_j_per_k)
    return (c - ci) / m


def time_lag_correction(time_s, measured_heat_flow_w, time_constant_s: float) -> np.ndarray:
    """First-order (Tian-type) correction of the calorimeter time lag.

    Equation: q_true ≈ q_meas + τ·dq_meas/dt (derivative by ``numpy.gradient``).

    Parameters
    ----------
    time_s : array_like
        Increasing time stamps [s].
    measured_heat_flow_w : array_like
        q_meas [W].
    time_constant_s : float
        Calorimeter time constant τ [s].

    Returns
    -------
    numpy.ndarray
        Corrected q [W].

    Validity: first-order instrument response; amplifies noise.

    Examples
    --------
    >>> time_lag_correction([0, 1, 2], [0.0, 1.0, 2.0], 10.0).tolist()
    [10.0, 11.0, 12.0]

    References
    ----------
    METHODS.md §1.2 good practice (from memory); HarsBook ch. 5.
    """
    t = np.asarray(time_s, dtype=float)
    q = np.asarray(measured_heat_flow_w, dtype=float)
    tau = require_positive("time_constant_s", time_constant_s)
    return q + tau * np.gradient(q, t)
