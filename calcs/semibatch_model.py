"""The pseudo-first-order semi-batch model: accumulation, peak heat release, dosing time.

Part of :mod:`calcs.semibatch` (import from there); the equations, assumptions and
references are in that module's docstring (METHODS.md C1.7, §1.1, §2.2).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import optimize

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_fraction,
    require_positive,
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
