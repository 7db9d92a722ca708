"""Benchmark of decomposition kinetics; run as ``python tests/bench/bench_decomposition.py``.

Prints ratios measured in one run (best of several alternated repeats); asserts nothing.

1. fitting the autocatalytic model to four DSC scans of 10 000 points each
   (``calcs.autocatalytic.fit_rate_model``) vs a bare ``scipy.optimize.least_squares``
   of the same residual, Jacobian and start values (target ≤ 2×);
2. the simulated TD24 of that model (``calcs.adiabatic_sim.td_simulated``) vs a bare
   ``brentq`` over ``solve_ivp`` (LSODA, same tolerances and event) on the same bracket
   (target ≤ 2×).
"""

from __future__ import annotations

import math
import sys
import timeit
from pathlib import Path

import numpy as np
from scipy import integrate, optimize

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from calcs.adiabatic_sim import td_simulated  # noqa: E402
from calcs.constants import DAY, R  # noqa: E402
from calcs.dsc import ConversionCurve  # noqa: E402
from calcs.kinetic_fit import BOUNDS, _stack, _start, fit_rate_model  # noqa: E402
from calcs.rate_models import simulate_scan  # noqa: E402

T_REF = 440.0
P = (130e3, math.log(1e13) - 130e3 / (R * T_REF), 1.2, -2.0)


def ratio(func, baseline, number: int, repeat: int = 7) -> tuple[float, float]:
    """(best time of ``func`` [s], its ratio to the best time of ``baseline``), alternated."""
    a = b = float("inf")
    for _ in range(repeat):
        a = min(a, timeit.timeit(func, number=number) / number)
        b = min(b, timeit.timeit(baseline, number=number) / number)
    return a, a / b


def bare_fit(curves):
    t, a, r, w = _stack(curves, (0.02, 0.98))
    t_ref = float(np.mean(t))
    x = -(1.0 / t - 1.0 / t_ref) / R
    log_one = np.log(np.clip(1.0 - a, 1e-12, 1.0))
    p0 = _start("autocatalytic", t, a, r, t_ref)

    def res(p):
        return (np.exp(p[1] + p[0] * x) * (1 - a) ** p[2] * (a + 10 ** p[3]) - r) * w

    def jac(p):
        z = 10 ** p[3]
        g = np.exp(p[1] + p[0] * x) * (1 - a) ** p[2] * (a + z) * w
        return np.column_stack([g * x, g, g * log_one, g * z * math.log(10) / (a + z)])

    return optimize.least_squares(
        res,
        p0,
        jac=jac,
        bounds=BOUNDS["autocatalytic"],
        method="trf",
        x_scale="jac",
        xtol=1e-12,
        ftol=1e-12,
        gtol=1e-12,
    )


def bare_td24(rise):
    e_r, lnk, n, z = P[0] / R, P[1], P[2], 10 ** P[3]

    def tmr(t0):
        def rhs(_t, y):
            a = min(max(float(y[0]), 0.0), 1.0)
            return [
                math.exp(lnk - e_r * (1 / (t0 + rise * a) - 1 / T_REF)) * (1 - a) ** n * (a + z)
            ]

        def peak(_t, y):
            a = min(float(y[0]), 1 - 1e-12)
            temp = t0 + rise * a
            return (
                e_r * rise / temp**2 * (1 - a) ** n * (a + z)
                + (1 - a) ** n
                - n * (1 - a) ** (n - 1) * (a + z)
            )

        peak.terminal, peak.direction = True, -1
        sol = integrate.solve_ivp(
            rhs, (0, 1e12), [0.0], method="LSODA", events=peak, rtol=1e-9, atol=1e-13
        )
        return sol.t_events[0][0]

    return optimize.brentq(lambda t0: math.log(tmr(t0) / DAY), 300.0, 500.0, xtol=1e-4)


def main() -> None:
    curves = []
    for beta in (1, 2, 5, 10):
        t, temp, a, r = simulate_scan("autocatalytic", P, T_REF, beta / 60, 420.0, 510.0, 10_000)
        noisy = r * (1 + 0.01 * np.random.default_rng(beta).standard_normal(len(r)))
        curves.append(ConversionCurve(beta / 60, t, temp, a, noisy))
    points = sum(len(c.time_s) for c in curves)
    fit_s, fit_ratio = ratio(
        lambda: fit_rate_model(curves, "autocatalytic"), lambda: bare_fit(curves), 3
    )
    rise = 400.0
    td_s, td_ratio = ratio(
        lambda: td_simulated("autocatalytic", P, T_REF, rise), lambda: bare_td24(rise), 1, repeat=5
    )
    print(
        f"autocatalytic fit, 4 scans, {points} points: {fit_s * 1e3:.1f} ms, "
        f"{fit_ratio:.2f}x bare least_squares (target <= 2x)"
    )
    print(
        f"simulated TD24: {td_s * 1e3:.1f} ms, {td_ratio:.2f}x bare brentq + solve_ivp "
        f"(target <= 2x)"
    )


if __name__ == "__main__":
    main()
