"""Pseudo-first-order model of a dosing-controlled semi-batch reaction, and its what-if window.

The desired reaction consumes the dosed reagent B at a rate k·n_B (k pseudo-first order,
the charged reagent in excess). Fed at a constant rate over t_d, the accumulated
(unreacted) fraction of the stoichiometric feed and the heat-release rate are
(METHODS.md C1.7)::

    a(t) = (1 − e^{−k·t})/(k·t_d)              0 ≤ t ≤ t_d
    a(t) = a(t_d)·e^{−k·(t − t_d)}             t > t_d
    q(t) = Q_tot·k·a(t)

so k is read from the decay of q after the end of dosing, and the same k predicts the
accumulation and the peak heat release of any other dosing time; an activation energy
shifts k with the process temperature (Arrhenius). MTSR(t) = T_p + a(t)·Q_tot/(m(t)·c_p)
uses the mass present at t (METHODS.md §1.1 note), which puts the maximum before the end
of dosing. The operating window evaluates this, the cooling margin and the criticality
class on a grid of dosing times × process temperatures, vectorised.

Assumptions (shown with every fit): constant feed rate; isothermal reaction mass; k a
function of temperature only (same concentrations at lab and plant scale, no change of
mechanism, ideal mixing); the heat-release signal is free of calorimeter lag (lag makes
the decay look slower, k smaller and the predicted accumulation larger: conservative);
dosing stops at the cooling failure.

References: J. Steinbach, *Safety Assessment for Chemical Processes*, Wiley-VCH 1999 (the
semi-batch chapters) [MEMORY]; K.R. Westerterp, E.J. Molga, "Safety and runaway
prevention in batch and semibatch reactors—a review", Chem. Eng. Res. Des. 84 (2006)
543–552 [MEMORY for the details]; Stoessel 2008 ch. 7 [MEMORY]; METHODS.md §1, §2.2, §4.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import optimize

from calcs.accumulation import cumulative_heat
from calcs.constants import R
from calcs.criticality import criticality_classes
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite_array,
    require_fraction,
    require_min_length,
    require_positive,
    require_same_length,
    require_sorted_increasing,
)

# Keys into calcs.constants.REFERENCES.
REFERENCES = ("steinbach1999", "westerterp_molga2006", "stoessel2008", "methods_md")
ASSUMPTIONS = (
    "pseudo-first-order consumption of the dosed reagent (the charged one in excess)",
    "constant feed rate over the dosing time",
    "isothermal reaction mass; k depends on temperature only (same concentrations at lab "
    "and plant scale)",
    "heat-release signal free of calorimeter lag (lag gives a smaller k: conservative)",
    "dosing stops at the cooling failure; heat released into the mass present (phi = 1)",
)
KTD_LOW, KTD_HIGH = 1.0, 100.0  # sensible range of k·t_d for a dosing-controlled reaction


def accumulated_fraction(time_s, rate_constant_per_s, dosing_time_s):
    """Accumulated (unreacted) fraction of the feed in a pseudo-first-order semi-batch reaction.

    Equation: a(t) = (1 − e^{−kt})/(k·t_d) for t ≤ t_d; a(t_d)·e^{−k(t − t_d)} after.

    Parameters
    ----------
    time_s : array_like
        Time from the start of dosing [s] (≥ 0); broadcasts with the other two.
    rate_constant_per_s : array_like
        Pseudo-first-order rate constant k [1/s] (> 0).
    dosing_time_s : array_like
        Dosing time t_d [s] (> 0).

    Returns
    -------
    numpy.ndarray or float
        a(t) [-], a fraction of the stoichiometric feed.

    Validity: constant feed rate, isothermal, dosing stops at t_d.

    Examples
    --------
    >>> round(float(accumulated_fraction(3600.0, 0.1 / 60, 3600.0)), 6)  # METHODS.md C1.7
    0.166254

    References
    ----------
    METHODS.md C1.7; Steinbach 1999; Westerterp & Molga 2006 (from memory).
    """
    t = np.asarray(time_s, dtype=float)
    k = np.asarray(rate_constant_per_s, dtype=float)
    td = np.asarray(dosing_time_s, dtype=float)
    if not (np.all(k > 0) and np.all(td > 0) and np.all(t >= 0)):
        raise CalcInputError("rate_constant_per_s / dosing_time_s / time_s", None,
                             "k and t_d must be > 0 and t >= 0")
    during = -np.expm1(-k * np.minimum(t, td)) / (k * td)
    out = during * np.exp(-k * np.maximum(t - td, 0.0))
    return float(out) if out.ndim == 0 else out


def accumulation_at_end_of_dosing(rate_constant_per_s, dosing_time_s):
    """Maximum accumulated fraction, reached at the end of dosing.

    Equation: a(t_d) = (1 − e^{−k·t_d})/(k·t_d).

    Parameters
    ----------
    rate_constant_per_s : array_like
        k [1/s] (> 0).
    dosing_time_s : array_like
        t_d [s] (> 0).

    Returns
    -------
    numpy.ndarray or float
        a(t_d) [-].

    Validity: as :func:`accumulated_fraction`.

    Examples
    --------
    >>> round(float(accumulation_at_end_of_dosing(0.1 / 60, 7143.0)), 4)  # METHODS.md C2.2
    0.084

    References
    ----------
    METHODS.md C1.7, C2.2 [DERIVED].
    """
    return accumulated_fraction(dosing_time_s, rate_constant_per_s, dosing_time_s)


def mass_basis_accumulation(rate_constant_per_s, dosing_time_s, initial_mass_fraction=1.0):
    """Largest accumulation referred to the final mass, with the mass present at each time.

    Equation: X_eff = max_t a(t)·m_f/m(t), m(t)/m_f = r_0 + (1 − r_0)·min(t/t_d, 1); then
    max MTSR = T_p + X_eff·ΔT_ad (ΔT_ad on the final mass). With x = k·t_d and τ = t/t_d the
    maximum lies in the dosing phase where g(τ) = x·e^{−xτ}·(r_0 + (1 − r_0)τ) −
    (1 − r_0)(1 − e^{−xτ}) = 0 (g falls strictly; τ = 1 when g(1) ≥ 0), solved by Newton's
    method on its logarithmic form, vectorised.

    Parameters
    ----------
    rate_constant_per_s : array_like
        k [1/s] (> 0).
    dosing_time_s : array_like
        t_d [s] (> 0).
    initial_mass_fraction : array_like
        r_0 = m_0/(m_0 + m_feed) [-] in (0, 1]; 1 is the final-mass simplification.

    Returns
    -------
    tuple of numpy.ndarray or float
        (X_eff [-], time of the maximum [s]).

    Validity: as :func:`accumulated_fraction`; τ to 1e-12.

    Examples
    --------
    >>> x, t = mass_basis_accumulation(0.1 / 60, 3600.0, 0.8)  # METHODS.md C1.7
    >>> round(30 + 60 * float(x), 3), round(float(t) / 60, 2)
    (40.584, 33.44)

    References
    ----------
    METHODS.md §1.1 note on the mass basis [DERIVED], C1.7.
    """
    k = np.asarray(rate_constant_per_s, dtype=float)
    td = np.asarray(dosing_time_s, dtype=float)
    r0 = np.asarray(initial_mass_fraction, dtype=float)
    if not (np.all(k > 0) and np.all(td > 0) and np.all(r0 > 0) and np.all(r0 <= 1)):
        raise CalcInputError("rate_constant_per_s / dosing_time_s / initial_mass_fraction",
                             None, "k and t_d must be > 0 and r_0 in (0, 1]")
    x, r, td = (a.astype(float) for a in np.broadcast_arrays(k * td, r0, td))
    # In u = x·τ the condition reads φ(u) = ln(x·r + (1 − r)(1 + u)) − u − ln(1 − r) = 0;
    # φ is concave and falls, so Newton from u = 0 converges (monotonically after one step).
    rr = np.minimum(r, 1.0 - 1e-12)
    c, w = np.log1p(-rr), x * rr + (1.0 - rr)
    u = np.zeros_like(x)
    for _ in range(60):
        inner = w + (1.0 - rr) * u
        step = (np.log(inner) - u - c) / ((1.0 - rr) / inner - 1.0)
        u = u - step
        if np.all(np.abs(step) <= 1e-12 * np.maximum(u, 1.0)):
            break
    tau = np.where((r >= 1.0) | (u >= x), 1.0, u / x)
    best = -np.expm1(-x * tau) / x / (r + (1.0 - r) * tau)
    if best.ndim == 0:
        return float(best), float(tau * td)
    return best, tau * td


def peak_specific_heat_release(specific_heat_j_per_kg, rate_constant_per_s, dosing_time_s):
    """Peak heat-release rate per kg of final mass, reached at the end of dosing.

    Equation: q′_max = Q′·k·a(t_d) = Q′·(1 − e^{−k·t_d})/t_d.

    Parameters
    ----------
    specific_heat_j_per_kg : array_like
        Reaction heat per kg of final reaction mass Q′ [J/kg].
    rate_constant_per_s : array_like
        k [1/s] (> 0).
    dosing_time_s : array_like
        t_d [s] (> 0).

    Returns
    -------
    numpy.ndarray or float
        q′_max [W/kg].

    Validity: as :func:`accumulated_fraction`; tends to Q′/t_d for a fast reaction.

    Examples
    --------
    >>> round(float(peak_specific_heat_release(120e3, 0.1 / 60, 3600.0)), 2)  # C2.2 note
    33.25

    References
    ----------
    METHODS.md C1.7, C2.2 [DERIVED].
    """
    k = np.asarray(rate_constant_per_s, dtype=float)
    a = accumulation_at_end_of_dosing(k, dosing_time_s)
    out = np.asarray(specific_heat_j_per_kg, dtype=float) * k * a
    return float(out) if out.ndim == 0 else out


def rate_constant_at(rate_constant_per_s, reference_temperature_k, temperature_k,
                     activation_energy_j_per_mol):
    """Arrhenius shift of a rate constant to another temperature.

    Equation: k(T) = k_ref·exp[−(E_a/R)·(1/T − 1/T_ref)].

    Parameters
    ----------
    rate_constant_per_s : float
        k_ref at T_ref [1/s].
    reference_temperature_k : float
        T_ref [K].
    temperature_k : array_like
        T [K].
    activation_energy_j_per_mol : float
        E_a of the desired reaction [J/mol].

    Returns
    -------
    numpy.ndarray or float
        k(T) [1/s].

    Validity: one Arrhenius step between the temperatures compared.

    Examples
    --------
    >>> round(float(rate_constant_at(1e-3, 303.15, 313.15, 80e3)) * 1e3, 3)
    2.755

    References
    ----------
    Arrhenius law; Steinbach 1999 (from memory).
    """
    k = require_positive("rate_constant_per_s", rate_constant_per_s)
    tref = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    ea = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    t = np.asarray(temperature_k, dtype=float)
    if not np.all(t > 0):
        raise CalcInputError("temperature_k", temperature_k, "must be above 0 K")
    out = k * np.exp(-(ea / R) * (1.0 / t - 1.0 / tref))
    return float(out) if out.ndim == 0 else out


def rate_constant_from_accumulation(accumulation, dosing_time_s):
    """The k that gives an observed maximum accumulation at a given dosing time.

    Equation: solve (1 − e^{−x})/x = X_ac for x = k·t_d (Brent), k = x/t_d.

    Parameters
    ----------
    accumulation : float
        Maximum accumulation X_ac at the end of dosing [-], in (0, 1).
    dosing_time_s : float
        t_d at which it was observed [s].

    Returns
    -------
    float
        k [1/s].

    Validity: the pseudo-first-order model; X_ac on the final-mass basis.

    Examples
    --------
    >>> round(rate_constant_from_accumulation(0.166254, 3600.0) * 60, 4)  # METHODS.md C1.7
    0.1

    References
    ----------
    METHODS.md C1.7 [DERIVED].
    """
    x_ac = require_fraction("accumulation", accumulation)
    td = require_positive("dosing_time_s", dosing_time_s)
    if not 0.0 < x_ac < 1.0:
        raise CalcInputError("accumulation", accumulation,
                             "must lie strictly between 0 and 1 to infer a rate constant")
    x = optimize.brentq(lambda v: -math.expm1(-v) / v - x_ac, 1e-12, 1e12 if x_ac < 1e-9
                        else 10.0 / x_ac, xtol=1e-14, rtol=1e-13)
    return x / td


def minimum_dosing_time(specific_heat_j_per_kg, rate_constant_per_s,
                        cooling_capacity_w_per_kg, margin=1.0):
    """Shortest dosing time whose peak heat release the cooling removes with a margin.

    Equation: solve Q′·(1 − e^{−k·t_d})/t_d = q′_ex/margin for t_d (Brent); 0 when even
    an instantaneous feed (peak Q′·k) is within the margin.

    Parameters
    ----------
    specific_heat_j_per_kg : float
        Q′ per kg of final mass [J/kg].
    rate_constant_per_s : float
        k [1/s].
    cooling_capacity_w_per_kg : float
        q′_ex = U·A·(T_p − T_c)/m [W/kg].
    margin : float
        Required ratio of capacity to peak [-] (1 = no margin).

    Returns
    -------
    float or None
        t_d,min [s]; ``None`` when there is no cooling capacity.

    Validity: as :func:`accumulated_fraction`.

    Examples
    --------
    >>> round(minimum_dosing_time(120e3, 0.1 / 60, 16.8) / 60, 2)  # METHODS.md C2.2
    119.05

    References
    ----------
    METHODS.md §2.2, C2.2 [DERIVED].
    """
    q = require_positive("specific_heat_j_per_kg", specific_heat_j_per_kg)
    k = require_positive("rate_constant_per_s", rate_constant_per_s)
    target = cooling_capacity_w_per_kg / require_positive("margin", margin)
    if not target > 0.0:
        return None
    if q * k <= target:
        return 0.0
    hi = 2.0 * q / target  # there q·(1 − e^{−k·t})/t ≤ target/2: a strict sign change
    return optimize.brentq(lambda t: q * -math.expm1(-k * t) / t - target, 1e-9 * hi, hi,
                           xtol=1e-9, rtol=1e-12)


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


@dataclass(frozen=True)
class OperatingWindow:
    """Grid of dosing times (columns) × process temperatures (rows), SI arrays."""

    dosing_times_s: np.ndarray
    temperatures_k: np.ndarray
    rate_constant_per_s: np.ndarray  # per temperature
    accumulation: np.ndarray  # a(t_d)
    effective_accumulation: np.ndarray  # mass basis, gives max MTSR
    mtsr_k: np.ndarray
    peak_heat_release_w: np.ndarray
    cooling_capacity_w: np.ndarray  # per temperature
    cooling_margin: np.ndarray
    criticality_class: np.ndarray  # 0 unknown
    safe: np.ndarray
    fastest_safe_dosing_time_s: np.ndarray  # per temperature, NaN where none on the grid
    cooling_limited_dosing_time_s: np.ndarray  # per temperature, exact, NaN if no cooling
    warnings: tuple[str, ...] = field(default=())


def operating_window(dosing_times_s, temperatures_k, rate_constant_per_s,
                     reference_temperature_k, activation_energy_j_per_mol,
                     specific_heat_j_per_kg, specific_heat_capacity_j_per_kg_k,
                     reaction_mass_kg, heat_transfer_capacity_w_per_k, coolant_temperature_k,
                     mtt_k, td24_k, minimum_cooling_margin, initial_mass_fraction=1.0,
                     peak_scale=1.0, acceptable_classes=(1, 2), rule=None):
    """Where the cooling margin holds and the class is acceptable, over t_d × T_p.

    Equation: k(T) by Arrhenius; X_eff from :func:`mass_basis_accumulation`;
    MTSR = T + X_eff·Q′/c_p; peak = peak_scale·Q′·(1 − e^{−k·t_d})/t_d·m;
    margin = U·A·(T − T_c)/peak; class from :func:`calcs.criticality.criticality_classes`;
    safe = margin ≥ minimum and class in acceptable_classes (or ``rule``).

    Parameters
    ----------
    dosing_times_s : array_like
        Dosing times of the columns [s].
    temperatures_k : array_like
        Process temperatures of the rows [K].
    rate_constant_per_s : float
        k at the reference temperature [1/s].
    reference_temperature_k : float
        T_ref of k [K].
    activation_energy_j_per_mol : float or None
        E_a [J/mol]; ``None`` allows only T = T_ref (raises otherwise).
    specific_heat_j_per_kg : float
        Q′ per kg of final mass [J/kg].
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    reaction_mass_kg : float
        Plant reaction mass [kg].
    heat_transfer_capacity_w_per_k : float or None
        U·A of the vessel [W/K]; ``None``: no cooling data (never safe).
    coolant_temperature_k : float or None
        Coolant temperature [K].
    mtt_k : array_like or None
        MTT [K], scalar or one per temperature; ``None`` unknown.
    td24_k : float or None
        TD24 [K]; ``None`` unknown.
    minimum_cooling_margin : float
        Site minimum of capacity/peak [-].
    initial_mass_fraction : float
        m_0/m_final [-] for the mass basis (1: final-mass simplification).
    peak_scale : float
        Factor on the model peak (measured/model at the measured run, ≥ 1) [-].
    acceptable_classes : sequence of int
        Classes accepted by the default rule.
    rule : callable or None
        Site rule ``rule(criticality_class, cooling_margin, mtsr_k) -> bool array``
        replacing the default.

    Returns
    -------
    OperatingWindow
        2-D arrays (rows = temperatures) and per-temperature vectors, SI.

    Validity: the assumptions of the module docstring; MTT and TD24 as given.

    Examples
    --------
    >>> w = operating_window([3600.0, 7200.0], [303.15], 0.1 / 60, 303.15, None, 120e3,
    ...                      2000.0, 5000.0, 4200.0, 283.15, 383.15, 423.15, 1.0, 0.8)
    >>> w.criticality_class.tolist(), w.safe.tolist()
    ([[1, 1]], [[False, True]])

    References
    ----------
    METHODS.md §1, §2.2, §4.1; Steinbach 1999; Westerterp & Molga 2006 (from memory).
    """
    td = np.atleast_1d(np.asarray(dosing_times_s, dtype=float))
    temps = np.atleast_1d(np.asarray(temperatures_k, dtype=float))
    if not (np.all(td > 0) and np.all(temps > 0)):
        raise CalcInputError("dosing_times_s / temperatures_k", None, "must be > 0")
    k0 = require_positive("rate_constant_per_s", rate_constant_per_s)
    tref = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    if activation_energy_j_per_mol is None:
        if not np.allclose(temps, tref, atol=1e-9, rtol=0):
            raise CalcInputError("activation_energy_j_per_mol", None,
                                 "is needed to evaluate other temperatures than the run's")
        k = np.full(temps.shape, k0)
    else:
        k = np.asarray(rate_constant_at(k0, tref, temps, activation_energy_j_per_mol)).reshape(
            temps.shape)
    qs = require_positive("specific_heat_j_per_kg", specific_heat_j_per_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    mass = require_positive("reaction_mass_kg", reaction_mass_kg)
    kk, tdd = np.meshgrid(k, td, indexing="ij")
    acc = accumulation_at_end_of_dosing(kk, tdd)
    eff, _ = mass_basis_accumulation(kk, tdd, initial_mass_fraction)
    mtsr = temps[:, None] + eff * (qs / cp)
    peak = peak_scale * qs * kk * acc * mass
    warnings = []
    if heat_transfer_capacity_w_per_k is None or coolant_temperature_k is None:
        cap = np.full(temps.shape, np.nan)
        warnings.append("no vessel cooling data: the cooling margin is unknown")
    else:
        cap = heat_transfer_capacity_w_per_k * (temps - coolant_temperature_k)
    margin = cap[:, None] / peak
    mtt = np.nan if mtt_k is None else np.asarray(mtt_k, dtype=float)
    mtt = mtt[:, None] if np.ndim(mtt) == 1 else mtt
    cls = criticality_classes(mtsr, mtt, np.nan if td24_k is None else td24_k)
    if rule is None:
        safe = (np.nan_to_num(margin, nan=-np.inf) >= minimum_cooling_margin) & np.isin(
            cls, list(acceptable_classes))
    else:
        safe = np.asarray(rule(cls, margin, mtsr), dtype=bool)
    first = np.where(safe.any(axis=1), np.argmax(safe, axis=1), -1)
    fastest = np.where(first >= 0, td[np.maximum(first, 0)], np.nan)
    limited = np.array([
        np.nan if not (c > 0) else minimum_dosing_time(qs, kt, c / mass / peak_scale,
                                                       minimum_cooling_margin)
        for kt, c in zip(k, cap, strict=True)], dtype=float)
    return OperatingWindow(td, temps, k, acc, eff, mtsr, peak, cap, margin, cls, safe,
                           fastest, limited, tuple(warnings))


def dosing_profile(rate_constant_per_s, dosing_time_s, process_temperature_k,
                   adiabatic_rise_k, initial_mass_fraction=1.0, points=121):
    """Accumulation a(t) and MTSR(t) over dosing and the decay after it, for a chart.

    Equation: a(t) as :func:`accumulated_fraction`; MTSR(t) = T_p + a(t)·ΔT_ad·m_f/m(t).

    Parameters
    ----------
    rate_constant_per_s : float
        k [1/s].
    dosing_time_s : float
        t_d [s].
    process_temperature_k : float
        T_p [K].
    adiabatic_rise_k : float
        ΔT_ad on the final mass [K].
    initial_mass_fraction : float
        m_0/m_final [-].
    points : int
        Number of time points from 0 to t_d + 3/k (at most 2·t_d after t_d).

    Returns
    -------
    tuple of numpy.ndarray
        (t [s], a(t) [-], MTSR(t) [K]).

    Validity: as :func:`accumulated_fraction`.

    Examples
    --------
    >>> t, a, m = dosing_profile(0.1 / 60, 3600.0, 303.15, 60.0, 0.8, points=5)
    >>> round(float(a.max()), 4)
    0.1663

    References
    ----------
    METHODS.md §1.1, C1.7.
    """
    k = require_positive("rate_constant_per_s", rate_constant_per_s)
    td = require_positive("dosing_time_s", dosing_time_s)
    r0 = require_positive("initial_mass_fraction", initial_mass_fraction)
    end = td + min(3.0 / k, 2.0 * td)
    t = np.unique(np.concatenate([np.linspace(0.0, end, int(points)), [td]]))
    a = accumulated_fraction(t, k, td)
    m_rel = r0 + (1.0 - r0) * np.minimum(t / td, 1.0)
    return t, a, process_temperature_k + a * adiabatic_rise_k / m_rel


def as_table(window: OperatingWindow) -> list[dict]:
    """The window's cells as rows of a table (SI floats), row-major by temperature.

    Parameters
    ----------
    window : OperatingWindow
        The result of :func:`operating_window`.

    Returns
    -------
    list of dict
        One dict per cell: temperature_k, dosing_time_s, accumulation, mtsr_k,
        peak_heat_release_w, cooling_margin, criticality_class, safe.

    Examples
    --------
    >>> w = operating_window([3600.0], [303.15], 0.1 / 60, 303.15, None, 120e3, 2000.0,
    ...                      5000.0, 4200.0, 283.15, 383.15, 423.15, 1.0)
    >>> as_table(w)[0]["criticality_class"]
    1

    References
    ----------
    METHODS.md §1, §4.1.
    """
    rows = []
    for i, temp in enumerate(window.temperatures_k):
        for j, td in enumerate(window.dosing_times_s):
            margin = float(window.cooling_margin[i, j])
            rows.append({
                "temperature_k": float(temp), "dosing_time_s": float(td),
                "accumulation": float(window.accumulation[i, j]),
                "mtsr_k": float(window.mtsr_k[i, j]),
                "peak_heat_release_w": float(window.peak_heat_release_w[i, j]),
                "cooling_margin": margin if math.isfinite(margin) else None,
                "criticality_class": int(window.criticality_class[i, j]) or None,
                "safe": bool(window.safe[i, j]),
            })
    return rows


__all__ = ["ASSUMPTIONS", "REFERENCES", "ArrheniusFit", "OperatingWindow",
           "SemibatchFit", "accumulated_fraction", "accumulation_at_end_of_dosing",
           "as_table", "criticality_classes", "dosing_profile", "fit_arrhenius",
           "fit_semibatch_series", "mass_basis_accumulation", "minimum_dosing_time",
           "operating_window", "peak_specific_heat_release", "rate_constant_at",
           "rate_constant_from_accumulation"]
