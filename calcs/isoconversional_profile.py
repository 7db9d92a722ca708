"""E(α) over conversion from a set of scans: Friedman and Ozawa–Flynn–Wall (METHODS.md §12.2).

================  ===========================================  ==============================
method            equation at each α                           where it is valid
================  ===========================================  ==============================
friedman          ln(dα/dt)_{α,i} = ln[A·f(α)] − E_α/(R·T_α,i)   any f(α); sensitive to noise
ozawa_flynn_wall  log₁₀β_i = const − 0.4567·E_α/(R·T_α,i)       Doyle approximation; E ± ~1 %
================  ===========================================  ==============================

Good practice after the ICTAC Kinetics Committee recommendations (Vyazovkin et al.
2011): at least three (better four or five) heating rates, α from 0.05 to 0.95 in
steps of 0.05, E_α reported with its standard error, and a varying E_α read as a
sign of multi-step kinetics.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcs.errors import CalcInputError
from calcs.isoconversional import activation_energy_variation, friedman, ozawa_flynn_wall

REFERENCES = ("friedman1964", "ozawa1965", "flynn_wall1966", "doyle1962", "ictac2011")
PROFILE_METHODS = {"friedman": friedman, "ozawa_flynn_wall": ozawa_flynn_wall}
DEFAULT_CONVERSIONS = tuple(round(0.05 * i, 2) for i in range(1, 20))
SPREAD_LIMIT = 0.2  # ICTAC 2011: E varying by more than 10-20 % of its mean means multi-step


@dataclass(frozen=True)
class EAlphaProfile:
    """E(α) [J/mol] with standard errors and the spread over 0.1 ≤ α ≤ 0.9."""

    method: str
    conversion: np.ndarray
    activation_energy_j_per_mol: np.ndarray
    stderr_j_per_mol: np.ndarray
    r_squared: np.ndarray
    mean_j_per_mol: float
    spread: float
    trend_j_per_mol: float  # slope of E against α over 0.1-0.9
    warnings: tuple[str, ...]


def isoconversional_points(curves, conversions=DEFAULT_CONVERSIONS):
    """Temperature and rate at fixed conversions in each scan (linear interpolation on α).

    Equation: T_α,i and (dα/dt)_α,i interpolated in α(t) of scan i (α made monotone).

    Parameters
    ----------
    curves : sequence
        :class:`calcs.dsc.ConversionCurve` objects, one per heating rate.
    conversions : sequence
        α levels [-].

    Returns
    -------
    tuple
        (β [K/s] per scan, T_α [K] and dα/dt [1/s] as arrays scans × levels).

    Validity: α increasing through each scan.

    Examples
    --------
    >>> from calcs.dsc import ConversionCurve
    >>> c = ConversionCurve(0.1, np.arange(3.0), np.array([400., 410, 420]),
    ...                     np.array([0., .5, 1]), np.ones(3))
    >>> float(isoconversional_points([c], [0.25])[1][0, 0])
    405.0

    References
    ----------
    Vyazovkin et al. 2011 (ICTAC), Thermochim. Acta 520, 1-19.
    """
    levels = np.asarray(conversions, dtype=float)
    betas, temps, rates = [], [], []
    for c in curves:
        a = np.maximum.accumulate(np.asarray(c.conversion, dtype=float))
        betas.append(c.heating_rate_k_per_s)
        temps.append(np.interp(levels, a, c.temperature_k))
        rates.append(np.interp(levels, a, c.rate_per_s))
    return np.array(betas), np.array(temps), np.array(rates)


def e_alpha(curves, method: str = "friedman", conversions=DEFAULT_CONVERSIONS) -> EAlphaProfile:
    """Isoconversional activation energy as a function of conversion, with its spread.

    Equation: the method's line at every α (see ``PROFILE_METHODS``); spread =
    (E_max − E_min)/mean over 0.1 ≤ α ≤ 0.9; trend = least-squares slope of E_α on α.

    Parameters
    ----------
    curves : sequence
        :class:`calcs.dsc.ConversionCurve` objects (≥ 3 heating rates).
    method : str
        ``"friedman"`` or ``"ozawa_flynn_wall"``.
    conversions : sequence
        α levels [-] (0.05 ... 0.95 by default).

    Returns
    -------
    EAlphaProfile
        E(α) [J/mol], σ, r², mean, spread, trend and warnings.

    Validity: the same mechanism at every heating rate; a spread above 20 % is
    flagged as multi-step (ICTAC 2011).

    Examples
    --------
    >>> from calcs.dsc import ConversionCurve
    >>> import math
    >>> t = np.array([417.968, 426.060, 437.237, 446.077, 455.273])  # METHODS.md C3.5, α=0.5
    >>> cs = [ConversionCurve(b / 60, np.arange(3.0), np.array([x - 1, x, x + 1]),
    ...       np.array([0.4, 0.5, 0.6]), np.full(3, 1e12 * math.exp(-120e3 / (8.314462618 * x))
    ...       * 0.5)) for b, x in zip([1, 2, 5, 10, 20], t)]
    >>> round(e_alpha(cs, "ozawa_flynn_wall", [0.5]).mean_j_per_mol / 1e3, 2)
    120.82

    References
    ----------
    Friedman 1964; Ozawa 1965; Flynn & Wall 1966; Vyazovkin et al. 2011 (ICTAC).
    """
    if method not in PROFILE_METHODS:
        raise CalcInputError("method", method, f"must be one of {sorted(PROFILE_METHODS)}")
    if len(curves) < 3:
        raise CalcInputError("curves", len(curves), "needs scans at 3 or more heating rates")
    betas, temps, rates = isoconversional_points(curves, conversions)
    levels = np.asarray(conversions, dtype=float)
    e, s, r2, warnings = [], [], [], []
    for j in range(len(levels)):
        if method == "friedman":
            fit = friedman(rates[:, j], temps[:, j])
        else:
            fit = ozawa_flynn_wall(betas, temps[:, j])
        e.append(fit.activation_energy_j_per_mol)
        s.append(fit.activation_energy_stderr_j_per_mol)
        r2.append(fit.r_squared)
        warnings.extend(w for w in fit.warnings if w not in warnings)
    e, s, r2 = np.array(e), np.array(s), np.array(r2)
    mid = (levels >= 0.1 - 1e-9) & (levels <= 0.9 + 1e-9)
    if mid.sum() < 2:
        mid = np.ones_like(levels, dtype=bool)
    mean = float(e[mid].mean())
    spread, trend = 0.0, 0.0
    if mid.sum() >= 2:
        spread, extra = activation_energy_variation(levels[mid], e[mid], SPREAD_LIMIT)
        warnings.extend(extra)
        trend = float(np.polyfit(levels[mid], e[mid], 1)[0])
    return EAlphaProfile(
        f"isoconversional.{method}", levels, e, s, r2, mean, spread, trend, tuple(warnings)
    )
