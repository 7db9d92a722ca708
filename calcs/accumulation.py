"""Thermal accumulation and MTSR(t) from a heat-flow calorimetry record (METHODS.md §1.2).

All arrays are 1-D numpy float arrays of one length, one entry per time stamp.
The algorithm, step by step:

1. Q(t_i) by the cumulative trapezoid rule.
2. Q_tot over the whole record; the end-of-reaction criterion (default
   |q| < 1 % of q_max) is evaluated and *recorded*, and a warning is given when
   the record ends before the criterion is met (Q_tot then too small, X_ac too
   small: non-conservative).
3. X_th = Q/Q_tot.
4. f = min(f_d, 1), the dosed fraction of the stoichiometric feed.
5. X_ac = f − X_th, negative values clipped to 0 and flagged.
6. MTSR(t) = T_r(t) + X_ac(t)·Q_tot/(m(t)·c_p), with m(t) the mass present.
7. max MTSR, its time and X_ac there.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from calcs.errors import (
    CalcInputError,
    require_finite_array,
    require_min_length,
    require_non_negative,
    require_positive,
    require_same_length,
    require_sorted_increasing,
)

REFERENCES = ("stoessel2008", "harsbook_ch5", "methods_md")


#: Negative accumulation down to this fraction of the feed is rounding noise of the
#: integration (the thermal conversion ending a hair above the dosed fraction): clipped to 0
#: without a warning. Common practice, no source; the same bound as the fit's check in
#: :mod:`calcs.semibatch`.
NEGATIVE_ACCUMULATION_NOISE = 0.005

@dataclass(frozen=True)
class AccumulationAnalysis:
    """Arrays and summary figures of :func:`analyse_accumulation` (SI units).

    ``thermal_conversion``, ``dosed_fraction`` (capped at 1) and ``mass_kg`` are
    computed on first access, so the 100 000-row path allocates only Q, X_ac and MTSR.
    """

    time_s: np.ndarray
    heat_j: np.ndarray
    accumulation: np.ndarray
    mtsr_k: np.ndarray
    total_heat_j: float
    end_criterion: str
    end_time_s: float | None
    max_mtsr_k: float
    max_mtsr_time_s: float
    accumulation_at_max_mtsr: float
    max_accumulation: float
    max_heat_release_rate_w_per_kg: float
    specific_heat_j_per_kg: float
    negative_accumulation_clipped: bool
    warnings: tuple[str, ...]
    initial_mass_kg: float
    feed_mass_kg: float
    dosed_fraction_entered: np.ndarray

    @cached_property
    def thermal_conversion(self) -> np.ndarray:
        """X_th = Q/Q_tot [-]."""
        return self.heat_j / self.total_heat_j

    @cached_property
    def dosed_fraction(self) -> np.ndarray:
        """min(f_d, 1) [-]."""
        return np.minimum(self.dosed_fraction_entered, 1.0)

    @cached_property
    def mass_kg(self) -> np.ndarray:
        """m(t) = m_0 + m_feed·f_d/max(f_d,max, 1) [kg]."""
        return mass_present(self.dosed_fraction_entered, self.initial_mass_kg, self.feed_mass_kg)


def _feed_mass_per_fraction(fd_max: float, feed_mass_kg: float) -> float:
    """Mass per unit of dosed fraction [kg]: the feed is whole at f_d = 1, or at f_d,max
    when the record doses beyond the stoichiometric amount. A record that stops before
    f_d = 1 therefore holds m_0 + m_feed·f_d at its last point, not the whole feed."""
    return feed_mass_kg / max(fd_max, 1.0)


def mass_present(dosed_fraction, initial_mass_kg: float, feed_mass_kg: float,
                 out: np.ndarray | None = None) -> np.ndarray:
    """Mass in the reactor at each point of a record.

    Equation: m(t) = m_0 + m_feed·f_d(t)/max(f_d,max, 1).

    Parameters
    ----------
    dosed_fraction : array_like
        Dosed fraction of the stoichiometric feed f_d [-] (may exceed 1).
    initial_mass_kg : float
        m_0 [kg].
    feed_mass_kg : float
        The whole feed [kg]: the stoichiometric amount, or all that was dosed when the
        record goes beyond it.
    out : numpy.ndarray or None
        Output buffer.

    Returns
    -------
    numpy.ndarray
        m(t) [kg].

    Validity: the feed's mass is proportional to the dosed fraction.

    Examples
    --------
    >>> mass_present([0.0, 0.3, 0.6], 0.4, 0.1).round(3).tolist()  # record stops at 0.6
    [0.4, 0.43, 0.46]

    References
    ----------
    METHODS.md §1.2 steps 4 and 6.
    """
    fd = np.asarray(dosed_fraction, dtype=float)
    out = np.multiply(fd, _feed_mass_per_fraction(float(fd.max()), feed_mass_kg), out=out)
    out += initial_mass_kg
    return out


def cumulative_heat(time_s, heat_release_rate_w) -> np.ndarray:
    """Cumulative heat of a heat-release-rate record by the trapezoid rule.

    Equation: Q(t_i) = Σ_{j=1..i} ½·(q_j + q_{j−1})·(t_j − t_{j−1}), Q(t_0) = 0.

    Parameters
    ----------
    time_s : array_like
        Strictly increasing time stamps [s].
    heat_release_rate_w : array_like
        Reaction heat-release rate, baseline- and dosing-corrected [W].

    Returns
    -------
    numpy.ndarray
        Q(t) [J], same length as the inputs.

    Validity: a coarse grid underestimates Q while q rises concavely, which
    gives a larger (safer) accumulation.

    Examples
    --------
    >>> cumulative_heat([0, 10, 20], [0.0, 1.0, 1.0]).tolist()
    [0.0, 5.0, 15.0]

    References
    ----------
    METHODS.md §1.2 step 1; HarsBook ch. 5.
    """
    t, dt = _time_axis(time_s)
    q = require_finite_array("heat_release_rate_w", heat_release_rate_w)
    require_same_length(("time_s", "heat_release_rate_w"), t, q)
    return _cumtrapz(dt, q)


def _time_axis(time_s) -> tuple[np.ndarray, np.ndarray]:
    """Validate a time axis once and return it with its steps (reused by the integral)."""
    t = require_finite_array("time_s", time_s)
    dt = np.diff(t)
    if dt.size and not dt.min() > 0.0:
        require_sorted_increasing("time_s", t)  # raises with the offending entry
    return t, dt


def _as_1d(name: str, values) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise CalcInputError(name, values, "must be a sequence of real numbers") from None
    if arr.ndim != 1:
        raise CalcInputError(name, values, "must be one-dimensional")
    return arr


def _cumtrapz(dt: np.ndarray, q: np.ndarray) -> np.ndarray:
    # one output buffer, cumulated in place: numpy's cumsum into a fresh array is ~3x slower
    out = np.empty_like(q)
    out[0] = 0.0
    np.add(q[1:], q[:-1], out=out[1:])
    out[1:] *= dt
    out *= 0.5
    return np.cumsum(out, out=out)


def end_of_reaction_time(time_s, heat_release_rate_w, fraction: float = 0.01) -> float | None:
    """First time after the peak from which |q| stays below a fraction of q_max.

    Equation: t_end = min{t_i > t(q_max) : |q_j| < fraction·q_max for all j ≥ i}.

    Parameters
    ----------
    time_s : array_like
        Strictly increasing time stamps [s].
    heat_release_rate_w : array_like
        Heat-release rate [W].
    fraction : float
        Criterion as a fraction of q_max [-] (default 0.01, i.e. 1 %).

    Returns
    -------
    float or None
        t_end [s], or ``None`` when the record ends before the criterion is met.

    Validity: an exothermic record with a single dominant peak.

    Examples
    --------
    >>> end_of_reaction_time([0, 1, 2, 3], [0.0, 10.0, 0.5, 0.05])
    3.0

    References
    ----------
    METHODS.md §1.2 step 2 (practical criterion, common practice).
    """
    t = require_sorted_increasing("time_s", time_s)
    q = require_finite_array("heat_release_rate_w", heat_release_rate_w)
    require_same_length(("time_s", "heat_release_rate_w"), t, q)
    return _end_time(t, q, require_positive("fraction", fraction))


def _end_time(t: np.ndarray, q: np.ndarray, fraction: float) -> float | None:
    i_max = int(np.argmax(q))
    tail, limit = q[i_max:], fraction * q[i_max]
    above = (tail >= limit) | (tail <= -limit)  # |q| >= limit without a float temporary
    if above[-1]:
        return None
    last_above = len(above) - 1 - int(np.argmax(above[::-1]))
    return float(t[i_max + last_above + 1])


def analyse_accumulation(
    time_s,
    heat_release_rate_w,
    dosed_fraction,
    specific_heat_capacity_j_per_kg_k: float,
    initial_mass_kg: float,
    feed_mass_kg: float,
    reactor_temperature_k=None,
    process_temperature_k: float | None = None,
    end_fraction: float = 0.01,
) -> AccumulationAnalysis:
    """Thermal accumulation X_ac(t) and MTSR(t) with the mass present at each time.

    Equations: X_th = Q/Q_tot; X_ac = max(min(f_d, 1) − X_th, 0);
    m(t) = m_0 + m_feed·f_d(t)/max(f_d,max, 1); MTSR(t) = T_r(t) + X_ac·Q_tot/(m(t)·c_p);
    Q′ = Q_tot/(m_0 + m_feed).

    Parameters
    ----------
    time_s : array_like
        Strictly increasing time stamps [s].
    heat_release_rate_w : array_like
        Reaction heat-release rate q_rx, baseline- and dosing-corrected [W].
    dosed_fraction : array_like
        Dosed amount as a fraction of the stoichiometric feed [-] (≥ 0; values
        above 1 mean over-stoichiometric feed and are capped at 1 for X_ac).
    specific_heat_capacity_j_per_kg_k : float
        c_p of the reaction mass [J/(kg K)].
    initial_mass_kg : float
        Mass in the reactor before dosing m_0 [kg].
    feed_mass_kg : float
        The whole feed [kg] (0 for a batch record): the mass at f_d = 1, or all that was
        dosed when the record goes beyond the stoichiometric amount. A record that stops
        before f_d = 1 holds m_0 + m_feed·f_d at its end (and says so).
    reactor_temperature_k : array_like or None
        Reactor temperature T_r(t) [K]; if ``None``, ``process_temperature_k``.
    process_temperature_k : float or None
        Constant T_p [K] used when no T_r series is given.
    end_fraction : float
        End-of-reaction criterion as a fraction of q_max [-] (default 0.01).

    Returns
    -------
    AccumulationAnalysis
        Arrays (Q [J], X_th, X_ac, m [kg], MTSR [K]) and the summary: Q_tot [J],
        the recorded end criterion, max MTSR [K] with its time [s] and X_ac there,
        max X_ac, peak specific rate max q/m [W/kg], Q′ [J/kg], warnings.

    Validity: dosing stops at the cooling failure; heat released into the mass
    present (φ = 1); c_p constant.

    Examples
    --------
    >>> a = analyse_accumulation([0, 600, 1200], [0.0, 10.0, 0.0], [0.0, 1.0, 1.0],
    ...                          2000.0, 0.4, 0.1, process_temperature_k=303.15)
    >>> a.total_heat_j, round(a.max_accumulation, 3)
    (6000.0, 0.5)

    References
    ----------
    METHODS.md §1.2 [DERIVED m(t) form]; Stoessel 2008 ch. 7; HarsBook ch. 5.
    """
    # Finiteness is checked on the results (a NaN or inf anywhere makes Q_tot, min or max
    # non-finite) and only then entry by entry, to spare three passes over long series.
    t, q, fd = (_as_1d(n, v) for n, v in (("time_s", time_s),
                                          ("heat_release_rate_w", heat_release_rate_w),
                                          ("dosed_fraction", dosed_fraction)))
    require_min_length("time_s", t, 2)
    require_same_length(("time_s", "heat_release_rate_w", "dosed_fraction"), t, q, fd)
    dt = np.diff(t)
    if not dt.min() > 0.0:
        require_sorted_increasing("time_s", t)  # raises, naming the offending entry
    fd_min, fd_max = float(fd.min()), float(fd.max())
    if not (math.isfinite(fd_min) and math.isfinite(fd_max)):
        require_finite_array("dosed_fraction", fd)
    if fd_min < 0.0:
        raise CalcInputError("dosed_fraction", fd, "must not be negative")
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    m0 = require_positive("initial_mass_kg", initial_mass_kg)
    mf = require_non_negative("feed_mass_kg", feed_mass_kg)
    if reactor_temperature_k is not None:
        tr = require_finite_array("reactor_temperature_k", reactor_temperature_k)
        require_same_length(("time_s", "reactor_temperature_k"), t, tr)
        if tr.min() <= 0.0:
            raise CalcInputError(
                "reactor_temperature_k", tr, "must be an absolute temperature above 0 K"
            )
    elif process_temperature_k is not None:
        tr = float(require_positive("process_temperature_k", process_temperature_k))
    else:
        raise CalcInputError(
            "reactor_temperature_k", None, "give a T_r series or a process temperature"
        )
    frac = require_positive("end_fraction", end_fraction)

    warnings: list[str] = []
    heat = _cumtrapz(dt, q)
    q_tot = float(heat[-1])
    if not math.isfinite(q_tot):
        require_finite_array("time_s", t)
        require_finite_array("heat_release_rate_w", q)
    if q_tot <= 0.0:
        raise CalcInputError("heat_release_rate_w", q, "must integrate to a positive heat")
    i_qmax = int(np.argmax(q))
    t_end = _end_time(t, q, frac)
    criterion = f"|q| < {frac * 100:g} % of q_max ({frac * q[i_qmax]:.6g} W)"
    if t_end is None:
        warnings.append(
            f"heat-release rate not back below {criterion} by the end of the record: "
            "Q_tot and the accumulation may be underestimated"
        )
    # X_ac = min(f_d, 1) − Q/Q_tot, built in its own buffer; MTSR(t) in a second one
    x_ac = np.multiply(heat, -1.0 / q_tot)
    mtsr = np.minimum(fd, 1.0, out=np.empty_like(q)) if fd_max > 1.0 else fd
    x_ac += mtsr
    x_ac_min = float(x_ac.min())
    clipped = x_ac_min < 0.0
    if clipped:
        # Clipping raises the accumulation (the safe side); only a dip beyond rounding noise
        # says something about the record worth a reviewer's time.
        if x_ac_min < -NEGATIVE_ACCUMULATION_NOISE:
            warnings.append(
                f"negative accumulation (down to {x_ac_min * 100:.1f} % of the feed) clipped "
                "to 0: check signal lag, baseline or endothermic mixing effects"
            )
        np.maximum(x_ac, 0.0, out=x_ac)
    if fd_max > 1.0:
        warnings.append(
            f"feed beyond the stoichiometric amount (up to {fd_max:.3g} equivalents): the dosed "
            "fraction is capped at 1 for the accumulation (METHODS.md §1.2 step 4)"
        )
    elif fd_max < 1.0:
        warnings.append(
            f"the record ends at a dosed fraction of {fd_max:.3g}, before the whole feed: the "
            f"mass present is m_0 + feed mass × dosed fraction ({m0 + mf * fd_max:.4g} kg at "
            "the end, not the whole feed), and the heat of the rest of the feed is not in Q_tot"
        )
    per_fraction = _feed_mass_per_fraction(fd_max, mf)
    # MTSR = T_r + X_ac / (m(t)·c_p/Q_tot), with m(t)·c_p/Q_tot built in the MTSR buffer
    scale = cp / q_tot
    mtsr = np.multiply(fd, per_fraction * scale, out=mtsr if mtsr is not fd else None)
    mtsr += m0 * scale
    np.divide(x_ac, mtsr, out=mtsr)
    mtsr += tr
    i_max = int(np.argmax(mtsr))
    m_at_qmax = m0 + per_fraction * fd[i_qmax]
    return AccumulationAnalysis(
        time_s=t,
        heat_j=heat,
        accumulation=x_ac,
        mtsr_k=mtsr,
        total_heat_j=q_tot,
        end_criterion=criterion + "; Q_tot integrated over the whole record",
        end_time_s=t_end,
        max_mtsr_k=float(mtsr[i_max]),
        max_mtsr_time_s=float(t[i_max]),
        accumulation_at_max_mtsr=float(x_ac[i_max]),
        max_accumulation=float(x_ac.max()),
        max_heat_release_rate_w_per_kg=float(q[i_qmax] / m_at_qmax),
        specific_heat_j_per_kg=q_tot / (m0 + mf),
        negative_accumulation_clipped=clipped,
        warnings=tuple(warnings),
        initial_mass_kg=m0,
        feed_mass_kg=mf,
        dosed_fraction_entered=fd,
    )


def accumulation_after_end_of_feed(heat_after_feed_j: float, total_heat_j: float) -> float:
    """Accumulation at the end of feed from the heat released after the feed stopped.

    Equation: X_ac(t_d) = Q_post / Q_tot.

    Parameters
    ----------
    heat_after_feed_j : float
        Heat released after the end of the feed Q_post [J].
    total_heat_j : float
        Total reaction heat Q_tot [J].

    Returns
    -------
    float
        X_ac(t_d) [-].

    Validity: only the accumulation at t_d; earlier maxima are not seen.

    Examples
    --------
    >>> accumulation_after_end_of_feed(12000.0, 60000.0)
    0.2

    References
    ----------
    METHODS.md §1.2 special case [DERIVED].
    """
    post = require_non_negative("heat_after_feed_j", heat_after_feed_j)
    tot = require_positive("total_heat_j", total_heat_j)
    if post > tot:
        raise CalcInputError("heat_after_feed_j", heat_after_feed_j, "must not exceed total_heat_j")
    return post / tot
