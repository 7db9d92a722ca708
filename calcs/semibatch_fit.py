"""Fits of the semi-batch model: k from the decay after dosing, E_a from k at several T.

Part of :mod:`calcs.semibatch` (import from there); assumptions and references as there.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize

from calcs.accumulation import cumulative_heat
from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite_array,
    require_min_length,
    require_positive,
    require_same_length,
    require_sorted_increasing,
)
from calcs.semibatch_model import ASSUMPTIONS, KTD_HIGH, KTD_LOW, REFERENCES


@dataclass(frozen=True)
class SemibatchFit:
    """The pseudo-first-order model fitted to a series (SI), its quality and its warnings."""

    rate_constant_per_s: float
    dosing_time_s: float
    temperature_k: float
    total_heat_j: float
    model_total_heat_j: float
    r_squared: float
    n_points: int
    residuals_w: np.ndarray
    log_linear_rate_constant_per_s: float
    model_accumulation_at_end_of_dosing: float
    measured_accumulation_at_end_of_dosing: float
    initial_mass_fraction: float
    method: str
    warnings: tuple[str, ...]
    assumptions: tuple[str, ...] = ASSUMPTIONS
    references: tuple[str, ...] = REFERENCES

    @property
    def k_td(self) -> float:
        """Dimensionless k·t_d of the measured run [-]."""
        return self.rate_constant_per_s * self.dosing_time_s


def _runs_z(residuals: np.ndarray) -> float:
    """Wald-Wolfowitz runs statistic of the residual signs (≪ 0: systematic misfit)."""
    s = residuals[residuals != 0] > 0
    n1, n2 = int(s.sum()), int((~s).sum())
    if n1 == 0 or n2 == 0:
        return -math.inf if s.size > 5 else 0.0
    runs = 1 + int(np.count_nonzero(s[1:] != s[:-1]))
    n = n1 + n2
    mu = 2.0 * n1 * n2 / n + 1.0
    var = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n * n * (n - 1.0))
    return (runs - mu) / math.sqrt(var) if var > 0 else 0.0


def fit_semibatch_series(time_s, heat_release_rate_w, dosed_fraction, initial_mass_kg,
                         feed_mass_kg, reactor_temperature_k=None, process_temperature_k=None,
                         tail_fraction=0.01):
    """Fit the pseudo-first-order rate constant k to the heat-release decay after dosing.

    Equation: q(t) = q_d·e^{−k(t − t_d)} for t > t_d, fitted by nonlinear least squares
    (scipy.optimize.least_squares, started from the log-linear fit of ln q on t) to the
    contiguous post-dosing points with q > tail_fraction·q_max; t_d = first time the
    dosed fraction reaches its maximum; Q_tot by the trapezoid rule; model check
    Q_tot,model = q_d·t_d/(1 − e^{−k·t_d}).

    Parameters
    ----------
    time_s : array_like
        Strictly increasing time stamps from the start of dosing [s].
    heat_release_rate_w : array_like
        Reaction heat-release rate, baseline-corrected [W].
    dosed_fraction : array_like
        Dosed fraction of the stoichiometric feed [-].
    initial_mass_kg : float
        Mass before dosing m_0 [kg].
    feed_mass_kg : float
        Feed mass [kg].
    reactor_temperature_k : array_like or None
        T_r(t) [K]; the fit's temperature is its mean over the tail.
    process_temperature_k : float or None
        The temperature of the run when no T_r series is given [K].
    tail_fraction : float
        Lowest q kept in the tail, as a fraction of q_max [-] (default 0.01).

    Returns
    -------
    SemibatchFit
        k [1/s], t_d [s], T [K], Q_tot [J], R², residuals [W], number of points,
        accumulations at t_d (model and measured), warnings.

    Validity: a dosing-controlled run at constant feed rate and temperature; needs at
    least 3 tail points (raises CalcInputError below), warns below 8, outside
    1 ≤ k·t_d ≤ 100, on systematic residuals, negative accumulation or a dosing phase
    the model does not reproduce.

    Examples
    --------
    >>> import numpy as np
    >>> from calcs.semibatch_model import accumulated_fraction
    >>> t = np.linspace(0, 10800, 181)
    >>> q = 60e3 * (0.1 / 60) * accumulated_fraction(t, 0.1 / 60, 3600.0)
    >>> fit = fit_semibatch_series(t, q, np.minimum(t / 3600, 1), 0.4, 0.1,
    ...                            process_temperature_k=303.15)
    >>> round(fit.rate_constant_per_s * 60, 6), fit.warnings
    (0.1, ())

    References
    ----------
    METHODS.md C1.7; Steinbach 1999; Westerterp & Molga 2006 (from memory).
    """
    t = require_sorted_increasing("time_s", time_s)
    q = require_finite_array("heat_release_rate_w", heat_release_rate_w)
    fd = require_finite_array("dosed_fraction", dosed_fraction)
    require_min_length("time_s", t, 4)
    require_same_length(("time_s", "heat_release_rate_w", "dosed_fraction"), t, q, fd)
    m0 = require_positive("initial_mass_kg", initial_mass_kg)
    mf = require_positive("feed_mass_kg", feed_mass_kg)
    frac = require_positive("tail_fraction", tail_fraction)
    fd_max = float(fd.max())
    if not fd_max > 0.0:
        raise CalcInputError("dosed_fraction", fd, "shows no dosing")
    i_d = int(np.argmax(fd >= fd_max - 1e-6 * max(fd_max, 1.0)))
    td = float(t[i_d] - t[0])
    if td <= 0.0:
        raise CalcInputError("dosed_fraction", fd, "must rise over a dosing time > 0")
    q_max = float(q.max())
    tail = np.flatnonzero(t > t[i_d])
    below = np.flatnonzero(q[tail] <= frac * q_max)
    tail = tail[: below[0]] if below.size else tail
    if tail.size < 3:
        raise CalcInputError("heat_release_rate_w", q, f"needs at least 3 points after the end "
                             f"of dosing above {frac:g}·q_max to fit the decay (has {tail.size})")
    warnings: list[str] = []
    if tail.size < 8:
        warnings.append(f"only {tail.size} post-dosing points: k is poorly determined")
    tt, qt = t[tail] - t[i_d], q[tail]
    slope, intercept = np.polyfit(tt, np.log(qt), 1)
    k_lin = -float(slope)
    if not k_lin > 0.0:
        raise CalcInputError("heat_release_rate_w", q, "does not decay after the end of dosing")
    scale = float(qt.max())

    def resid(p):
        return (math.exp(p[0]) * np.exp(-math.exp(p[1]) * tt) - qt) / scale

    sol = optimize.least_squares(resid, [intercept, math.log(k_lin)], method="lm",
                                 xtol=1e-14, ftol=1e-14, gtol=1e-14)
    q_d, k = math.exp(sol.x[0]), math.exp(sol.x[1])
    residuals = sol.fun * scale
    ss_tot = float(np.sum((qt - qt.mean()) ** 2))
    r2 = 1.0 - float(np.sum(residuals**2)) / ss_tot if ss_tot > 0 else 1.0
    if r2 < 0.98:
        warnings.append(f"R² = {r2:.3f} < 0.98: the decay after dosing is not well described "
                        "by one exponential")
    elif float(np.sqrt(np.mean(residuals**2))) > 1e-6 * scale and _runs_z(residuals) < -3.0:
        warnings.append("residuals are systematic (runs test): the decay after dosing is not "
                        "a single exponential; the pseudo-first-order model is questionable")
    x = k * td
    if x < KTD_LOW:
        warnings.append(f"k·t_d = {x:.3g} < {KTD_LOW:g}: slow reaction, heavy accumulation; "
                        "not dosing-controlled")
    elif x > KTD_HIGH:
        warnings.append(f"k·t_d = {x:.3g} > {KTD_HIGH:g}: the decay is close to the "
                        "calorimeter's time constant; k may be the instrument's")
    heat = cumulative_heat(t, q)
    q_tot = float(heat[-1])
    if not q_tot > 0.0:
        raise CalcInputError("heat_release_rate_w", q, "must integrate to a positive heat")
    q_model = q_d * td / -math.expm1(-x)
    if abs(q_model / q_tot - 1.0) > 0.1:
        warnings.append(f"the model's total heat ({q_model:.4g} J) differs from the measured "
                        f"({q_tot:.4g} J) by more than 10 %: the dosing phase does not follow "
                        "the model")
    x_ac = np.minimum(fd, 1.0) - heat / q_tot
    if float(x_ac.min()) < -0.005:
        warnings.append(f"negative accumulation in the series (down to {x_ac.min():.3f}): "
                        "signal lag, baseline or dosing record to check")
    during = np.flatnonzero(t <= t[i_d])
    if float(np.max(np.abs(fd[during] / fd_max - (t[during] - t[0]) / td))) > 0.05:
        warnings.append("the feed rate is not constant: the model assumes a linear feed")
    if reactor_temperature_k is not None:
        tr = require_finite_array("reactor_temperature_k", reactor_temperature_k)
        require_same_length(("time_s", "reactor_temperature_k"), t, tr)
        temperature = float(tr[tail].mean())
        if float(tr.max() - tr.min()) > 2.0:
            warnings.append(f"reactor temperature varies by {tr.max() - tr.min():.1f} K: the "
                            "run is not isothermal")
    elif process_temperature_k is not None:
        temperature = float(process_temperature_k)
    else:
        raise CalcInputError("reactor_temperature_k", None,
                             "give a T_r series or a process temperature")
    require_absolute_temperature("temperature of the run", temperature)
    return SemibatchFit(
        rate_constant_per_s=k, dosing_time_s=td, temperature_k=temperature, total_heat_j=q_tot,
        model_total_heat_j=q_model, r_squared=r2, n_points=int(tail.size),
        residuals_w=residuals, log_linear_rate_constant_per_s=k_lin,
        model_accumulation_at_end_of_dosing=-math.expm1(-x) / x,
        measured_accumulation_at_end_of_dosing=float(x_ac[i_d]),
        initial_mass_fraction=m0 / (m0 + mf),
        method="semibatch.pseudo_first_order.least_squares_tail",
        warnings=tuple(warnings),
    )


@dataclass(frozen=True)
class ArrheniusFit:
    """E_a and ln A of k(T) from rate constants at several temperatures."""

    activation_energy_j_per_mol: float
    ln_pre_exponential: float
    r_squared: float | None
    n_points: int
    warnings: tuple[str, ...] = ()


def fit_arrhenius(temperatures_k, rate_constants_per_s):
    """Activation energy of the desired reaction from k at two or more temperatures.

    Equation: ln k = ln A − E_a/(R·T), least squares of ln k on 1/T.

    Parameters
    ----------
    temperatures_k : array_like
        Temperatures of the runs [K] (at least two distinct).
    rate_constants_per_s : array_like
        Fitted k of each run [1/s].

    Returns
    -------
    ArrheniusFit
        E_a [J/mol], ln A (A in 1/s), R² (``None`` for two points), n, warnings.

    Validity: one mechanism over the range; temperatures less than 10 K apart give a
    poorly determined E_a (warned). Raises when k does not rise with T.

    Examples
    --------
    >>> f = fit_arrhenius([303.15, 323.15], [1e-3, 1e-3 * math.exp(80e3 / R * (1 / 303.15
    ...                   - 1 / 323.15))])
    >>> round(f.activation_energy_j_per_mol)
    80000

    References
    ----------
    Arrhenius law; Steinbach 1999 (from memory).
    """
    t = require_finite_array("temperatures_k", temperatures_k)
    k = require_finite_array("rate_constants_per_s", rate_constants_per_s)
    require_same_length(("temperatures_k", "rate_constants_per_s"), t, k)
    if not (np.all(t > 0) and np.all(k > 0)):
        raise CalcInputError("rate_constants_per_s", k, "temperatures and k must be > 0")
    if np.unique(np.round(t, 6)).size < 2:
        raise CalcInputError("temperatures_k", t, "needs at least two distinct temperatures")
    slope, intercept = np.polyfit(1.0 / t, np.log(k), 1)
    ea = -float(slope) * R
    if not ea > 0.0:
        raise CalcInputError("rate_constants_per_s", k, "do not rise with temperature: no "
                             "positive activation energy")
    warnings = []
    if float(t.max() - t.min()) < 10.0:
        warnings.append("runs less than 10 K apart: E_a poorly determined")
    r2 = None
    if t.size > 2:
        pred = intercept + slope / t
        lk = np.log(k)
        ss = float(np.sum((lk - lk.mean()) ** 2))
        r2 = 1.0 - float(np.sum((lk - pred) ** 2)) / ss if ss > 0 else 1.0
    return ArrheniusFit(ea, float(intercept), r2, int(t.size), tuple(warnings))
