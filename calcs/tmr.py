"""Time to maximum rate under adiabatic conditions (TMRad) and TD24 (METHODS.md §3.1-3.2, §3.6).

Zero-order Townsend-Tou TMRad, the Arrhenius shift of a specific heat-release
rate, TD24/TD8/TD-for-any-time by Brent's method on the monotone log form, a
vectorised TD for arrays of parameter sets (closed form through the Lambert W
function, evaluated by a few vectorised Newton steps and cross-checked against
``scipy.special.lambertw`` and Brent in the tests), and the numeric nth-order
TMR by quadrature with an LSODA/Radau cross-check.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import integrate, optimize, special

from calcs.constants import DAY, HOUR, R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite,
    require_non_negative,
    require_positive,
)
from calcs.result import Result

REFERENCES = ("townsend_tou1980", "stoessel2008")
T_LOW_K, T_HIGH_K = 150.0, 1500.0


def heat_release_rate_at(
    temperature_k: float, activation_energy_j_per_mol: float, reference_temperature_k: float,
    heat_release_rate_at_reference_w_per_kg: float,
) -> float:
    """Specific heat-release rate at T from a reference rate (zero-order Arrhenius shift).

    Equation: q(T) = q_ref·exp[−(E_a/R)·(1/T − 1/T_ref)].

    Parameters
    ----------
    temperature_k : float
        Temperature T [K].
    activation_energy_j_per_mol : float
        Activation energy E_a [J/mol].
    reference_temperature_k : float
        Reference temperature T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref at T_ref [W/kg].

    Returns
    -------
    float
        q(T) [W/kg].

    Validity: zero order, a single Arrhenius step.

    Examples
    --------
    >>> round(heat_release_rate_at(377.599, 100e3, 453.15, 50.0), 4)  # METHODS.md C3.2
    0.247

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11.
    """
    t = require_absolute_temperature("temperature_k", temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    tr = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    q = require_positive(
        "heat_release_rate_at_reference_w_per_kg", heat_release_rate_at_reference_w_per_kg
    )
    return q * math.exp(-(e / R) * (1.0 / t - 1.0 / tr))


def tmr_zero_order(
    specific_heat_capacity_j_per_kg_k: float, temperature_k: float,
    heat_release_rate_w_per_kg: float, activation_energy_j_per_mol: float,
) -> float:
    """Zero-order adiabatic time to maximum rate (Townsend & Tou 1980).

    Equation: TMR_ad = c_p·R·T₀² / (q₀·E_a).

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p of the reacting mass [J/(kg K)].
    temperature_k : float
        Initial temperature T₀ [K].
    heat_release_rate_w_per_kg : float
        Specific heat-release rate at T₀, q₀ [W/kg].
    activation_energy_j_per_mol : float
        E_a [J/mol].

    Returns
    -------
    float
        TMR_ad [s].

    Validity: adiabatic, zero order (conservative), B = E·ΔT_ad/(R·T₀²) well
    above 10; not for autocatalytic decompositions.

    Examples
    --------
    >>> round(tmr_zero_order(1800.0, 393.15, 5.0, 100e3), 1)  # METHODS.md C3.1
    4626.5

    References
    ----------
    Townsend & Tou 1980, Thermochim. Acta 37, 1-30.
    """
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    t = require_absolute_temperature("temperature_k", temperature_k)
    q = require_positive("heat_release_rate_w_per_kg", heat_release_rate_w_per_kg)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return cp * R * t * t / (q * e)


def tmr_zero_order_at(
    temperature_k: float, specific_heat_capacity_j_per_kg_k: float,
    activation_energy_j_per_mol: float, reference_temperature_k: float,
    heat_release_rate_at_reference_w_per_kg: float,
) -> float:
    """Zero-order TMR_ad at any temperature from a reference heat-release rate.

    Equation: TMR_ad(T) = c_p·R·T² / (E_a·q_ref·exp[−(E_a/R)(1/T − 1/T_ref)]).

    Parameters
    ----------
    temperature_k : float
        Start temperature T [K], e.g. the MTSR.
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float
        TMR_ad [s].

    Validity: as :func:`tmr_zero_order`.

    Examples
    --------
    >>> round(tmr_zero_order_at(377.599, 1800.0, 100e3, 453.15, 50.0) / 3600, 2)  # C3.2
    24.0

    References
    ----------
    Townsend & Tou 1980.
    """
    q = heat_release_rate_at(
        temperature_k, activation_energy_j_per_mol, reference_temperature_k,
        heat_release_rate_at_reference_w_per_kg,
    )
    return tmr_zero_order(specific_heat_capacity_j_per_kg_k, temperature_k, q,
                          activation_energy_j_per_mol)


def tmr_shift_zero_order(
    tmr_s: float, from_temperature_k: float, to_temperature_k: float,
    activation_energy_j_per_mol: float,
) -> float:
    """Move a zero-order TMR from one start temperature to another.

    Equation: TMR(T₂) = TMR(T₁)·(T₂/T₁)²·exp[(E_a/R)(1/T₂ − 1/T₁)].

    Parameters
    ----------
    tmr_s : float
        TMR at T₁ [s].
    from_temperature_k : float
        T₁ [K].
    to_temperature_k : float
        T₂ [K].
    activation_energy_j_per_mol : float
        E_a [J/mol].

    Returns
    -------
    float
        TMR at T₂ [s].

    Validity: zero order, same E_a at both temperatures.

    Examples
    --------
    >>> round(tmr_shift_zero_order(61.98 * 60, 423.15, 413.538, 100e3) / 60, 1)  # C3.7
    114.6

    References
    ----------
    Townsend & Tou 1980.
    """
    tmr = require_positive("tmr_s", tmr_s)
    t1 = require_absolute_temperature("from_temperature_k", from_temperature_k)
    t2 = require_absolute_temperature("to_temperature_k", to_temperature_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    return tmr * (t2 / t1) ** 2 * math.exp((e / R) * (1.0 / t2 - 1.0 / t1))


def td_for_time(
    time_s: float, specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> float | None:
    """Temperature at which the zero-order TMR_ad equals a given time (TD24, TD8 ...).

    Equation: root of g(T) = ln[c_p·R·T²/(E_a·q_ref)] + (E_a/R)(1/T − 1/T_ref) − ln t = 0
    by Brent's method on [150 K, 1500 K].

    Parameters
    ----------
    time_s : float
        Target TMR_ad t [s] (86 400 s for TD24).
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float or None
        TD [K], or ``None`` when g has no sign change on [150 K, 1500 K].

    Validity: zero order; the log form is monotone for E_a > 2·R·1500 K ≈ 25 kJ/mol.

    Examples
    --------
    >>> round(td_for_time(86400.0, 1800.0, 100e3, 453.15, 50.0), 3)  # METHODS.md C3.2
    377.599

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11 (TD24).
    """
    t = require_positive("time_s", time_s)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    tr = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    q = require_positive(
        "heat_release_rate_at_reference_w_per_kg", heat_release_rate_at_reference_w_per_kg
    )
    a = e / R
    const = math.log(cp * R / (e * q)) - a / tr - math.log(t)

    def g(temp: float) -> float:
        return const + 2.0 * math.log(temp) + a / temp

    g_lo, g_hi = g(T_LOW_K), g(T_HIGH_K)
    if g_lo * g_hi > 0.0:
        return None
    return optimize.brentq(g, T_LOW_K, T_HIGH_K, xtol=1e-9, rtol=1e-13)


def td24(
    specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> float | None:
    """TD24: the start temperature whose zero-order TMR_ad is 24 h.

    Equation: g(T) = 0 of :func:`td_for_time` with t = 86 400 s.

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float or None
        TD24 [K] (``None`` outside [150 K, 1500 K]).

    Validity: as :func:`td_for_time`.

    Examples
    --------
    >>> round(td24(1800.0, 100e3, 453.15, 50.0) - 273.15, 3)  # METHODS.md C3.2
    104.449

    References
    ----------
    Townsend & Tou 1980; Stoessel 2008 ch. 11.
    """
    return td_for_time(DAY, specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol,
                       reference_temperature_k, heat_release_rate_at_reference_w_per_kg)


def td8(
    specific_heat_capacity_j_per_kg_k: float, activation_energy_j_per_mol: float,
    reference_temperature_k: float, heat_release_rate_at_reference_w_per_kg: float,
) -> float | None:
    """TD8: the start temperature whose zero-order TMR_ad is 8 h.

    Equation: g(T) = 0 of :func:`td_for_time` with t = 28 800 s.

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    reference_temperature_k : float
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : float
        q_ref [W/kg].

    Returns
    -------
    float or None
        TD8 [K].

    Validity: as :func:`td_for_time`.

    Examples
    --------
    >>> round(td8(1800.0, 100e3, 453.15, 50.0) - 273.15, 3)  # METHODS.md C3.2
    118.895

    References
    ----------
    Townsend & Tou 1980.
    """
    return td_for_time(8 * HOUR, specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol,
                       reference_temperature_k, heat_release_rate_at_reference_w_per_kg)


def td_for_time_vectorised(
    time_s, specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol,
    reference_temperature_k, heat_release_rate_at_reference_w_per_kg, method: str = "newton",
) -> np.ndarray:
    """TD for arrays of parameter sets, in closed form through the Lambert W function.

    Equation: with a = E_a/R and u = a/T the log form becomes u − 2·ln u = C,
    C = ln t + a/T_ref − ln(c_p·a/q_ref); its root with u > 2 (T < E_a/2R) is
    u = −2·W₋₁(−½·e^{−C/2}), so T = a/u. ``method="newton"`` evaluates it by
    vectorised Newton steps from the asymptotic start u₀ = C + 2·ln(C + 2·ln C)
    (quadratic convergence: 3 steps reach machine precision for C ≥ 4);
    ``method="lambertw"`` calls ``scipy.special.lambertw(k=-1)`` (also used for
    the few entries with C < 4); no root exists when C < 2 − 2·ln 2.

    Parameters
    ----------
    time_s : array_like
        Target TMR_ad [s] (scalar or array, broadcast).
    specific_heat_capacity_j_per_kg_k : array_like
        c_p [J/(kg K)].
    activation_energy_j_per_mol : array_like
        E_a [J/mol].
    reference_temperature_k : array_like
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : array_like
        q_ref [W/kg].
    method : str
        ``"newton"`` (default, fast) or ``"lambertw"``.

    Returns
    -------
    numpy.ndarray
        TD [K]; NaN where no root lies in [150 K, 1500 K] (as :func:`td_for_time`).

    Validity: zero order; all inputs finite and positive.

    Examples
    --------
    >>> np.round(td_for_time_vectorised(86400.0, [1800.0, 1800.0], 100e3, 453.15,
    ...                                 [50.0, 5.0]), 3).tolist()
    [377.599, 409.252]

    References
    ----------
    Townsend & Tou 1980; R.M. Corless et al., 'On the Lambert W function',
    Adv. Comput. Math. 5 (1996) 329-359 (from memory).
    """
    arrays = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (
            time_s, specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol,
            reference_temperature_k, heat_release_rate_at_reference_w_per_kg))
    )
    t, cp, e, tref, q = arrays
    names = ("time_s", "specific_heat_capacity_j_per_kg_k", "activation_energy_j_per_mol",
             "reference_temperature_k", "heat_release_rate_at_reference_w_per_kg")
    for name, arr in zip(names, arrays, strict=True):
        # min/max reductions catch NaN, inf and non-positive values without temporaries
        if arr.size and not (arr.min() > 0.0 and arr.max() < math.inf):
            raise CalcInputError(name, arr, "must contain only finite numbers greater than 0")
    a = e / R
    c = t * q
    c /= cp
    c /= a
    np.log(c, out=c)
    c += a / tref
    if method not in ("newton", "lambertw"):
        raise CalcInputError("method", method, "must be 'newton' or 'lambertw'")
    # Newton converges to machine precision in 3 steps for C >= 4; below that
    # (T near E/2R, at the edge of the physical range) use Lambert W directly
    slow = (c < 4.0) if method == "newton" else np.ones(c.shape, dtype=bool)
    u = np.empty_like(c)
    if not slow.all():
        cm2 = c - 2.0
        u0 = np.log(c, where=~slow, out=np.full_like(c, 1.0))
        u0 *= 2.0
        u0 += c
        np.log(u0, out=u0)
        u0 *= 2.0
        u0 += c
        lnu = np.empty_like(c)
        for _ in range(3):
            # u <- u - f/f' with f = u - 2 ln u - C, written as u(2 ln u + C - 2)/(u - 2)
            np.log(u0, out=lnu)
            lnu *= 2.0
            lnu += cm2
            lnu *= u0
            u0 -= 2.0
            np.divide(lnu, u0, out=u0)
        u[...] = u0
    if slow.any():
        cs = c[slow]
        ok = cs > 2.0 - 2.0 * math.log(2.0)
        w = special.lambertw(-0.5 * np.exp(-0.5 * np.where(ok, cs, 3.0)), k=-1).real
        u[slow] = np.where(ok, -2.0 * w, np.nan)
    temp = np.divide(a, u, out=u)
    temp[~((temp >= T_LOW_K) & (temp <= T_HIGH_K))] = np.nan
    return temp


def td24_vectorised(
    specific_heat_capacity_j_per_kg_k, activation_energy_j_per_mol, reference_temperature_k,
    heat_release_rate_at_reference_w_per_kg,
) -> np.ndarray:
    """TD24 for arrays of parameter sets (vectorised closed form).

    Equation: as :func:`td_for_time_vectorised` with t = 86 400 s.

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : array_like
        c_p [J/(kg K)].
    activation_energy_j_per_mol : array_like
        E_a [J/mol].
    reference_temperature_k : array_like
        T_ref [K].
    heat_release_rate_at_reference_w_per_kg : array_like
        q_ref [W/kg].

    Returns
    -------
    numpy.ndarray
        TD24 [K] (NaN outside [150 K, 1500 K]).

    Validity: zero order.

    Examples
    --------
    >>> np.round(td24_vectorised([1000.0, 1800.0], 50e3, 423.15, 20.0) - 273.15, 2).tolist()
    [46.11, 57.69]

    References
    ----------
    Townsend & Tou 1980.
    """
    return td_for_time_vectorised(DAY, specific_heat_capacity_j_per_kg_k,
                                  activation_energy_j_per_mol, reference_temperature_k,
                                  heat_release_rate_at_reference_w_per_kg)


def b_parameter(
    activation_energy_j_per_mol: float, adiabatic_rise_k: float, temperature_k: float
) -> float:
    """Dimensionless adiabatic temperature rise B, the validity measure of zero-order TMR.

    Equation: B = E_a·ΔT_ad / (R·T₀²).

    Parameters
    ----------
    activation_energy_j_per_mol : float
        E_a [J/mol].
    adiabatic_rise_k : float
        ΔT_ad of the decomposition [K].
    temperature_k : float
        Start temperature T₀ [K].

    Returns
    -------
    float
        B [-]; the zero-order formula needs B well above 10.

    Validity: any positive inputs.

    Examples
    --------
    >>> round(b_parameter(100e3, 200.0, 353.15), 2)  # METHODS.md C3.6
    19.29

    References
    ----------
    Townsend & Tou 1980; METHODS.md §3.1.
    """
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    dt = require_non_negative("adiabatic_rise_k", adiabatic_rise_k)
    t = require_absolute_temperature("temperature_k", temperature_k)
    return e * dt / (R * t * t)


def tmr_nth_order(
    temperature_k: float, adiabatic_rise_k: float, activation_energy_j_per_mol: float,
    pre_exponential_per_s: float, order: float, phi: float = 1.0, method: str = "quad",
) -> Result:
    """Numeric adiabatic TMR of an nth-order reaction, by quadrature or by an ODE solver.

    Equations: dX/dt = A·e^{−E/(RT)}·(1 − X)ⁿ, T = T₀ + (ΔT_ad/φ)·X. The maximum
    of dT/dt lies at X* with E·(ΔT_ad/φ)·(1 − X*)/(R·T*²) = n (X* = 1 for n = 0),
    and TMR = ∫₀^{X*} dX / [A·e^{−E/(R·T(X))}·(1 − X)ⁿ]. ``method="quad"`` uses
    ``scipy.integrate.quad``; ``"lsoda"`` and ``"radau"`` integrate the ODE with
    ``solve_ivp`` (rtol 1e-10) up to the event X = X*.

    Parameters
    ----------
    temperature_k : float
        Start temperature T₀ [K].
    adiabatic_rise_k : float
        ΔT_ad of the reaction at full conversion [K].
    activation_energy_j_per_mol : float
        E_a [J/mol].
    pre_exponential_per_s : float
        A [1/s].
    order : float
        Reaction order n [-] (≥ 0).
    phi : float
        Thermal inertia φ [-] (≥ 1; 1 for the plant).
    method : str
        ``"quad"`` (default), ``"lsoda"`` or ``"radau"``.

    Returns
    -------
    Result
        value TMR [s]; parameters: temperature at maximum rate [K], X*, B; a
        warning when B < 10 (the zero-order formula is then strongly conservative).

    Validity: single-step nth-order kinetics; not autocatalytic.

    Examples
    --------
    >>> round(tmr_nth_order(353.15, 200.0, 100e3, 1e9, 1.0).value, 0)  # METHODS.md C3.6
    36451.0

    References
    ----------
    Townsend & Tou 1980; METHODS.md §3.6 [DERIVED].
    """
    t0 = require_absolute_temperature("temperature_k", temperature_k)
    dt_ad = require_positive("adiabatic_rise_k", adiabatic_rise_k)
    e = require_positive("activation_energy_j_per_mol", activation_energy_j_per_mol)
    a = require_positive("pre_exponential_per_s", pre_exponential_per_s)
    n = require_non_negative("order", order)
    ph = require_finite("phi", phi)
    if ph < 1.0:
        raise CalcInputError("phi", phi, "must be at least 1")
    rise = dt_ad / ph
    ea_r = e / R
    b = ea_r * dt_ad / (t0 * t0)
    warnings = []
    if b < 10.0:
        warnings.append(f"B = {b:.3g} < 10: the zero-order TMR formula is strongly conservative")

    if n == 0.0:
        x_star = 1.0
    else:
        def h(x: float) -> float:
            temp = t0 + rise * x
            return ea_r * rise * (1.0 - x) / (temp * temp) - n
        x_star = 0.0 if h(0.0) <= 0.0 else optimize.brentq(h, 0.0, 1.0, xtol=1e-14)

    def inv_rate(x: float) -> float:
        return 1.0 / (a * math.exp(-ea_r / (t0 + rise * x)) * (1.0 - x) ** n)

    if x_star == 0.0:
        tmr = 0.0
    elif method == "quad":
        tmr, _ = integrate.quad(inv_rate, 0.0, x_star, epsabs=0.0, epsrel=1e-11, limit=500)
    elif method in ("lsoda", "radau"):
        tmr = _tmr_ode(t0, rise, ea_r, a, n, x_star, "LSODA" if method == "lsoda" else "Radau")
    else:
        raise CalcInputError("method", method, "must be 'quad', 'lsoda' or 'radau'")
    return Result(
        value=float(tmr), unit="s", method=f"tmr.nth_order.{method}", warnings=tuple(warnings),
        parameters={"temperature_at_max_rate_k": t0 + rise * x_star, "conversion_at_max_rate":
                    x_star, "b_parameter": b, "order": n, "phi": ph},
        references=("townsend_tou1980", "methods_md"),
    )


def _tmr_ode(t0, rise, ea_r, a, n, x_star, solver) -> float:
    def rhs(_t, y):
        x = min(y[0], 1.0)
        return [a * math.exp(-ea_r / (t0 + rise * x)) * (1.0 - x) ** n]

    def hit(_t, y):
        return y[0] - x_star * (1.0 - 1e-12)
    hit.terminal = True
    # the whole runaway takes less than ~100 initial reaction times
    t_end = 100.0 / (a * math.exp(-ea_r / t0)) + 1.0
    sol = integrate.solve_ivp(rhs, (0.0, t_end), [0.0], method=solver, events=hit,
                              rtol=1e-10, atol=1e-14)
    if not sol.t_events[0].size:
        raise CalcInputError("temperature_k", t0, "ODE integration did not reach the maximum rate")
    return float(sol.t_events[0][0])
