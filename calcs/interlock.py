"""The feed interlock on temperature: MTSR when dosing goes on after a cooling failure until
the interlock trips, against stopping the feed at once (METHODS.md §13.3).

The semi-batch reaction is the what-if model of :mod:`calcs.semibatch` (pseudo-first order in
the dosed reagent, rate constant k at T_p, Arrhenius with E), integrated with scipy:
isothermal at T_p up to the failure, adiabatic after it; the feed continues at its rate until
the temperature reaches the trip temperature and for the response delay after it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_non_negative,
    require_positive,
)

REFERENCES = ("stoessel2008", "methods_md")

#: The integration ends when the unreacted fraction left is below this [-].
_DONE = 1e-7


@dataclass(frozen=True)
class InterlockResult:
    """MTSR with the interlock, and the two cases it lies between."""

    mtsr_with_interlock_k: float
    mtsr_feed_stopped_at_failure_k: float
    mtsr_feed_never_stopped_k: float
    trip_time_s: float | None  # after the failure; None: the trip temperature was not reached
    feed_stopped_s: float | None  # after the failure; None: the feed ran to its end
    dosed_fraction_at_stop: float


def _rhs(e_over_r: float, k_p: float, t_p: float, q_tot: float, m0: float, m_feed: float,
         cp: float, feed_rate: float, adiabatic: bool):
    def f(_t, y):
        dosed, converted, temp = y
        k = k_p * math.exp(-e_over_r * (1.0 / temp - 1.0 / t_p))
        rate = k * max(dosed - converted, 0.0)
        dtemp = q_tot * rate / ((m0 + m_feed * dosed) * cp) if adiabatic else 0.0
        return [feed_rate if dosed < 1.0 else 0.0, rate, dtemp]
    return f


def _run_out(y0, rhs, horizon_s: float) -> tuple[float, np.ndarray]:
    """Integrate with the feed stopped until the accumulation is gone; max T and the state."""
    def done(_t, y):
        return (y[0] - y[1]) - _DONE
    done.terminal = True
    sol = solve_ivp(rhs, (0.0, horizon_s), y0, method="LSODA", events=done, rtol=1e-9,
                    atol=1e-12, dense_output=False)
    return float(np.max(sol.y[2])), sol.y[:, -1]


def feed_interlock_mtsr(
    *, process_temperature_k: float, initial_mass_kg: float, feed_mass_kg: float,
    dosing_time_s: float, failure_time_s: float, rate_constant_per_s: float,
    activation_energy_j_per_mol: float, reaction_heat_j: float, specific_heat_j_per_kg_k: float,
    trip_temperature_k: float, response_time_s: float,
) -> InterlockResult:
    """MTSR after a cooling failure with a feed interlock on temperature, and its two bounds.

    Equation: df/dt = 1/t_d while the feed runs; dX/dt = k(T)·(f − X) with
    k(T) = k_p·exp[−(E/R)(1/T − 1/T_p)]; dT/dt = Q_tot·(dX/dt)/((m₀ + m_feed·f)·c_p)
    after the failure (0 before). The feed stops at t_trip + t_response, where T(t_trip) =
    T_trip, or at its end; MTSR = max T until the accumulation has reacted.

    Parameters
    ----------
    process_temperature_k : float
        T_p, the temperature up to the failure [K].
    initial_mass_kg : float
        Mass charged before dosing m₀ [kg].
    feed_mass_kg : float
        Mass of the whole feed m_feed [kg] (stoichiometric amount).
    dosing_time_s : float
        Planned dosing time t_d [s].
    failure_time_s : float
        Time of the cooling failure after the start of dosing [s], at most t_d.
    rate_constant_per_s : float
        k at T_p [1/s].
    activation_energy_j_per_mol : float
        E of the synthesis reaction [J/mol] (0: rate independent of temperature).
    reaction_heat_j : float
        Heat of the whole feed reacting Q_tot [J]; positive for an exotherm.
    specific_heat_j_per_kg_k : float
        c_p of the reaction mass [J/(kg K)].
    trip_temperature_k : float
        Temperature at which the interlock trips [K]; above T_p.
    response_time_s : float
        Delay from the trip to the feed being stopped [s].

    Returns
    -------
    InterlockResult
        MTSR with the interlock [K], with the feed stopped at the failure [K], with the feed
        never stopped [K], trip and stop times after the failure [s] (None where they do not
        happen) and the dosed fraction when the feed stopped.

    Validity: the what-if model's assumptions (one pseudo-first-order reaction, feed at the
    reactor temperature, no heat loss, no evaporation; φ = 1, the plant-scale case).

    Examples
    --------
    >>> r = feed_interlock_mtsr(process_temperature_k=303.15, initial_mass_kg=0.40,
    ...     feed_mass_kg=0.10, dosing_time_s=3600.0, failure_time_s=1800.0,
    ...     rate_constant_per_s=0.1 / 60.0, activation_energy_j_per_mol=0.0,
    ...     reaction_heat_j=60e3, specific_heat_j_per_kg_k=2000.0,
    ...     trip_temperature_k=1000.0, response_time_s=60.0)
    >>> round(r.mtsr_feed_stopped_at_failure_k - 273.15, 3)  # METHODS.md C1.7, t = 30 min
    40.558

    References
    ----------
    METHODS.md §13.3 and §1 (C1.7 model); Stoessel 2008 ch. 7 (dosing interlocks, from
    memory).
    """
    t_p = require_absolute_temperature("process_temperature_k", process_temperature_k)
    m0 = require_positive("initial_mass_kg", initial_mass_kg)
    m_feed = require_positive("feed_mass_kg", feed_mass_kg)
    t_d = require_positive("dosing_time_s", dosing_time_s)
    t_f = require_non_negative("failure_time_s", failure_time_s)
    k_p = require_positive("rate_constant_per_s", rate_constant_per_s)
    e = require_non_negative("activation_energy_j_per_mol", activation_energy_j_per_mol)
    q_tot = require_non_negative("reaction_heat_j", reaction_heat_j)
    cp = require_positive("specific_heat_j_per_kg_k", specific_heat_j_per_kg_k)
    t_trip = require_absolute_temperature("trip_temperature_k", trip_temperature_k)
    delay = require_non_negative("response_time_s", response_time_s)
    if t_f > t_d:
        raise CalcInputError("failure_time_s", t_f,
                             f"must be within the dosing time of {t_d:g} s")
    if t_trip <= t_p:
        raise CalcInputError("trip_temperature_k", t_trip,
                             f"must be above the process temperature {t_p:g} K")
    e_r, feed_rate = e / R, 1.0 / t_d
    args = (e_r, k_p, t_p, q_tot, m0, m_feed, cp)
    # Slow reactions need long to use up what accumulated: a generous horizon in 1/k.
    horizon = 50.0 / k_p + t_d

    # Up to the failure: isothermal at T_p, feed running.
    before = solve_ivp(_rhs(*args, feed_rate, adiabatic=False), (0.0, t_f), [0.0, 0.0, t_p],
                       method="LSODA", rtol=1e-10, atol=1e-13)
    y_fail = before.y[:, -1]
    stopped_max, _ = _run_out(y_fail, _rhs(*args, 0.0, adiabatic=True), horizon)

    def feed_ends(_t, y):
        return y[0] - 1.0
    feed_ends.terminal = True

    def trips(_t, y):
        return y[2] - t_trip
    trips.terminal = True
    trips.direction = 1

    # Never stopped: the feed runs to its end, then the rest reacts.
    feeding = _rhs(*args, feed_rate, adiabatic=True)
    to_end = solve_ivp(feeding, (0.0, t_d - t_f + 1.0), y_fail, method="LSODA",
                       events=feed_ends, rtol=1e-9, atol=1e-12)
    never_max, _ = _run_out(to_end.y[:, -1], _rhs(*args, 0.0, adiabatic=True), horizon)
    never_max = max(never_max, float(np.max(to_end.y[2])))

    # With the interlock: feed until the trip (or its end), the delay, then stopped.
    to_trip = solve_ivp(feeding, (0.0, t_d - t_f + 1.0), y_fail, method="LSODA",
                        events=[trips, feed_ends], rtol=1e-9, atol=1e-12)
    tripped = len(to_trip.t_events[0]) > 0
    peak = float(np.max(to_trip.y[2]))
    y = to_trip.y[:, -1]
    trip_time = float(to_trip.t_events[0][0]) if tripped else None
    stop_time = None
    if tripped:
        if delay > 0.0 and y[0] < 1.0:
            during = solve_ivp(feeding, (0.0, delay), y, method="LSODA", events=feed_ends,
                               rtol=1e-9, atol=1e-12)
            peak = max(peak, float(np.max(during.y[2])))
            y = during.y[:, -1]
            stop_time = trip_time + float(during.t[-1])
        else:
            stop_time = trip_time
        if y[0] >= 1.0 - 1e-12:
            stop_time = None  # the feed had ended before the interlock could stop it
    after_max, _ = _run_out(y, _rhs(*args, 0.0, adiabatic=True), horizon)
    return InterlockResult(
        mtsr_with_interlock_k=max(peak, after_max),
        mtsr_feed_stopped_at_failure_k=stopped_max,
        mtsr_feed_never_stopped_k=never_max,
        trip_time_s=trip_time,
        feed_stopped_s=stop_time,
        dosed_fraction_at_stop=float(min(y[0], 1.0)),
    )
