"""Decomposition kinetics from variable-heating-rate DSC data (METHODS.md §3.4-3.5).

* Kissinger (ASTM E2890): ln(β/T_p²) = ln(A·R/E) − E/(R·T_p); exact for first order.
* ASTM E698 (Flynn/Wall/Ozawa on peak temperatures): Doyle's first approximation
  E ≈ −2.19·R·d(log₁₀β)/d(1/T_p), then an iteration. E698 refines with a table of
  Doyle correction factors against E/RT [MEMORY per METHODS.md]; here the table
  is replaced by the Senum-Yang 4th-degree rational approximation of the
  temperature integral p(x): with ln β = C + ln p(E/RT), E = R·s/D where s is the
  fitted slope of ln β against 1/T and D the least-squares slope of ln p(x_i)
  against x_i = E/(R·T_i); D is re-evaluated with each new E until E changes by
  less than the tolerance (usually 3-5 iterations). A follows from the E698
  (Kissinger-type) expression Z = β·E·e^{E/RT}/(R·T²).
* Isoconversional OFW, KAS and Friedman at one conversion level.

Heating rates are in K/s by default; ``heating_rate_unit`` accepts "K/min" and
"K/h" (a K/min rate left unconverted would give A in 1/min, 60 times too large).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_finite_array,
    require_min_length,
    require_positive,
    require_same_length,
)

REFERENCES = ("kissinger1957", "astm_e2890", "astm_e698", "ozawa1965", "flynn_wall1966",
              "doyle1962", "senum_yang1977", "akahira_sunose1971", "friedman1964")

_RATE_UNITS = {"K/s": 1.0, "K/min": 1.0 / 60.0, "K/h": 1.0 / 3600.0}
DOYLE_SLOPE = 0.4567  # log10 p(x) ≈ −2.315 − 0.4567·x (Doyle 1962)


@dataclass(frozen=True)
class KineticFit:
    """E [J/mol] and A [1/s] of a fit, with standard errors and the regression figures."""

    method: str
    activation_energy_j_per_mol: float
    activation_energy_stderr_j_per_mol: float
    pre_exponential_per_s: float | None
    ln_pre_exponential_stderr: float | None
    slope: float
    intercept: float
    r_squared: float
    iterations: int
    warnings: tuple[str, ...]
    references: tuple[str, ...]


def _inputs(name_x: str, rates, temps, unit: str) -> tuple[np.ndarray, np.ndarray, list[str]]:
    if unit not in _RATE_UNITS:
        raise CalcInputError("heating_rate_unit", unit, f"must be one of {sorted(_RATE_UNITS)}")
    beta = require_finite_array("heating_rates", rates)
    t = require_finite_array(name_x, temps)
    require_min_length("heating_rates", beta, 3)
    require_same_length(("heating_rates", name_x), beta, t)
    if beta.min() <= 0.0:
        raise CalcInputError("heating_rates", beta, "must be greater than 0")
    if t.min() <= 0.0:
        raise CalcInputError(name_x, t, "must be absolute temperatures above 0 K")
    warnings = []
    if len(beta) < 4:
        warnings.append(f"only {len(beta)} heating rates: at least 4 are advisable")
    if t.min() < 300.0 or t.max() > 900.0:
        warnings.append("temperatures outside the 300-900 K range stated by ASTM E2890")
    return beta * _RATE_UNITS[unit], t, warnings


def _fit(x: np.ndarray, y: np.ndarray):
    res = stats.linregress(x, y)
    return (float(res.slope), float(res.intercept), float(res.stderr),
            float(res.intercept_stderr), float(res.rvalue) ** 2)


def kissinger(heating_rates, peak_temperatures_k, heating_rate_unit: str = "K/s") -> KineticFit:
    """Kissinger fit of DSC peak temperatures at several heating rates (ASTM E2890).

    Equation: ln(β/T_p²) = ln(A·R/E) − E/(R·T_p); E = −R·slope, A = (E/R)·e^{intercept};
    σ_E = R·σ_slope, σ_lnA² = (σ_m/m)² + σ_b² + 2·cov(m, b)/m with cov = −x̄·σ_m².

    Parameters
    ----------
    heating_rates : array_like
        Heating rates β [K/s] (or in ``heating_rate_unit``); at least 3.
    peak_temperatures_k : array_like
        Peak temperatures T_p [K].
    heating_rate_unit : str
        "K/s" (default), "K/min" or "K/h".

    Returns
    -------
    KineticFit
        E [J/mol] ± σ, A [1/s] with σ of ln A, slope, intercept, r².

    Validity: single step (or one dominant step), same mechanism at every β,
    300-900 K, nth order 0.5 < n < 4 (ASTM E2890 scope); at least 4 rates advisable.

    Examples
    --------
    >>> fit = kissinger([1, 2, 5, 10, 20], [421.5638, 429.7805, 441.1322, 450.1136, 459.4571],
    ...                 heating_rate_unit="K/min")  # METHODS.md C3.4
    >>> round(fit.activation_energy_j_per_mol / 1000, 2)
    120.0

    References
    ----------
    Kissinger 1957, Anal. Chem. 29, 1702-1706; ASTM E2890.
    """
    beta, t, warnings = _inputs("peak_temperatures_k", heating_rates, peak_temperatures_k,
                                heating_rate_unit)
    x = 1.0 / t
    m, b, sm, sb, r2 = _fit(x, np.log(beta / t**2))
    e = -m * R
    if e <= 0.0:
        raise CalcInputError("peak_temperatures_k", t, "must rise with the heating rate")
    cov = -x.mean() * sm**2
    var_ln_a = (sm / m) ** 2 + sb**2 + 2.0 * cov / m
    return KineticFit(
        method="kinetics.kissinger", activation_energy_j_per_mol=e,
        activation_energy_stderr_j_per_mol=sm * R, pre_exponential_per_s=(e / R) * math.exp(b),
        ln_pre_exponential_stderr=math.sqrt(max(var_ln_a, 0.0)), slope=m, intercept=b,
        r_squared=r2, iterations=0, warnings=tuple(warnings),
        references=("kissinger1957", "astm_e2890"),
    )


def senum_yang_ln_p(x):
    """Natural log of the temperature integral p(x) by the Senum-Yang rational approximation.

    Equation: p(x) = (e^{−x}/x)·(x³ + 18x² + 88x + 96)/(x⁴ + 20x³ + 120x² + 240x + 120).

    Parameters
    ----------
    x : array_like
        x = E/(R·T) [-].

    Returns
    -------
    numpy.ndarray
        ln p(x) [-].

    Validity: relative error well below 1e-5 for x > 20 (from memory).

    Examples
    --------
    >>> round(float(senum_yang_ln_p(30.0)), 4)
    -36.8638

    References
    ----------
    Senum & Yang 1977, J. Therm. Anal. 11, 445 (from memory).
    """
    x = np.asarray(x, dtype=float)
    num = ((x + 18.0) * x + 88.0) * x + 96.0
    den = (((x + 20.0) * x + 120.0) * x + 240.0) * x + 120.0
    return -x - np.log(x) + np.log(num / den)


def astm_e698(
    heating_rates, peak_temperatures_k, heating_rate_unit: str = "K/s",
    tolerance: float = 1e-10, max_iterations: int = 50,
) -> KineticFit:
    """Flynn/Wall/Ozawa treatment of peak temperatures (ASTM E698) with its iteration.

    Equations: E₀ = −2.19·R·d(log₁₀β)/d(1/T_p) (Doyle); then E_{k+1} = R·s/D(E_k)
    with s = d(ln β)/d(1/T_p) and D the least-squares slope of ln p(x_i) on
    x_i = E_k/(R·T_i) (Senum-Yang p, in place of E698's table [MEMORY]);
    A = geometric mean over the rates of Z = β·E·e^{E/(R·T)}/(R·T²).

    Parameters
    ----------
    heating_rates : array_like
        β [K/s] (or in ``heating_rate_unit``); at least 3.
    peak_temperatures_k : array_like
        T_p [K].
    heating_rate_unit : str
        "K/s" (default), "K/min" or "K/h".
    tolerance : float
        Relative change of E that ends the iteration [-].
    max_iterations : int
        Iteration limit.

    Returns
    -------
    KineticFit
        E [J/mol] ± σ (from the slope), A [1/s], the number of iterations.

    Validity: as :func:`kissinger`; the integral method assumes the same
    conversion at the peak for every β.

    Examples
    --------
    >>> fit = astm_e698([1, 2, 5, 10, 20], [421.5638, 429.7805, 441.1322, 450.1136, 459.4571],
    ...                 heating_rate_unit="K/min")
    >>> round(fit.activation_energy_j_per_mol / 1000, 1)  # peaks of METHODS.md C3.4
    120.2

    References
    ----------
    ASTM E698; Ozawa 1965; Flynn & Wall 1966; Doyle 1962; Senum & Yang 1977.
    """
    beta, t, warnings = _inputs("peak_temperatures_k", heating_rates, peak_temperatures_k,
                                heating_rate_unit)
    tol = require_positive("tolerance", tolerance)
    x_inv = 1.0 / t
    s, _, ss, _, r2 = _fit(x_inv, np.log(beta))
    e = -2.19 * R * s / math.log(10.0)
    iterations = 0
    d = -DOYLE_SLOPE * math.log(10.0)
    for iterations in range(1, max_iterations + 1):  # noqa: B007
        xi = e * x_inv / R
        d = float(stats.linregress(xi, senum_yang_ln_p(xi)).slope)
        e_new = R * s / d
        done = abs(e_new - e) <= tol * abs(e)
        e = e_new
        if done:
            break
    else:
        warnings.append(f"E698 iteration not converged after {max_iterations} steps")
    z = beta * e * np.exp(e / (R * t)) / (R * t**2)
    return KineticFit(
        method="kinetics.astm_e698", activation_energy_j_per_mol=e,
        activation_energy_stderr_j_per_mol=abs(R * ss / d), pre_exponential_per_s=float(
            np.exp(np.log(z).mean())), ln_pre_exponential_stderr=None, slope=s, intercept=0.0,
        r_squared=r2, iterations=iterations, warnings=tuple(warnings),
        references=("astm_e698", "ozawa1965", "flynn_wall1966", "doyle1962", "senum_yang1977"),
    )


def e698_pre_exponential(heating_rate_k_per_s: float, peak_temperature_k: float,
                         activation_energy_j_per_mol: float) -> float:
    """Pre-exponential factor from one heating rate and its peak (E698 expression).

    Equation: Z = β·E·e^{E/(R·T_p)}/(R·T_p²) (exact for first order at the peak).

    Parameters
    ----------
    heating_rate_k_per_s : float
        β [K/s].
    peak_temperature_k : float
        T_p [K].
    activation_energy_j_per_mol : float
        E [J/mol].

    Returns
    -------
    float
        Z [1/s].

    Validity: first order; approximately nth order.

    Examples
    --------
    >>> f"{e698_pre_exponential(5 / 60, 441.1322, 120e3):.3e}"  # METHODS.md C3.4
    '1.000e+12'

    References
    ----------
    ASTM E698; METHODS.md §3.4.
    """
    b = require_positive("heating_rate_k_per_s", heating_rate_k_per_s)
    t = require_positive("peak_temperature_k", peak_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return b * e * math.exp(e / (R * t)) / (R * t * t)
