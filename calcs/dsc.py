"""One DSC scan: heating rate, baseline, onset, peak, energy and conversion (METHODS.md §12.1).

Baselines side by side (``BASELINE_METHODS``), chosen by name and stored with the
result; defaults for the integration limits come from the signal itself.

==========  =========================================================  ==========================
method      equation                                                   where it is valid
==========  =========================================================  ==========================
linear      b(t) = b₁(t₁) + [b₂(t₂) − b₁(t₁)]·(t − t₁)/(t₂ − t₁)        small change of c_p
sigmoidal   b(t) = (1 − α(t))·b₁(t) + α(t)·b₂(t), iterated on α          c_p step over the event
==========  =========================================================  ==========================

b₁, b₂ are straight lines fitted to the signal just before t₁ and just after t₂.
Exotherm positive. References: ICTAC Kinetics Committee (Vyazovkin et al. 2011,
2014) for baselines and conversion; ASTM E537 for the extrapolated onset [MEMORY].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import integrate, ndimage, signal, stats

from calcs.errors import CalcInputError, require_finite_array, require_positive

REFERENCES = ("ictac2011", "ictac2014", "astm_e537")
BASELINE_METHODS = {
    "linear": "straight line between the extrapolated pre- and post-event baselines at t₁, t₂",
    "sigmoidal": "(1 − α)·b₁ + α·b₂, iterated until α changes by < 1e-7",
}
RATE_TOLERANCE = 0.05  # relative spread of segment heating rates that triggers a warning


@dataclass(frozen=True)
class ConversionCurve:
    """Conversion α(t) [-] and rate dα/dt [1/s] of one scan at heating rate β [K/s]."""

    heating_rate_k_per_s: float
    time_s: np.ndarray
    temperature_k: np.ndarray
    conversion: np.ndarray
    rate_per_s: np.ndarray


@dataclass(frozen=True)
class ScanAnalysis:
    """What one DSC scan yields, with the method of each number."""

    heating_rate_k_per_s: float
    onset_k: float
    first_deviation_k: float
    peak_k: float
    energy_j_per_kg: float
    limits_k: tuple[float, float]
    baseline_method: str
    baseline_w: np.ndarray  # over the whole scan
    curve: ConversionCurve
    warnings: tuple[str, ...] = ()
    methods: dict = field(default_factory=dict)


def heating_rate(time_s, temperature_k) -> tuple[float, tuple[str, ...]]:
    """Heating rate of a scan from its temperature column, with a constancy check.

    Equation: β = slope of the least-squares line T(t); the scan is cut into ten
    equal parts and a warning is given when any part's slope differs from β by more
    than 5 % (a tolerance chosen here; common practice, no source).

    Parameters
    ----------
    time_s : array_like
        Time [s], increasing.
    temperature_k : array_like
        Sample (or programme) temperature [K].

    Returns
    -------
    tuple
        (β [K/s], warnings).

    Validity: linear heating programmes (not modulated, not isothermal).

    Examples
    --------
    >>> t = np.linspace(0, 600, 61)
    >>> beta, w = heating_rate(t, 300 + t / 12)
    >>> round(beta * 60, 6), w
    (5.0, ())

    References
    ----------
    ICTAC Kinetics Committee, Vyazovkin et al. 2014 (heating rate from the measured temperature).
    """
    t = require_finite_array("time_s", time_s)
    temp = require_finite_array("temperature_k", temperature_k)
    if len(t) != len(temp) or len(t) < 10:
        raise CalcInputError("time_s", len(t), "needs at least 10 rows, as many as temperature_k")
    if np.any(np.diff(t) <= 0):
        raise CalcInputError("time_s", t, "must increase from row to row")
    beta = float(stats.linregress(t, temp).slope)
    if beta <= 0:
        raise CalcInputError("temperature_k", temp, "must rise during a scan")
    parts = [
        float(np.polyfit(tt, yy, 1)[0])
        for tt, yy in zip(np.array_split(t, 10), np.array_split(temp, 10), strict=True)
    ]
    worst = max(abs(p / beta - 1.0) for p in parts)
    warnings = ()
    if worst > RATE_TOLERANCE:
        warnings = (
            f"heating rate not constant: parts of the scan differ from "
            f"{beta * 60:.3g} K/min by up to {worst:.0%} (> {RATE_TOLERANCE:.0%})",
        )
    return beta, warnings


def default_limits(time_s, heat_flow_w) -> tuple[int, int, float]:
    """Default integration limits of the exotherm: where it leaves and rejoins the baseline.

    Equation: r = HF − line through the medians of the first and last 5 % of the
    scan; from the largest r, walk out to the first points where the running mean of r
    over 1 % of the rows (width w) falls below max(5·σ/√w, 1 % of the peak) (σ: scatter
    of the first 5 % about its own line), then widen by 25 % of the event on each side.
    Reading the crossings on the raw r let noise end the event early, its tail went into
    the post-event baseline, and the energy came out 4 % low at a noise of 1 % of the peak.

    Parameters
    ----------
    time_s : array_like
        Time [s].
    heat_flow_w : array_like
        Heat flow [W], exotherm positive.

    Returns
    -------
    tuple
        (index of t₁, index of t₂, σ [W]).

    Validity: one dominant exotherm with baseline on both sides of it.

    Examples
    --------
    >>> t = np.linspace(0, 100, 1001)
    >>> i1, i2, _ = default_limits(t, np.exp(-((t - 50) / 5) ** 2))
    >>> round(float(t[i1]), 1), round(float(t[i2]), 1)
    (33.7, 66.3)

    References
    ----------
    Common practice, no source (the thresholds are chosen here and stated).
    """
    t = require_finite_array("time_s", time_s)
    hf = require_finite_array("heat_flow_w", heat_flow_w)
    n = len(t)
    k = max(n // 20, 3)
    y0, y1 = np.median(hf[:k]), np.median(hf[-k:])
    t0, t1 = np.median(t[:k]), np.median(t[-k:])
    r = hf - (y0 + (y1 - y0) * (t - t0) / (t1 - t0))
    ip = int(np.argmax(r))
    height = float(r[ip])
    head = hf[:k] - np.polyval(np.polyfit(t[:k], hf[:k], 1), t[:k])
    sigma = float(np.std(head))
    if height <= max(10 * sigma, 1e-3 * float(np.abs(r).max())):
        raise CalcInputError("heat_flow", height, "shows no exotherm (exotherm must be positive)")
    # the crossings are found on a running mean (1 % of the rows), whose scatter is σ/√width,
    # so noise does not end the event while its tail is still well above the baseline
    width = max(n // 100, 1) * 2 + 1
    smooth = ndimage.uniform_filter1d(r, width, mode="nearest")
    threshold = max(5 * sigma / math.sqrt(width), 0.01 * height)
    below = np.flatnonzero(smooth[:ip] < threshold)
    i1 = int(below[-1]) if below.size else 0
    after = np.flatnonzero(smooth[ip:] < threshold)
    i2 = ip + int(after[0]) if after.size else n - 1
    pad = int(0.25 * (i2 - i1))
    return max(i1 - pad, 0), min(i2 + pad, n - 1), sigma


def _side_line(t, hf, sl: slice, at: float) -> np.ndarray:
    tt, yy = t[sl], hf[sl]
    if len(tt) >= 5:
        return np.polyfit(tt, yy, 1)
    return np.array([0.0, float(np.interp(at, t, hf))])


def analyse_scan(
    time_s,
    temperature_k,
    heat_flow_w,
    sample_mass_kg: float,
    baseline: str = "sigmoidal",
    limits_k=None,
    noise_multiple: float = 5.0,
    detection_fraction: float = 0.01,
) -> ScanAnalysis:
    """Baseline, extrapolated onset, first deviation, peak, energy and conversion of a DSC scan.

    Equations: Q = ∫_{t₁}^{t₂}(HF − b)dt / m_s; α(t) = ∫_{t₁}^{t}(HF − b)dt/(Q·m_s);
    dα/dt = (HF − b)/(Q·m_s). Extrapolated onset: the pre-event baseline b₁ meets the
    tangent at the steepest point of the leading edge (ASTM E537). First deviation:
    first temperature from which HF − b stays above max(noise_multiple·σ,
    detection_fraction·peak) up to the peak. Peak: maximum of HF − b.

    Parameters
    ----------
    time_s : array_like
        Time [s].
    temperature_k : array_like
        Sample temperature [K].
    heat_flow_w : array_like
        Heat flow [W], exotherm positive.
    sample_mass_kg : float
        Sample mass m_s [kg].
    baseline : str
        ``"sigmoidal"`` (default) or ``"linear"`` (see ``BASELINE_METHODS``).
    limits_k : tuple or None
        Integration limits (T₁, T₂) [K]; ``None`` for :func:`default_limits`.
    noise_multiple : float
        Multiple of the baseline scatter σ for the first deviation [-] (5).
    detection_fraction : float
        Minimum threshold as a fraction of the peak height [-] (0.01).

    Returns
    -------
    ScanAnalysis
        Onsets, peak [K], energy [J/kg], heating rate [K/s], baseline [W], α(t).

    Validity: one exotherm between the limits; the onset depends on heating rate,
    sample mass and sensitivity (METHODS.md §3.3), it is not a safe temperature.

    Examples
    --------
    >>> t = np.linspace(0, 3000, 3001)
    >>> hf = 1e-3 * np.exp(-((t - 1500) / 100) ** 2)
    >>> a = analyse_scan(t, 300 + t / 60, hf, 2e-6, baseline="linear")
    >>> round(a.energy_j_per_kg / 1e3, 1), round(a.peak_k, 1)  # ∫ = √π·100·1e-3 J
    (88.6, 325.0)

    References
    ----------
    Vyazovkin et al. 2011, Thermochim. Acta 520, 1-19 (ICTAC); ASTM E537 (onset).
    """
    if baseline not in BASELINE_METHODS:
        raise CalcInputError("baseline", baseline, f"must be one of {sorted(BASELINE_METHODS)}")
    beta, warnings = heating_rate(time_s, temperature_k)
    t = require_finite_array("time_s", time_s)
    temp = require_finite_array("temperature_k", temperature_k)
    hf = require_finite_array("heat_flow_w", heat_flow_w)
    if len(hf) != len(t):
        raise CalcInputError("heat_flow_w", len(hf), "must have as many rows as time_s")
    m = require_positive("sample_mass_kg", sample_mass_kg)
    i1, i2, sigma = default_limits(t, hf)
    if limits_k is not None:
        lo, hi = (float(x) for x in limits_k)
        if not temp.min() <= lo < hi <= temp.max():
            raise CalcInputError("limits_k", limits_k, "must be T₁ < T₂ inside the scan")
        i1, i2 = int(np.searchsorted(temp, lo)), int(np.searchsorted(temp, hi))
    if i2 - i1 < 10:
        raise CalcInputError("limits_k", (temp[i1], temp[i2]), "must enclose at least 10 rows")
    w = max((i2 - i1) // 3, 5)
    c1 = _side_line(t, hf, slice(max(i1 - w, 0), i1 + 1), t[i1])
    c2 = _side_line(t, hf, slice(i2, min(i2 + w, len(t) - 1) + 1), t[i2])
    ev = slice(i1, i2 + 1)
    te, b1, b2 = t[ev], np.polyval(c1, t[ev]), np.polyval(c2, t[ev])
    lin = b1[0] + (b2[-1] - b1[0]) * (te - te[0]) / (te[-1] - te[0])
    b = lin
    if baseline == "sigmoidal":
        alpha = np.zeros_like(te)
        for _ in range(100):
            cum = integrate.cumulative_trapezoid(hf[ev] - b, te, initial=0.0)
            new = np.clip(cum / cum[-1], 0.0, 1.0) if cum[-1] > 0 else alpha
            b = (1 - new) * b1 + new * b2
            if np.max(np.abs(new - alpha)) < 1e-7:
                break
            alpha = new
    net = hf[ev] - b
    heat = float(integrate.trapezoid(net, te))
    if heat <= 0:
        raise CalcInputError("heat_flow_w", heat, "integrates to no released heat between limits")
    cum = integrate.cumulative_trapezoid(net, te, initial=0.0)
    conversion = np.clip(np.maximum.accumulate(cum / heat), 0.0, 1.0)
    rate = net / heat
    ip = int(np.argmax(net))
    height = float(net[ip])
    win = max(5, (ip // 20) * 2 + 1)
    slope = signal.savgol_filter(net, win, 2, deriv=1, delta=float(np.mean(np.diff(te))))
    js = int(np.argmax(slope[: ip + 1]))
    pre = c1 if baseline == "sigmoidal" else np.polyfit(te, lin, 1)
    s, y_s = slope[js], hf[ev][js]
    t_on = (pre[1] - y_s + s * te[js]) / (s - pre[0]) if s > pre[0] else te[js]
    onset = float(np.interp(t_on, t, temp, left=temp[0] + beta * (t_on - t[0])))
    threshold = max(noise_multiple * sigma, detection_fraction * height)
    below = np.flatnonzero(net[:ip] < threshold)
    jd = int(below[-1]) + 1 if below.size else 0
    full = np.concatenate([np.polyval(c1, t[:i1]), b, np.polyval(c2, t[i2 + 1 :])])
    return ScanAnalysis(
        heating_rate_k_per_s=beta,
        onset_k=onset,
        first_deviation_k=float(temp[ev][jd]),
        peak_k=float(temp[ev][ip]),
        energy_j_per_kg=heat / m,
        limits_k=(float(temp[i1]), float(temp[i2])),
        baseline_method=baseline,
        baseline_w=full,
        curve=ConversionCurve(beta, te.copy(), temp[ev].copy(), conversion, rate),
        warnings=warnings,
        methods={
            "heating_rate": "dsc.heating_rate (least-squares line of T(t))",
            "baseline": f"dsc.baseline.{baseline}",
            "onset": "dsc.extrapolated_onset (ASTM E537 tangent construction)",
            "first_deviation": f"dsc.first_deviation (> max({noise_multiple:g}·σ, "
            f"{detection_fraction:g}·peak))",
            "peak": "dsc.peak (maximum of HF − baseline)",
            "energy": "dsc.energy (trapezoidal integral over the baseline / sample mass)",
        },
    )
