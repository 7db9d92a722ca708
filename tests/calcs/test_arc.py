"""Adiabatic runs: onset, measured TMR, pressure, gas, and the φ correction of the whole curve."""

import math

import numpy as np
import pytest
from scipy import integrate

from calcs.arc import (
    analyse_adiabatic_run,
    corrected_run,
    first_order_activation_energy,
    gas_after_cooling,
    non_condensable_gas,
    phi_correct_curve,
)
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


def test_first_order_e_is_recovered_from_a_simulated_run_at_any_phi():
    # Townsend & Tou 1980: k = m_T/(T_f − T) for a first-order run, whatever φ; the run
    # above is simulated with E = 100 kJ/mol (METHODS.md §3.6 kinetics)
    for phi in (1.0, 2.0):
        t, temp, rate = simulated_run(phi, points=30001)
        run = analyse_adiabatic_run(t, temp)
        r = first_order_activation_energy(
            temp, run.self_heat_rate_k_per_s, run.onset_k, run.onset_k + run.measured_rise_k
        )
        assert r.value == pytest.approx(E, rel=0.01)
        assert r.parameters["r_squared"] > 0.999
        assert not r.warnings


def test_a_run_that_is_not_first_order_is_warned_about():
    # a second-order run (same E): ln[m_T/(T_f − T)] bends, r² drops [DERIVED]
    t0, end = 353.15, 3e5

    def rhs(_t, y):
        return [A * math.exp(-E / (R * (t0 + RISE * y[0]))) * (1 - y[0]) ** 3]

    t = np.linspace(0, end, 30001)
    a = integrate.solve_ivp(rhs, (0, end), [0.0], t_eval=t, method="LSODA", rtol=1e-10).y[0]
    temp = t0 + RISE * a
    run = analyse_adiabatic_run(t, temp)
    r = first_order_activation_energy(
        temp, run.self_heat_rate_k_per_s, run.onset_k, run.onset_k + run.measured_rise_k
    )
    assert r.warnings and "not first order" in r.warnings[0]


def test_the_corrected_run_starts_at_the_corrected_onset_and_ends_at_phi_times_the_rise():
    t, temp, rate = simulated_run(2.0, points=30001)
    run = analyse_adiabatic_run(t, temp)
    c = corrected_run(t, temp, run, 2.0, E)
    # METHODS.md §3.7: 1/T₀,ad = 1/T₀,m + (R/E)·ln φ; T_f,ad = T₀,ad + φ·ΔT_meas
    assert c["onset_k"] == pytest.approx(1 / (1 / run.onset_k + R / E * math.log(2.0)))
    assert c["final_k"] == pytest.approx(c["onset_k"] + 2.0 * run.measured_rise_k)
    assert c["onset_k"] < run.onset_k - 5
    # TMR from the corrected onset against a φ = 1 run simulated through the same state
    # (independent ODE solution, as in the test above)
    alpha0 = 2.0 * (run.onset_k - 353.15) / RISE
    t1, temp1, rate1 = simulated_run(1.0, t0=c["onset_k"] - RISE * alpha0)
    at_onset = float(np.interp(c["onset_k"], temp1, t1))
    assert c["tmr_at_onset_s"] == pytest.approx(t1[np.argmax(rate1)] - at_onset, rel=0.01)
    assert c["tmr_at_onset_s"] < run.tmr_from_onset_s
    assert len(c["curve"]["temperature_k"]) <= 201


def test_gas_after_cooling_needs_the_cell_back_at_its_start_temperature():
    temp = np.array([298.15, 400.0, 550.0, 420.0, 299.0])
    p = np.array([1.0e5, 2e5, 9e5, 5e5, 3.0e5])
    # ideal-gas law: 2 bar in 10 mL at 299 K from 5 g of sample
    r = gas_after_cooling(temp, p, 1e-5, 5e-3)
    assert r.value == pytest.approx(2e5 * 1e-5 / (R * 299.0) / 5e-3)
    assert r.parameters["pressure_rise_after_cooling_pa"] == pytest.approx(2e5)
    no_volume = gas_after_cooling(temp, p, None, 5e-3)
    assert no_volume.value is None and no_volume.parameters["pressure_rise_after_cooling_pa"]
    hot = gas_after_cooling(temp[:-1], p[:-1], 1e-5, 5e-3)
    assert hot.value is None and "did not cool back" in hot.warnings[0]
