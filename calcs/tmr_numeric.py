"""Numeric nth-order adiabatic TMR and the B validity measure (METHODS.md §3.6).

Quadrature of the exact time-to-maximum-rate integral with an LSODA/Radau ODE
cross-check; the zero-order formula of :mod:`calcs.tmr` is its conservative limit.
"""

from __future__ import annotations

import math

from scipy import integrate, optimize

from calcs.constants import R
from calcs.errors import (
    CalcInputError,
    require_absolute_temperature,
    require_finite,
    require_non_negative,
    require_positive,
)
from calcs.result import Result

REFERENCES = ("townsend_tou1980", "methods_md")


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
        value TMR [s], or ``None`` with the flag ``no_maximum_after_t0`` and a warning when
        B ≤ n (the self-heating rate only falls: no runaway); parameters: temperature at
        maximum rate [K], X*, B = E·(ΔT_ad/φ)/(R·T₀²) (the rise in the cell); a warning
        when B < 10 (the zero-order formula is then strongly conservative).

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
    b = ea_r * rise / (t0 * t0)  # the rise in the cell, ΔT_ad/φ
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

    if method not in ("quad", "lsoda", "radau"):
        raise CalcInputError("method", method, "must be 'quad', 'lsoda' or 'radau'")
    no_max = x_star == 0.0
    if no_max:
        # dT/dt is largest at t = 0 and only falls: no runaway, not an instantaneous one
        tmr = None
        warnings.append(f"no maximum after t = 0: the self-heating rate only falls (B = {b:.3g} "
                        f"≤ n = {n:g}, B with ΔT_ad/φ); this model gives no runaway")
    elif method == "quad":
        tmr, _ = integrate.quad(inv_rate, 0.0, x_star, epsabs=0.0, epsrel=1e-11, limit=500)
    elif method in ("lsoda", "radau"):
        tmr = _tmr_ode(t0, rise, ea_r, a, n, x_star, "LSODA" if method == "lsoda" else "Radau")
    return Result(
        value=None if tmr is None else float(tmr), unit="s", method=f"tmr.nth_order.{method}",
        warnings=tuple(warnings),
        parameters={"temperature_at_max_rate_k": t0 + rise * x_star, "conversion_at_max_rate":
                    x_star, "b_parameter": b, "order": n, "phi": ph,
                    "no_maximum_after_t0": no_max},
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
