"""Benchmark of the calcs hot paths; run as ``python tests/bench/bench_calcs.py``.

Prints ratios measured in one run (best of several repeats each); asserts nothing.

1. accumulation + MTSR(t) over a 100 000-row series vs a bare numpy cumulative
   trapezoid over the same arrays (target ≤ 5×);
2. scalar TD24 (Brent on the log form) in ms (target < 1 ms);
3. vectorised TD24 for 10 000 parameter sets vs one numpy evaluation of the
   zero-order TMR formula over the same arrays (target ≤ 20×).
"""

from __future__ import annotations

import sys
import timeit
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from calcs.accumulation import analyse_accumulation  # noqa: E402
from calcs.constants import R  # noqa: E402
from calcs.td_vectorised import td24_vectorised  # noqa: E402
from calcs.tmr import td24  # noqa: E402


def best(func, number: int, repeat: int = 7) -> float:
    """Best time of one call [s] over ``repeat`` runs of ``number`` calls."""
    return min(timeit.repeat(func, number=number, repeat=repeat)) / number


def ratio(func, baseline, number: int, repeat: int = 15) -> float:
    """Best time of ``func`` over best time of ``baseline``, timed in alternation.

    Alternating the two keeps a burst of load on a shared machine from hitting
    only one of them.
    """
    a = b = float("inf")
    for _ in range(repeat):
        a = min(a, timeit.timeit(func, number=number))
        b = min(b, timeit.timeit(baseline, number=number))
    return a / b


def main() -> None:
    rng = np.random.default_rng(2024)
    n = 100_000
    t = np.linspace(0.0, 3.0 * 3600.0, n)
    q = 16.0 * np.exp(-(((t - 3600.0) / 1800.0) ** 2)) + 1e-4
    fd = np.minimum(t / 3600.0, 1.0)

    def series():
        analyse_accumulation(t, q, fd, 2000.0, 0.4, 0.1, process_temperature_k=303.15)

    def bare():
        np.cumsum(0.5 * (q[1:] + q[:-1]) * np.diff(t))

    ratio1 = ratio(series, bare, 10)

    scalar_ms = best(lambda: td24(1800.0, 100e3, 453.15, 50.0), 2000) * 1e3

    m = 10_000
    cp = rng.uniform(1000.0, 2500.0, m)
    e = rng.uniform(50e3, 200e3, m)
    tr = rng.uniform(350.0, 600.0, m)
    qr = rng.uniform(0.1, 100.0, m)

    def vectorised():
        td24_vectorised(cp, e, tr, qr)

    def formula():
        cp * R * tr**2 / (qr * e)

    ratio3 = ratio(vectorised, formula, 100)

    rows = [
        ("accumulation + MTSR(t), 100k rows / bare cumulative trapezoid", ratio1, "x", 5.0),
        ("scalar TD24 (Brent)", scalar_ms, "ms", 1.0),
        ("vectorised TD24, 10k sets / one zero-order TMR evaluation", ratio3, "x", 20.0),
    ]
    for label, value, unit, target in rows:
        verdict = "meets" if value <= target else "MISSES"
        print(f"{label}: {value:.2f} {unit} (target <= {target:g} {unit}: {verdict})")


if __name__ == "__main__":
    main()
