"""Synthetic DSC scans generated from published rate laws, shared by the decomposition tests.

* first order, E = 120 kJ/mol, A = 1e12 1/s: METHODS.md C3.4/C3.5 (its peak and α = 0.5
  temperatures are tabulated there);
* extended Prout–Tompkins (1 − α)ⁿ(α + z) (Prout & Tompkins 1944, METHODS.md §12.3) with
  E = 130 kJ/mol, A = 1e13 1/s, n = 1.2, z = 0.01: parameters chosen here.
"""

import math

import numpy as np

from calcs.constants import R
from calcs.dsc import ConversionCurve, analyse_scan
from calcs.rate_models import simulate_scan

T_REF = 440.0
FIRST_ORDER = ("nth_order", (120e3, math.log(1e12) - 120e3 / (R * T_REF), 1.0))
PROUT_TOMPKINS = ("autocatalytic", (130e3, math.log(1e13) - 130e3 / (R * T_REF), 1.2, -2.0))
RATES_K_PER_MIN = (1.0, 2.0, 5.0, 10.0)
ENERGY_J_PER_KG = 800e3
MASS_KG = 2e-6


def exact_curves(law, points=3001):
    model, p = law
    return [
        ConversionCurve(b / 60, *simulate_scan(model, p, T_REF, b / 60, 320.0, 560.0, points))
        for b in RATES_K_PER_MIN
    ]


def heat_flow(law, beta_k_per_min, points=3001, noise=0.0, seed=0):
    """time [s], T [K], heat flow [W] with a sloped baseline and optional white noise."""
    model, p = law
    t, temp, _, r = simulate_scan(model, p, T_REF, beta_k_per_min / 60, 320.0, 560.0, points)
    hf = ENERGY_J_PER_KG * MASS_KG * r + 1e-4 + 2e-7 * (temp - 320.0)
    if noise:
        hf = hf + noise * hf.max() * np.random.default_rng(seed).standard_normal(len(t))
    return t, temp, hf


def analysed(law, points=3001, noise=0.0):
    return [
        analyse_scan(*heat_flow(law, b, points, noise, seed=i), MASS_KG)
        for i, b in enumerate(RATES_K_PER_MIN)
    ]
