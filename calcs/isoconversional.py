"""Isoconversional activation energies at one conversion level (METHODS.md §3.5).

Ozawa-Flynn-Wall (integral, Doyle), Kissinger-Akahira-Sunose (integral) and
Friedman (differential), plus a check of how far E varies with conversion.
Equations [MEMORY] per METHODS.md; names and references [READ].
"""

from __future__ import annotations

import numpy as np

from calcs.constants import R
from calcs.errors import (
    require_finite_array,
    require_min_length,
    require_positive,
    require_same_length,
)
from calcs.kinetics import DOYLE_SLOPE, KineticFit, _fit, _inputs

REFERENCES = ("ozawa1965", "flynn_wall1966", "akahira_sunose1971", "friedman1964")


def ozawa_flynn_wall(heating_rates, temperatures_at_conversion_k,
                     heating_rate_unit: str = "K/s") -> KineticFit:
    """Isoconversional Ozawa-Flynn-Wall activation energy at one conversion level.

    Equation: log₁₀β = const − 0.4567·E/(R·T_α), so E = −(R/0.4567)·d(log₁₀β)/d(1/T_α).

    Parameters
    ----------
    heating_rates : array_like
        β [K/s] (or in ``heating_rate_unit``); at least 3.
    temperatures_at_conversion_k : array_like
        T_α at each β [K].
    heating_rate_unit : str
        "K/s", "K/min" or "K/h".

    Returns
    -------
    KineticFit
        E [J/mol] ± σ (A not determined).

    Validity: Doyle's approximation, about 20 < E/RT < 60.

    Examples
    --------
    >>> t = [417.968, 426.060, 437.237, 446.077, 455.273]
    >>> round(ozawa_flynn_wall([1, 2, 5, 10, 20], t, "K/min").activation_energy_j_per_mol / 1e3, 2)
    120.82

    References
    ----------
    Ozawa 1965; Flynn & Wall 1966; Doyle 1962.
    """
    beta, t, warnings = _inputs("temperatures_at_conversion_k", heating_rates,
                                temperatures_at_conversion_k, heating_rate_unit)
    m, b, sm, _, r2 = _fit(1.0 / t, np.log10(beta))
    return KineticFit("kinetics.ozawa_flynn_wall", -m * R / DOYLE_SLOPE, sm * R / DOYLE_SLOPE,
                      None, None, m, b, r2, 0, tuple(warnings), ("ozawa1965", "flynn_wall1966"))


def kissinger_akahira_sunose(heating_rates, temperatures_at_conversion_k,
                             heating_rate_unit: str = "K/s") -> KineticFit:
    """Isoconversional Kissinger-Akahira-Sunose activation energy at one conversion level.

    Equation: ln(β/T_α²) = const − E/(R·T_α).

    Parameters
    ----------
    heating_rates : array_like
        β [K/s] (or in ``heating_rate_unit``); at least 3.
    temperatures_at_conversion_k : array_like
        T_α [K].
    heating_rate_unit : str
        "K/s", "K/min" or "K/h".

    Returns
    -------
    KineticFit
        E [J/mol] ± σ (A not determined).

    Validity: integral method, p(x) ≈ e^{−x}/x².

    Examples
    --------
    >>> t = [417.968, 426.060, 437.237, 446.077, 455.273]
    >>> round(kissinger_akahira_sunose([1, 2, 5, 10, 20], t, "K/min")
    ...       .activation_energy_j_per_mol / 1e3, 2)  # METHODS.md C3.5
    119.8

    References
    ----------
    Akahira & Sunose 1971; Starink 2003.
    """
    beta, t, warnings = _inputs("temperatures_at_conversion_k", heating_rates,
                                temperatures_at_conversion_k, heating_rate_unit)
    m, b, sm, _, r2 = _fit(1.0 / t, np.log(beta / t**2))
    return KineticFit("kinetics.kas", -m * R, sm * R, None, None, m, b, r2, 0,
                      tuple(warnings), ("akahira_sunose1971",))


def friedman(conversion_rates_per_s, temperatures_at_conversion_k) -> KineticFit:
    """Friedman differential isoconversional activation energy at one conversion level.

    Equation: ln(dα/dt)_α = ln[A·f(α)] − E/(R·T_α).

    Parameters
    ----------
    conversion_rates_per_s : array_like
        dα/dt at the conversion level, one per run [1/s]; at least 3.
    temperatures_at_conversion_k : array_like
        T_α [K].

    Returns
    -------
    KineticFit
        E [J/mol] ± σ; the intercept is ln[A·f(α)] (A not separated).

    Validity: exact for any f(α); sensitive to noise and baseline.

    Examples
    --------
    >>> import math
    >>> t = [417.968, 426.060, 437.237, 446.077, 455.273]
    >>> r = [1e12 * math.exp(-120e3 / (8.314462618 * x)) * 0.5 for x in t]
    >>> round(friedman(r, t).activation_energy_j_per_mol / 1e3, 3)  # METHODS.md C3.5
    120.0

    References
    ----------
    Friedman 1964, J. Polym. Sci. C 6, 183.
    """
    rate, t, warnings = _inputs("temperatures_at_conversion_k", conversion_rates_per_s,
                                temperatures_at_conversion_k, "K/s")
    m, b, sm, _, r2 = _fit(1.0 / t, np.log(rate))
    return KineticFit("kinetics.friedman", -m * R, sm * R, None, None, m, b, r2, 0,
                      tuple(w for w in warnings if "heating rates" not in w),
                      ("friedman1964",))


def activation_energy_variation(conversions, activation_energies_j_per_mol,
                                threshold: float = 0.1) -> tuple[float, tuple[str, ...]]:
    """Spread of isoconversional E over conversion, with a warning above a threshold.

    Equation: spread = (E_max − E_min)/mean(E).

    Parameters
    ----------
    conversions : array_like
        Conversion levels α [-].
    activation_energies_j_per_mol : array_like
        E at each α [J/mol].
    threshold : float
        Relative spread that triggers the warning [-] (default 0.1; 0.1-0.2 are used).

    Returns
    -------
    tuple
        (spread [-], warnings).

    Validity: E from one isoconversional method across the α range.

    Examples
    --------
    >>> spread, w = activation_energy_variation([0.2, 0.5, 0.8], [100e3, 120e3, 140e3])
    >>> round(spread, 3), len(w)
    (0.333, 1)

    References
    ----------
    METHODS.md §3.5 (multi-step kinetics).
    """
    a = require_finite_array("conversions", conversions)
    e = require_finite_array("activation_energies_j_per_mol", activation_energies_j_per_mol)
    require_same_length(("conversions", "activation_energies_j_per_mol"), a, e)
    require_min_length("conversions", a, 2)
    spread = float((e.max() - e.min()) / e.mean())
    warnings = ()
    if spread > require_positive("threshold", threshold):
        warnings = (
            f"activation energy varies with conversion by {spread:.0%} (> {threshold:.0%}): "
            "multi-step kinetics suspected; a single (E, A) pair and zero-order TMR "
            "extrapolation are questionable",
        )
    return spread, warnings
