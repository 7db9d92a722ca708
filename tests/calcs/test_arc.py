"""Adiabatic runs: onset, measured TMR, pressure, gas, and the φ correction of the whole curve."""

import math

import numpy as np
import pytest
from scipy import integrate

from calcs.arc import analyse_adiabatic_run, non_condensable_gas, phi_correct_curve
from calcs.constants import R
from calcs.phi import corrected_final_temperature, phi_factor

E, A, RISE = 100e3, 1e9, 200.0


def simulated_run(phi, t0=353.15, points=200001):
    """A first-order adiabatic run at thermal inertia φ (METHODS.md §3.6 kinetics)."""

    def rhs(_t, y):
        return [A * math.exp(-E / (R * (t0 + RISE / phi * y[0]))) * (1 - y[0])]

    end = 3e5
    t = np.linspace(0, end, points)
    sol = integrate.solve_ivp(
        rhs, (0, end), [0.0], t_eval=t, method="LSODA", rtol=1e-10, atol=1e-13
    )
    a = sol.y[0]
    temp = t0 + RISE / phi * a
    rate = RISE / phi * A * np.exp(-E / (R * temp)) * (1 - a)
    return t, temp, rate


def test_phi_correction_of_the_onset_and_final_temperature_matches_the_worked_example():
    # METHODS.md C3.7 [COMPUTED from the memory formulas of Fisher & Goetz / ASTM E1981]:
    # φ = 1.936, T₀ 150 °C → 140.39 °C, ΔT_meas 150 K → T_f,corr 430.79 °C
    phi = phi_factor(0.005, 2000.0, 0.018, 520.0)
    t_ad, r_ad, _, _ = phi_correct_curve([423.15, 573.15], [0.02 / 60, 0.01 / 60], phi, 100e3)
    assert t_ad[0] - 273.15 == pytest.approx(140.39, abs=0.01)
    assert t_ad[-1] - 273.15 == pytest.approx(430.79, abs=0.01)
    assert t_ad[-1] == pytest.approx(corrected_final_temperature(t_ad[0], phi, 150.0))
    # at the corrected onset the plant's rate equals the detected rate (Fisher's construction)
    assert r_ad[0] == pytest.approx(0.02 / 60, rel=1e-9)


def test_correcting_a_simulated_phi_2_run_gives_the_simulated_phi_1_run():
    # independent check [DERIVED]: both runs simulated from the same first-order kinetics
    t2, temp2, rate2 = simulated_run(2.0)
    keep = (rate2 > 0.02 / 60) & (np.arange(len(t2)) <= np.argmax(rate2))
    t_ad, r_ad, _, tmr_ad = phi_correct_curve(temp2[keep], rate2[keep], 2.0, E)
    # each point keeps its conversion: α = φ·(T_m − T₀)/ΔT_ad; the φ = 1 rate law at T_ad
    alpha = 2.0 * (temp2[keep] - 353.15) / RISE
    exact = RISE * A * np.exp(-E / (R * t_ad)) * (1 - alpha)
    assert r_ad == pytest.approx(exact, rel=1e-9)
    # TMR from the corrected onset against a φ = 1 run simulated through the same state
    start = float(t_ad[0]) - RISE * float(alpha[0])
    t1, temp1, rate1 = simulated_run(1.0, t0=start)
    at_onset = float(np.interp(t_ad[0], temp1, t1))
    assert tmr_ad[0] == pytest.approx(t1[np.argmax(rate1)] - at_onset, rel=0.01)


def test_a_run_gives_onset_at_the_sensitivity_measured_tmr_and_pressure_figures():
    t, temp, rate = simulated_run(2.0, points=30001)
    pressure = 1e5 + 2e3 * (temp - temp[0])
    run = analyse_adiabatic_run(t, temp, pressure)
    i = int(np.argmax(rate >= 0.02 / 60))
    assert run.onset_k == pytest.approx(temp[i], abs=0.1)
    assert run.time_at_max_rate_s == pytest.approx(t[np.argmax(rate)], abs=20)
    assert run.tmr_from_onset_s == pytest.approx(run.time_at_max_rate_s - run.onset_time_s)
    assert run.max_pressure_pa == pytest.approx(pressure.max())
    assert run.max_pressure_rate_pa_per_s == pytest.approx(2e3 * rate.max(), rel=0.02)


def test_non_condensable_gas_is_the_ideal_gas_in_the_free_volume():
    # n = ΔP·V/(R·T): 2 bar in 10 mL at 25 °C is 0.807 mmol (ideal-gas law)
    assert non_condensable_gas(301325.0, 298.15, 1e-5, 101325.0) == pytest.approx(
        2e5 * 1e-5 / (R * 298.15)
    )
