"""Model-based kinetics fitted to all scans at once (METHODS.md §12.3).

Nonlinear least squares (``scipy.optimize.least_squares``) of dα/dt = k(T)·f(α) at the
measured (T, α) of every scan, each scan's residuals divided by its largest rate so
that slow and fast scans weigh alike. Start values come from the linear form
ln(dα/dt) = ln k_ref − (E/R)(1/T − 1/T_ref) + n·ln(1 − α) [+ ln(α + z)].
The model choice and the autocatalysis screen are in :mod:`calcs.autocatalytic`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize

from calcs.constants import R
from calcs.errors import CalcInputError
from calcs.rate_models import RATE_MODELS, conversion_function, pre_exponential

REFERENCES = ("ictac2011", "prout_tompkins1944")
BOUNDS = {
    "nth_order": ([1e3, -200.0, 0.0], [1e6, 50.0, 6.0]),
    "autocatalytic": ([1e3, -200.0, 0.0, -8.0], [1e6, 50.0, 6.0, 1.0]),
}


@dataclass(frozen=True)
class ModelFit:
    """Parameters (fitted coordinates), their covariance and the fit statistics."""

    model: str
    parameters: np.ndarray
    covariance: np.ndarray
    reference_temperature_k: float
    points: int
    ssr: float
    aic: float
    bic: float
    r_squared: float
    temperature_range_k: tuple[float, float]
    warnings: tuple[str, ...]

    @property
    def stderr(self) -> np.ndarray:
        return np.sqrt(np.clip(np.diag(self.covariance), 0.0, None))

    def report(self) -> dict:
        """Return the parameters with units and standard errors, A and z in SI, and statistics.

        Returns
        -------
        dict
            JSON-ready description of the fit.
        """
        names, units, form = RATE_MODELS[self.model]
        out = {
            "model": self.model,
            "f_alpha": form,
            "method": f"autocatalytic.fit.{self.model}",
            "reference_temperature_k": self.reference_temperature_k,
            "parameters": {
                n: {"value": float(v), "unit": u, "stderr": float(s)}
                for n, u, v, s in zip(names, units, self.parameters, self.stderr, strict=True)
            },
            "pre_exponential_per_s": pre_exponential(self.parameters, self.reference_temperature_k),
            "statistics": {
                "points": self.points,
                "parameters": len(self.parameters),
                "ssr": self.ssr,
                "aic": self.aic,
                "bic": self.bic,
                "r_squared": self.r_squared,
            },
            "temperature_range_k": list(self.temperature_range_k),
            "warnings": list(self.warnings),
        }
        if self.model == "autocatalytic":
            out["z"] = 10.0 ** float(self.parameters[3])
        return out


def _stack(curves, alpha_range):
    cols, scale = [], []
    for c in curves:
        a = np.asarray(c.conversion, float)
        keep = (a >= alpha_range[0]) & (a <= alpha_range[1])
        r = np.asarray(c.rate_per_s, float)[keep]
        if keep.sum() < 5:
            raise CalcInputError("curves", int(keep.sum()), "each scan needs 5 points in range")
        cols.append((np.asarray(c.temperature_k, float)[keep], a[keep], r))
        scale.append(np.full(keep.sum(), 1.0 / r.max()))
    t, a, r = (np.concatenate(x) for x in zip(*cols, strict=True))
    return t, a, r, np.concatenate(scale)


def _start(model, t, a, r, t_ref):
    ok = r > 1e-3 * r.max()
    x = -(1.0 / t[ok] - 1.0 / t_ref) / R
    one = np.log1p(-np.clip(a[ok], 0, 1 - 1e-9))
    best = None
    for lz in [None] if model == "nth_order" else np.arange(-6.0, 0.5, 0.5):
        y = np.log(r[ok]) - (0.0 if lz is None else np.log(a[ok] + 10.0**lz))
        m = np.column_stack([np.ones_like(x), x, one])
        coef, *_ = np.linalg.lstsq(m, y, rcond=None)
        ssr = float(np.sum((m @ coef - y) ** 2))
        if best is None or ssr < best[0]:
            p = [coef[1], coef[0], max(coef[2], 0.0)] + ([] if lz is None else [lz])
            best = (ssr, p)
    lo, hi = BOUNDS[model]
    return np.clip(best[1], np.array(lo) + 1e-9, np.array(hi) - 1e-9)


def fit_rate_model(curves, model: str, alpha_range=(0.02, 0.98)) -> ModelFit:
    """Fit one rate model to all scans at once by nonlinear least squares.

    Equation: minimise Σ_i Σ_j [(k(T_ij)·f(α_ij) − (dα/dt)_ij)/max_j (dα/dt)_ij]²;
    covariance = s²·(JᵀJ)⁻¹ with s² = SSR/(N − p); AIC = N·ln(SSR/N) + 2p,
    BIC = N·ln(SSR/N) + p·ln N.

    Parameters
    ----------
    curves : sequence
        :class:`calcs.dsc.ConversionCurve` objects (one per heating rate).
    model : str
        A key of :data:`calcs.rate_models.RATE_MODELS`.
    alpha_range : tuple
        Conversions used (the baseline-sensitive ends are left out) [-].

    Returns
    -------
    ModelFit
        Parameters in fitted coordinates (E [J/mol], ln k_ref, n[, log₁₀ z]) at T_ref
        = mean temperature of the points, covariance, statistics.

    Validity: single-step kinetics; the standard errors assume independent residuals,
    and neighbouring points of a curve are not, so they are a lower bound.

    Examples
    --------
    >>> from calcs.dsc import ConversionCurve
    >>> from calcs.rate_models import simulate_scan
    >>> p = (120e3, math.log(1e12) - 120e3 / (R * 440.0), 1.0)
    >>> cs = [ConversionCurve(b, *simulate_scan("nth_order", p, 440.0, b, 350.0, 520.0))
    ...       for b in (1 / 60, 5 / 60)]
    >>> round(float(fit_rate_model(cs, "nth_order").parameters[0]) / 1e3, 2)
    120.0

    References
    ----------
    Vyazovkin et al. 2011 (ICTAC); Burnham & Anderson 2002 (AIC).
    """
    if model not in RATE_MODELS:
        raise CalcInputError("model", model, f"must be one of {sorted(RATE_MODELS)}")
    if not curves:
        raise CalcInputError("curves", 0, "needs at least one scan")
    t, a, r, w = _stack(curves, alpha_range)
    t_ref = float(np.mean(t))
    x = -(1.0 / t - 1.0 / t_ref) / R
    one_minus = np.clip(1.0 - a, 1e-12, 1.0)
    log_one = np.log(one_minus)

    def res(p):
        return (np.exp(p[1] + p[0] * x) * conversion_function(model, a, p) - r) * w

    def jac(p):
        g = np.exp(p[1] + p[0] * x) * conversion_function(model, a, p) * w
        cols = [g * x, g, g * log_one]
        if model == "autocatalytic":
            z = 10.0 ** p[3]
            cols.append(g * z * math.log(10.0) / (a + z))
        return np.column_stack(cols)

    p0 = _start(model, t, a, r, t_ref)
    sol = optimize.least_squares(
        res,
        p0,
        jac=jac,
        bounds=BOUNDS[model],
        method="trf",
        x_scale="jac",
        xtol=1e-12,
        ftol=1e-12,
        gtol=1e-12,
    )
    n, k = len(r), len(p0)
    ssr = float(np.sum(sol.fun**2))
    j = sol.jac
    try:
        cov = np.linalg.inv(j.T @ j) * ssr / max(n - k, 1)
    except np.linalg.LinAlgError:
        cov = np.full((k, k), np.inf)
    yw = r * w
    r2 = 1.0 - ssr / float(np.sum((yw - yw.mean()) ** 2))
    warnings = []
    if not sol.success:
        warnings.append(f"least squares did not converge: {sol.message}")
    lo, hi = BOUNDS[model]
    for name, v, lo_, hi_ in zip(RATE_MODELS[model][0], sol.x, lo, hi, strict=True):
        if min(v - lo_, hi_ - v) < 1e-6 * max(1.0, abs(v)):
            warnings.append(f"{name} = {v:.4g} sits on its bound: the model may not suit the data")
    ln_n = math.log(max(ssr / n, 1e-300))
    return ModelFit(
        model,
        sol.x,
        cov,
        t_ref,
        n,
        ssr,
        n * ln_n + 2 * k,
        n * ln_n + k * math.log(n),
        r2,
        (float(t.min()), float(t.max())),
        tuple(warnings),
    )


def scan_jackknife_covariance(curves, fit: ModelFit, alpha_range=(0.02, 0.98)) -> np.ndarray:
    """Covariance of the parameters from leaving out one scan at a time (jackknife).

    Equation: θ₍ᵢ₎ = fit without scan i, its ln k_ref moved to the full fit's T_ref
    (ln k_ref + (E/R)(1/T_ref,i − 1/T_ref)); C_J = (n − 1)/n · Σ (θ₍ᵢ₎ − θ̄)(θ₍ᵢ₎ − θ̄)ᵀ.

    Parameters
    ----------
    curves : sequence
        Conversion curves (calcs.dsc.ConversionCurve) of the fit, 3 or more.
    fit : ModelFit
        The fit to all of them.
    alpha_range : tuple
        As in :func:`fit_rate_model` [-].

    Returns
    -------
    numpy.ndarray
        C_J in the fitted coordinates (zeros with fewer than 3 scans).

    Validity: what differs from scan to scan (baseline, integration limits, the energy
    each scan is normalised by, sample and crucible) is what the residuals of one fit do
    not show: neighbouring points of a scan are not independent, so s²(JᵀJ)⁻¹ alone is
    a lower bound. Add C_J to it and use Student's t with n − 1 degrees of freedom.

    Examples
    --------
    >>> from calcs.dsc import ConversionCurve
    >>> from calcs.rate_models import simulate_scan
    >>> p = (120e3, math.log(1e12) - 120e3 / (R * 440.0), 1.0)
    >>> cs = [ConversionCurve(b, *simulate_scan("nth_order", p, 440.0, b, 350.0, 520.0))
    ...       for b in (1 / 60, 2 / 60, 5 / 60)]
    >>> bool(np.sqrt(scan_jackknife_covariance(cs, fit_rate_model(cs, "nth_order"))[0, 0]) < 50)
    True

    References
    ----------
    Efron & Tibshirani 1993 (the jackknife estimate of covariance).
    """
    n = len(curves)
    k = len(fit.parameters)
    if n < 3:
        return np.zeros((k, k))
    thetas = []
    for i in range(n):
        part = fit_rate_model(list(curves[:i]) + list(curves[i + 1 :]), fit.model, alpha_range)
        th = np.array(part.parameters, float)
        th[1] += th[0] / R * (1.0 / part.reference_temperature_k - 1.0 / fit.reference_temperature_k)
        thetas.append(th)
    d = np.array(thetas) - np.mean(thetas, axis=0)
    return (n - 1) / n * d.T @ d
