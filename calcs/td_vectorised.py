"""Vectorised TD for arrays of parameter sets (METHODS.md §3.2), in closed form.

The log form of TMR_ad(T) = t is solved through the Lambert W function (see
:func:`td_for_time_vectorised`); the tests check it against Brent's method
(:func:`calcs.tmr.td_for_time`) and ``scipy.special.lambertw``.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from calcs.constants import DAY, R
from calcs.errors import CalcInputError
from calcs.tmr import T_HIGH_K, T_LOW_K

REFERENCES = ("townsend_tou1980",)


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
        TD [K]; NaN where no root lies in [150 K, 1500 K] (as :func:`td_for_time`;
        :func:`calcs.tmr.td_refusal` says why); a numpy float when every input is a scalar.

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
    shape = arrays[0].shape
    # all-scalar inputs give 0-d arrays, which the in-place steps below cannot index
    arrays = [np.atleast_1d(x) for x in arrays]
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
        # the entries left to Lambert W below may hold nonsense here (log of a negative)
        with np.errstate(invalid="ignore", divide="ignore"):
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
    return temp.reshape(shape) if shape else temp[0]


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
