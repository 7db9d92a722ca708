"""TMRad and TD24 by adiabatic simulation of a fitted rate model (METHODS.md §12.4).

dα/dt = k(T)·f(α), T = T₀ + (ΔT_ad/φ)·α, from fresh material (α₀ = 0), integrated
by ``scipy.integrate.solve_ivp`` (LSODA) up to the maximum of dT/dt, found as the
terminal event of d(dT/dt)/dt = 0:  (E·ΔT_ad/(φ·R·T²))·f(α) + f′(α) = 0.
TD_t solves TMRad(T₀) = t by Brent's method on ln TMRad, which falls steadily with T₀.
For zero order this reduces to Townsend–Tou (§3.1) and for nth order to §3.6.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import integrate, optimize, stats

from calcs.constants import DAY, R
from calcs.errors import CalcInputError, require_absolute_temperature, require_positive
from calcs.rate_models import RATE_MODELS, conversion_function
from calcs.result import Result

REFERENCES = ("townsend_tou1980", "methods_md", "ictac2011")
EXTRAPOLATION_LIMIT_K = 50.0  # chosen here: warn when TD24 lies this far below the data


def _scalar_model(model, p, t_ref):
    e_r, lnk, n = p[0] / R, p[1], p[2]
    z = 10.0 ** p[3] if model == "autocatalytic" else None

    def k(temp):
        return math.exp(lnk - e_r * (1.0 / temp - 1.0 / t_ref))

    def f(a):
        a = min(max(a, 0.0), 1.0)
        g = (1.0 - a) ** n
        return g * (a + z) if z is not None else g

    def df(a):  # scalar twin of rate_models.conversion_function_slope
        a = min(max(a, 0.0), 1.0 - 1e-15)
        d = -n * (1.0 - a) ** (n - 1.0) if n else 0.0
        return (1.0 - a) ** n + d * (a + z) if z is not None else d

    return e_r, k, f, df


def _tmr(model, p, t_ref, t0, rise):
    """Time of the maximum of dT/dt [s] and T there ((0, T₀) when it is largest at start)."""
    e_r, k, f, df = _scalar_model(model, p, t_ref)

    def grows(a):
        temp = t0 + rise * a
        return e_r * rise / (temp * temp) * f(a) + df(a)

    if grows(0.0) <= 0.0:
        return 0.0, t0

    def rhs(_t, y):
        a = float(y[0])
        return [k(t0 + rise * a) * f(a)]

    def peak(_t, y):
        return grows(min(float(y[0]), 1.0 - 1e-12))

    peak.terminal, peak.direction = True, -1

    def done(_t, y):  # zero order: the rate is largest at full conversion
        return y[0] - (1.0 - 1e-10)

    done.terminal = True
    r0 = k(t0) * f(0.0)
    horizon = (R * t0 * t0 / (p[0] * rise) + 1.0) / r0  # a zero-order runaway takes about this
    for _ in range(6):
        horizon *= 10.0
        sol = integrate.solve_ivp(
            rhs,
            (0.0, horizon),
            [0.0],
            method="LSODA",
            events=(peak, done),
            rtol=1e-9,
            atol=1e-13,
            first_step=min(1.0 / r0, horizon) * 1e-6,
        )
        for hit, at in zip(sol.t_events, sol.y_events, strict=True):
            if hit.size:
                return float(hit[0]), t0 + rise * float(at[0][0])
    raise CalcInputError("start_temperature_k", t0, "simulation did not reach the maximum rate")


def _inputs(model, parameters, reference_temperature_k, adiabatic_rise_k, phi):
    if model not in RATE_MODELS:
        raise CalcInputError("model", model, f"must be one of {sorted(RATE_MODELS)}")
    p = [float(x) for x in parameters]
    if len(p) != len(RATE_MODELS[model][0]):
        raise CalcInputError("parameters", parameters, f"{model} needs {RATE_MODELS[model][0]}")
    require_positive("activation_energy_j_per_mol", p[0])
    t_ref = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    rise = require_positive("adiabatic_rise_k", adiabatic_rise_k)
    if phi < 1.0:
        raise CalcInputError("phi", phi, "must be at least 1")
    return p, t_ref, rise / phi


def tmr_simulated(
    model: str,
    parameters,
    reference_temperature_k: float,
    start_temperature_k: float,
    adiabatic_rise_k: float,
    phi: float = 1.0,
) -> Result:
    """Adiabatic time to maximum rate of a rate model, by simulation from fresh material.

    Equation: dα/dt = k(T)·f(α), T = T₀ + (ΔT_ad/φ)·α, α(0) = 0; TMRad = time of the
    largest dT/dt (0 when it is largest at the start).

    Parameters
    ----------
    model : str
        A key of :data:`calcs.rate_models.RATE_MODELS`.
    parameters : sequence
        Fitted parameters (E [J/mol], ln k_ref, n[, log₁₀ z]).
    reference_temperature_k : float
        T_ref of ln k_ref [K].
    start_temperature_k : float
        T₀ [K].
    adiabatic_rise_k : float
        ΔT_ad of the decomposition at φ = 1 [K].
    phi : float
        Thermal inertia φ [-] (1 at plant scale).

    Returns
    -------
    Result
        TMRad [s]; parameters: temperature at the maximum rate [K].

    Validity: single-step kinetics inside (or near) the fitted range; adiabatic.

    Examples
    --------
    >>> p = (100e3, math.log(1e9) - 100e3 / (R * 353.15), 1.0)
    >>> round(tmr_simulated("nth_order", p, 353.15, 353.15, 200.0).value)  # METHODS.md C3.6
    36451

    References
    ----------
    Townsend & Tou 1980; METHODS.md §3.6, §12.4.
    """
    p, t_ref, rise = _inputs(model, parameters, reference_temperature_k, adiabatic_rise_k, phi)
    t0 = require_absolute_temperature("start_temperature_k", start_temperature_k)
    tmr, t_max = _tmr(model, p, t_ref, t0, rise)
    return Result(
        tmr,
        "s",
        f"adiabatic_sim.tmr.{model}",
        (),
        {"temperature_at_max_rate_k": t_max, "phi": phi},
        ("townsend_tou1980", "methods_md"),
    )


def td_simulated(
    model: str,
    parameters,
    reference_temperature_k: float,
    adiabatic_rise_k: float,
    time_s: float = DAY,
    phi: float = 1.0,
    lowest_measured_k: float | None = None,
    extrapolation_limit_k: float = EXTRAPOLATION_LIMIT_K,
) -> Result:
    """Start temperature whose simulated TMRad equals a time (TD24 by default).

    Equation: ln TMRad(T₀) − ln t = 0 solved by ``brentq``; the bracket starts
    around the zero-order estimate from the initial rate and widens to [150, 1500] K.

    Parameters
    ----------
    model : str
        A key of :data:`calcs.rate_models.RATE_MODELS`.
    parameters : sequence
        Fitted parameters.
    reference_temperature_k : float
        T_ref [K].
    adiabatic_rise_k : float
        ΔT_ad at φ = 1 [K].
    time_s : float
        Target TMRad [s] (86 400 s for TD24).
    phi : float
        φ [-] (1 at plant scale).
    lowest_measured_k : float or None
        Lowest temperature at which the decomposition was measured [K].
    extrapolation_limit_k : float
        Extrapolation distance beyond which a warning is given [K] (50, chosen here).

    Returns
    -------
    Result
        TD [K] (``None`` outside 150-1500 K); parameters: extrapolation distance [K].

    Validity: as :func:`tmr_simulated`; far below the measured range the model is
    an extrapolation (warned past the limit).

    Examples
    --------
    >>> p = (100e3, math.log(1e9) - 100e3 / (R * 353.15), 1.0)
    >>> round(td_simulated("nth_order", p, 353.15, 200.0).value - 273.15, 2)  # C3.6 kinetics
    70.69

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11 (TD24); METHODS.md §12.4.
    """
    p, t_ref, rise = _inputs(model, parameters, reference_temperature_k, adiabatic_rise_k, phi)
    target = math.log(require_positive("time_s", time_s))

    def g(t0):
        tmr = _tmr(model, p, t_ref, t0, rise)[0]
        return (math.log(tmr) if tmr > 0 else -700.0) - target

    lo, hi = 150.0, 1500.0
    f0 = float(conversion_function(model, 0.0, p))
    try:  # zero-order TMR from the initial rate (Townsend-Tou), only to place the bracket
        guess = optimize.brentq(
            lambda t: (
                math.log(R * t * t / (p[0] * rise * f0))
                - p[1]
                + p[0] / R * (1 / t - 1 / t_ref)
                - target
            ),
            lo,
            hi,
        )
    except ValueError:
        guess = 400.0
    a, b = max(guess - 20.0, lo), min(guess + 20.0, hi)
    while a > lo and g(a) < 0:
        a = max(a - 40.0, lo)
    while b < hi and g(b) > 0:
        b = min(b + 40.0, hi)
    warnings, params = [], {"phi": phi, "time_s": time_s}
    if g(a) * g(b) > 0:
        return Result(None, "K", f"adiabatic_sim.td.{model}", ("no TD in 150-1500 K",), params)
    td = optimize.brentq(g, a, b, xtol=1e-4)
    if lowest_measured_k is not None:
        distance = float(lowest_measured_k) - td
        params["extrapolation_k"] = distance
        if distance > extrapolation_limit_k:
            warnings.append(
                f"TD lies {distance:.0f} K below the lowest measured temperature "
                f"(> {extrapolation_limit_k:g} K): the kinetics are extrapolated"
            )
    return Result(
        td,
        "K",
        f"adiabatic_sim.td.{model}",
        tuple(warnings),
        params,
        ("townsend_tou1980", "methods_md", "stoessel2008"),
    )


def tmr_line(
    model: str,
    parameters,
    reference_temperature_k: float,
    adiabatic_rise_k: float,
    temperatures_k,
    phi: float = 1.0,
) -> np.ndarray:
    """TMRad(T₀) over a set of start temperatures (the TMR(T) line).

    Equation: :func:`tmr_simulated` at each T₀.

    Parameters
    ----------
    model : str
        A key of :data:`calcs.rate_models.RATE_MODELS`.
    parameters : sequence
        Fitted parameters.
    reference_temperature_k : float
        T_ref [K].
    adiabatic_rise_k : float
        ΔT_ad [K].
    temperatures_k : array_like
        Start temperatures [K].
    phi : float
        φ [-].

    Returns
    -------
    numpy.ndarray
        TMRad [s] at each T₀.

    Validity: as :func:`tmr_simulated`.

    Examples
    --------
    >>> p = (100e3, math.log(1e9) - 100e3 / (R * 353.15), 1.0)
    >>> [round(float(x) / 3600, 2) for x in tmr_line("nth_order", p, 353.15, 200.0, [353.15])]
    [10.13]

    References
    ----------
    METHODS.md §12.4.
    """
    p, t_ref, rise = _inputs(model, parameters, reference_temperature_k, adiabatic_rise_k, phi)
    return np.array([_tmr(model, p, t_ref, float(t), rise)[0] for t in temperatures_k])


def td_uncertainty(
    model: str,
    parameters,
    covariance,
    reference_temperature_k: float,
    adiabatic_rise_k: float,
    time_s: float = DAY,
    phi: float = 1.0,
    rise_stderr_k: float = 0.0,
    dof: int | None = None,
    level: float = 0.95,
) -> Result:
    """Standard uncertainty and band of a simulated TD from the parameter covariance.

    Equation: σ_TD² = gᵀ·C·g + (∂TD/∂ΔT_ad·σ_ΔT)² with g_i = ∂TD/∂p_i =
    −(∂ln TMR/∂p_i)/(∂ln TMR/∂T₀) at TD (implicit function theorem), derivatives by
    central differences (±σ_i/2, ±0.05 K); the full C carries the strong E–ln k
    correlation. Band: TD ± k·σ_TD with k the two-sided quantile of Student's t with
    ``dof`` degrees of freedom (of the normal without).

    Parameters
    ----------
    model : str
        A key of :data:`calcs.rate_models.RATE_MODELS`.
    parameters : sequence
        Fitted parameters.
    covariance : array_like
        Their full covariance matrix (the fit's plus the scans', see
        :func:`calcs.kinetic_fit.scan_jackknife_covariance`).
    reference_temperature_k : float
        T_ref [K].
    adiabatic_rise_k : float
        ΔT_ad [K].
    time_s : float
        Target TMRad [s].
    phi : float
        φ [-].
    rise_stderr_k : float
        Standard uncertainty of ΔT_ad [K] (of the measured energy over c_p).
    dof : int or None
        Degrees of freedom of the covariance (scans − 1), None for the normal.
    level : float
        Coverage of the band [-].

    Returns
    -------
    Result
        σ_TD [K]; parameters: TD [K], the band [K], its level and coverage factor.

    Validity: linearisation about the fit; bias of the analysis (integration limits,
    baseline) is not in σ: for autocatalytic scans whose induction heat is within the
    noise it lowers TD (the safe side).

    Examples
    --------
    >>> p = (100e3, math.log(1e9) - 100e3 / (R * 353.15), 1.0)
    >>> c = np.diag([1e3, 0.01, 0.0]) ** 2
    >>> round(td_uncertainty("nth_order", p, c, 353.15, 200.0).value, 2)
    0.11

    References
    ----------
    JCGM 100:2008 (GUM), law of propagation of uncertainty and Student's t.
    """
    p = np.asarray(parameters, float)
    c = np.asarray(covariance, float)
    td = td_simulated(model, p, reference_temperature_k, adiabatic_rise_k, time_s, phi).value
    if td is None:
        return Result(None, "K", "adiabatic_sim.td_uncertainty", ("no TD",))
    _, t_ref, rise = _inputs(model, p, reference_temperature_k, adiabatic_rise_k, phi)

    def ln_tmr(q, t0, dt=rise):
        return math.log(max(_tmr(model, list(q), t_ref, t0, dt)[0], 1e-300))

    d_t = (ln_tmr(p, td + 0.05) - ln_tmr(p, td - 0.05)) / 0.1
    g = np.zeros(len(p))
    for i, s in enumerate(np.sqrt(np.clip(np.diag(c), 0, None))):
        if s == 0 or not math.isfinite(s):
            continue
        hi, lo = p.copy(), p.copy()
        hi[i] += s / 2
        lo[i] -= s / 2
        g[i] = -(ln_tmr(hi, td) - ln_tmr(lo, td)) / s / d_t
    var = float(g @ c @ g)
    su = float(rise_stderr_k) / phi
    if su > 0:
        g_rise = -(ln_tmr(p, td, rise + su / 2) - ln_tmr(p, td, rise - su / 2)) / su / d_t
        var += (g_rise * su) ** 2
    sigma = float(math.sqrt(max(var, 0.0)))
    q = 0.5 + level / 2
    factor = float(stats.t.ppf(q, dof) if dof else stats.norm.ppf(q))
    return Result(
        sigma,
        "K",
        "adiabatic_sim.td_uncertainty.delta_method",
        (),
        {
            "td_k": td,
            "band_k": [td - factor * sigma, td + factor * sigma],
            "band_level": level,
            "coverage_factor": factor,
            "degrees_of_freedom": dof,
        },
        ("gum2008",),
    )
