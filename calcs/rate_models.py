"""Single-step decomposition rate laws dα/dt = k(T)·f(α), side by side (METHODS.md §12.3).

=============  =================================  ==========================  ======================
model          f(α)                               parameters                  recognises
=============  =================================  ==========================  ======================
nth_order      (1 − α)ⁿ                           E, ln k_ref, n              deceleratory decay
autocatalytic  (1 − α)ⁿ·(α + z)                   E, ln k_ref, n, log₁₀ z     induction, acceleration
=============  =================================  ==========================  ======================

k(T) = k_ref·exp[−(E/R)(1/T − 1/T_ref)], A = k_ref·exp(E/(R·T_ref)): written at a
reference temperature inside the data to decorrelate E and A (METHODS.md §12.3).
The autocatalytic form is the extended Prout–Tompkins law, a member of the
Šesták–Berggren family α^m(1 − α)ⁿ[−ln(1 − α)]^p (z > 0 lets fresh material start).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import solve_ivp

from calcs.constants import R
from calcs.errors import CalcInputError

REFERENCES = ("prout_tompkins1944", "sestak_berggren1971", "malek1992", "ictac2011")

#: name -> (fitted parameter names, their units, what f(α) is)
RATE_MODELS = {
    "nth_order": (
        ("activation_energy_j_per_mol", "ln_k_ref", "order"),
        ("J/mol", "ln(1/s)", "-"),
        "(1 − α)^n",
    ),
    "autocatalytic": (
        ("activation_energy_j_per_mol", "ln_k_ref", "order", "log10_z"),
        ("J/mol", "ln(1/s)", "-", "-"),
        "(1 − α)^n·(α + z)",
    ),
}


def _check(model: str) -> None:
    if model not in RATE_MODELS:
        raise CalcInputError("model", model, f"must be one of {sorted(RATE_MODELS)}")


def conversion_function(model: str, conversion, parameters) -> np.ndarray:
    """f(α) of a rate model.

    Equation: nth_order (1 − α)ⁿ; autocatalytic (1 − α)ⁿ·(α + z), z = 10^{log₁₀ z}.

    Parameters
    ----------
    model : str
        A key of ``RATE_MODELS``.
    conversion : array_like
        α [-], in [0, 1].
    parameters : sequence
        The model's fitted parameters in the order of ``RATE_MODELS``.

    Returns
    -------
    numpy.ndarray
        f(α) [-].

    Validity: single-step kinetics.

    Examples
    --------
    >>> float(conversion_function("autocatalytic", 0.5, (1e5, 0.0, 1.0, -2.0)))
    0.255

    References
    ----------
    Prout & Tompkins 1944; Šesták & Berggren 1971.
    """
    _check(model)
    a = np.clip(np.asarray(conversion, dtype=float), 0.0, 1.0)
    n = parameters[2]
    f = (1.0 - a) ** n
    if model == "autocatalytic":
        f = f * (a + 10.0 ** parameters[3])
    return f


def conversion_function_slope(model: str, conversion, parameters) -> np.ndarray:
    """df/dα of a rate model (for the maximum-rate condition).

    Equation: nth_order −n(1 − α)^{n−1}; autocatalytic (1 − α)ⁿ − n(1 − α)^{n−1}(α + z).

    Parameters
    ----------
    model : str
        A key of ``RATE_MODELS``.
    conversion : array_like
        α [-], in [0, 1).
    parameters : sequence
        The model's parameters.

    Returns
    -------
    numpy.ndarray
        df/dα [-].

    Validity: α < 1.

    Examples
    --------
    >>> float(conversion_function_slope("nth_order", 0.5, (1e5, 0.0, 2.0)))
    -1.0

    References
    ----------
    Derived from :func:`conversion_function`.
    """
    _check(model)
    a = np.clip(np.asarray(conversion, dtype=float), 0.0, 1.0 - 1e-15)
    n = parameters[2]
    d = -n * (1.0 - a) ** (n - 1.0) if n else np.zeros_like(a)
    if model == "autocatalytic":
        d = (1.0 - a) ** n + d * (a + 10.0 ** parameters[3])
    return d


def pre_exponential(parameters, reference_temperature_k: float) -> float:
    """A [1/s] from E and ln k_ref at T_ref.

    Equation: A = exp(ln k_ref + E/(R·T_ref)).

    Parameters
    ----------
    parameters : sequence
        (E [J/mol], ln k_ref, ...).
    reference_temperature_k : float
        T_ref [K].

    Returns
    -------
    float
        A [1/s].

    Validity: any.

    Examples
    --------
    >>> f"{pre_exponential((120e3, math.log(1e12) - 120e3 / (R * 440.0)), 440.0):.3e}"
    '1.000e+12'

    References
    ----------
    METHODS.md §12.3.
    """
    return math.exp(parameters[1] + parameters[0] / (R * reference_temperature_k))


def rate(
    model: str, temperature_k, conversion, parameters, reference_temperature_k: float
) -> np.ndarray:
    """Conversion rate dα/dt of a rate model.

    Equation: dα/dt = k_ref·exp[−(E/R)(1/T − 1/T_ref)]·f(α).

    Parameters
    ----------
    model : str
        A key of ``RATE_MODELS``.
    temperature_k : array_like
        T [K].
    conversion : array_like
        α [-].
    parameters : sequence
        The model's parameters.
    reference_temperature_k : float
        T_ref [K].

    Returns
    -------
    numpy.ndarray
        dα/dt [1/s].

    Validity: single step.

    Examples
    --------
    >>> round(float(rate("nth_order", 400.0, 0.0, (1e5, math.log(1e-3), 1.0), 400.0)), 12)
    0.001

    References
    ----------
    METHODS.md §12.3.
    """
    t = np.asarray(temperature_k, dtype=float)
    k = np.exp(parameters[1] - parameters[0] / R * (1.0 / t - 1.0 / reference_temperature_k))
    return k * conversion_function(model, conversion, parameters)


def master_plot_maximum(
    conversion, rate_per_s, temperature_k, activation_energy_j_per_mol: float
) -> float:
    """Conversion at the maximum of Málek's y(α) master plot.

    Equation: y(α) = (dα/dt)·exp(E/(R·T)) ∝ f(α); its maximum α_M is 0 for nth-order
    decay (n > 0) and lies inside (0, 1) for autocatalytic kinetics, e.g.
    α_M = (1 − n·z)/(n + 1) for (1 − α)ⁿ(α + z).

    Parameters
    ----------
    conversion : array_like
        α [-].
    rate_per_s : array_like
        dα/dt [1/s].
    temperature_k : array_like
        T [K].
    activation_energy_j_per_mol : float
        E [J/mol], e.g. the mean isoconversional E.

    Returns
    -------
    float
        α_M [-] (points with 0.02 ≤ α ≤ 0.98 only).

    Validity: single-step kinetics with a known E.

    Examples
    --------
    >>> a = np.linspace(0, 1, 1001)
    >>> t = np.full_like(a, 400.0)
    >>> round(master_plot_maximum(a, (1 - a) * (a + 0.01), t, 1e5), 3)
    0.495

    References
    ----------
    J. Málek, Thermochim. Acta 200 (1992) 257-269 (from memory).
    """
    a = np.asarray(conversion, dtype=float)
    y = np.asarray(rate_per_s, float) * np.exp(
        activation_energy_j_per_mol / (R * np.asarray(temperature_k, float))
    )
    keep = (a >= 0.02) & (a <= 0.98)
    if keep.sum() < 3:
        raise CalcInputError("conversion", a, "needs at least 3 points between 0.02 and 0.98")
    return float(a[keep][np.argmax(y[keep])])


def simulate_scan(
    model: str,
    parameters,
    reference_temperature_k: float,
    heating_rate_k_per_s: float,
    start_temperature_k: float,
    end_temperature_k: float,
    points: int = 2001,
):
    """Conversion and rate of a rate model under linear heating, by an ODE solver.

    Equation: dα/dt = k(T₀ + β·t)·f(α), α(0) = 0, solved by ``solve_ivp`` (LSODA,
    rtol 1e-10) on an even time grid.

    Parameters
    ----------
    model : str
        A key of ``RATE_MODELS``.
    parameters : sequence
        The model's parameters.
    reference_temperature_k : float
        T_ref [K].
    heating_rate_k_per_s : float
        β [K/s].
    start_temperature_k : float
        T₀ [K].
    end_temperature_k : float
        Last temperature [K].
    points : int
        Rows of the grid.

    Returns
    -------
    tuple
        (time [s], T [K], α [-], dα/dt [1/s]).

    Validity: α(0) = 0; for nth order a start well below the event.

    Examples
    --------
    >>> t, T, a, r = simulate_scan("nth_order", (120e3, math.log(1e12) - 120e3 / (R * 440.0),
    ...                            1.0), 440.0, 5 / 60, 350.0, 520.0)
    >>> round(float(T[np.argmax(r)]), 1)  # METHODS.md C3.4: T_p = 441.13 K at 5 K/min
    441.1

    References
    ----------
    METHODS.md §12.3.
    """
    beta = float(heating_rate_k_per_s)
    t_end = (end_temperature_k - start_temperature_k) / beta
    grid = np.linspace(0.0, t_end, points)

    def rhs(t, y):
        return rate(
            model,
            start_temperature_k + beta * t,
            min(max(y[0], 0.0), 1.0),
            parameters,
            reference_temperature_k,
        )

    sol = solve_ivp(rhs, (0.0, t_end), [0.0], method="LSODA", t_eval=grid, rtol=1e-10, atol=1e-13)
    a = np.clip(sol.y[0], 0.0, 1.0)
    temp = start_temperature_k + beta * grid
    return grid, temp, a, rate(model, temp, a, parameters, reference_temperature_k)
