"""Barrier checks at MTT, relief screening and the feed interlock (METHODS.md §13).

Sources beside each check. Water properties come from IAPWS-IF97 through the `iapws`
package (an open reference library), not from the code under test.
"""

from __future__ import annotations

import math

import iapws
import numpy as np
import pytest

from calcs import barriers, interlock, relief
from calcs.errors import CalcInputError

P_ATM_MPA = 0.101325


def saturated_water(p_mpa: float):
    liquid, vapour = iapws.IAPWS97(P=p_mpa, x=0), iapws.IAPWS97(P=p_mpa, x=1)
    return liquid, vapour, (vapour.h - liquid.h) * 1e3, vapour.v - liquid.v


# -- evaporative cooling and the vapour line --------------------------------------------------

def test_the_rate_at_mtt_follows_arrhenius_as_in_the_rule_of_thumb_table():
    # METHODS.md §8 [COMPUTED]: 10 K at 300 K and 100 kJ/mol multiply a rate by 3.65.
    assert barriers.heat_release_rate_at(1.0, 300.0, 310.0, 100e3) == pytest.approx(3.65, abs=0.01)
    assert barriers.heat_release_rate_at(5.0, 300.0, 360.0, 0.0) == 5.0


def test_boil_off_of_water_at_its_normal_boiling_point():
    # IAPWS-IF97 (iapws): h_fg at 1 atm is 2256.5 kJ/kg; 100 kW boil off 0.0443 kg/s.
    _, _, h_fg, _ = saturated_water(P_ATM_MPA)
    assert h_fg == pytest.approx(2256.5e3, rel=1e-3)
    assert barriers.boil_off_rate(100e3, h_fg) == pytest.approx(0.04432, rel=1e-3)


def test_ideal_gas_vapour_density_of_steam_is_within_two_percent_of_iapws():
    # IAPWS-IF97: saturated steam at 1 atm has 0.5976 kg/m³; the ideal gas gives 0.5883.
    _, vapour, _, _ = saturated_water(P_ATM_MPA)
    ideal = barriers.vapour_density(101325.0, 0.018015268, vapour.T)
    assert ideal == pytest.approx(vapour.rho, rel=0.02)
    assert ideal < vapour.rho  # the real gas is denser near saturation


def test_flooding_velocity_satisfies_the_wallis_relation_it_was_solved_from():
    # Wallis 1969 (from memory): sqrt(jg*) + m sqrt(jl*) = C with jl = jg rho_g/rho_l.
    d, rho_l, rho_g = 0.1, 958.4, 0.5976
    jg = barriers.flooding_velocity(d, rho_l, rho_g)
    scale = math.sqrt(9.80665 * d * (rho_l - rho_g))
    jg_star = jg * math.sqrt(rho_g) / scale
    jl_star = (jg * rho_g / rho_l) * math.sqrt(rho_l) / scale
    assert math.sqrt(jg_star) + math.sqrt(jl_star) == pytest.approx(barriers.WALLIS_C)
    # Wider lines carry more before flooding (jg ∝ sqrt(d)).
    assert barriers.flooding_velocity(0.4, rho_l, rho_g) == pytest.approx(2 * jg)


def test_vapour_line_velocity_and_condenser_duty_of_a_worked_case():
    # Common practice, no source: 0.05 kg/s of steam at 1 atm in a DN100 line, 10.8 m/s.
    u = barriers.vapour_line_velocity(0.05, 0.5883, 0.1)
    assert u == pytest.approx(0.05 / (0.5883 * math.pi * 0.0025), rel=1e-12)
    assert barriers.condenser_duty(800.0, 5.0, 60.0) == 240e3


def test_a_vapour_denser_than_its_liquid_is_refused_naming_the_field():
    with pytest.raises(CalcInputError, match="vapour_density_kg_per_m3"):
        barriers.flooding_velocity(0.1, 1.0, 2.0)


def test_time_margin_of_a_measure_against_tmrad():
    # METHODS.md §13.3: the margin is TMRad minus the response time.
    assert barriers.time_margin(7200.0, 1800.0) == {"margin_s": 5400.0, "ratio": 4.0,
                                                   "passes": True}
    assert barriers.time_margin(600.0, 1800.0)["passes"] is False
    assert barriers.time_margin(math.inf, 1800.0)["passes"] is True
    with pytest.raises(CalcInputError, match="response_time_s"):
        barriers.time_margin(600.0, -1.0)


# -- relief screening ---------------------------------------------------------------------------

def test_omega_method_gives_isothermal_gas_choking_at_omega_one():
    # Gas dynamics (isothermal ideal gas, from memory): choking at P_c/P_0 = exp(-1/2) and
    # G = exp(-1/2)·sqrt(P_0·rho_0).
    assert relief.omega_critical_pressure_ratio(1.0) == pytest.approx(math.exp(-0.5), rel=1e-9)
    p0, rho0 = 3e5, 3.5
    assert relief.omega_critical_mass_flux(1.0, p0, 1 / rho0) == pytest.approx(
        math.exp(-0.5) * math.sqrt(p0 * rho0), rel=1e-9)


def test_omega_method_tends_to_the_equilibrium_rate_model_for_strong_flashing():
    # Derived (Leung 1986): G_omega = eta_c·sqrt(P0/(v0·omega)) and eta_c -> 1 as omega grows,
    # so G_omega/G_ERM = eta_c. Water at 2 bar, properties from IAPWS-IF97.
    liquid, _, h_fg, v_fg = saturated_water(0.2)
    c = liquid.cp * 1e3
    omega = relief.omega_flashing(2e5, liquid.T, liquid.v, v_fg, h_fg, c)
    assert omega == pytest.approx(50.87, rel=1e-3)
    g_omega = relief.omega_critical_mass_flux(omega, 2e5, liquid.v)
    g_erm = relief.erm_mass_flux(h_fg, v_fg, c, liquid.T)
    assert g_omega / g_erm == pytest.approx(relief.omega_critical_pressure_ratio(omega))
    ratios = [relief.omega_critical_pressure_ratio(w) for w in (10, 100, 1000, 10000)]
    assert ratios == sorted(ratios) and ratios[-1] > 0.997


def test_leung_tempered_flow_reduces_to_its_no_overpressure_limit():
    # Leung 1986 (from memory, METHODS.md §13.2): with ΔT = 0, W = q·m0²·v_fg/(V·h_fg);
    # any allowed overpressure lowers the required flow.
    m0, q, v, h, vfg, c = 4000.0, 200.0, 5.0, 2.2e6, 0.8, 4000.0
    w0 = relief.leung_tempered_mass_flow(m0, q, v, h, vfg, c, 0.0)
    assert w0 == pytest.approx(q * m0**2 * vfg / (v * h), rel=1e-12)
    flows = [relief.leung_tempered_mass_flow(m0, q, v, h, vfg, c, dt) for dt in (0, 5, 10, 20)]
    assert flows == sorted(flows, reverse=True)


def test_gassy_flow_and_area():
    # METHODS.md §13.2 (homogeneous venting, volumetric balance); A = W/(Kd·G).
    w = relief.gassy_mass_flow(0.02, 4000.0, 5.0)
    assert w == 16.0
    assert relief.required_area(w, 2000.0, 0.8) == pytest.approx(0.01)
    with pytest.raises(CalcInputError, match="vessel_volume_m3"):
        relief.gassy_mass_flow(0.02, 4000.0, -5.0)


# -- feed interlock ---------------------------------------------------------------------------

C17 = dict(process_temperature_k=303.15, initial_mass_kg=0.40, feed_mass_kg=0.10,
           dosing_time_s=3600.0, rate_constant_per_s=0.1 / 60.0, reaction_heat_j=60e3,
           specific_heat_j_per_kg_k=2000.0)


@pytest.mark.parametrize(("failure_min", "expected_c"), [(30, 40.558), (60, 39.975)])
def test_feed_stopped_at_failure_gives_the_analytic_mtsr_of_check_case_c17(failure_min,
                                                                         expected_c):
    # METHODS.md C1.7 [COMPUTED], exact column: MTSR on the m(t) basis at 30 and 60 min.
    r = interlock.feed_interlock_mtsr(**C17, failure_time_s=failure_min * 60.0,
                                      activation_energy_j_per_mol=0.0,
                                      trip_temperature_k=1000.0, response_time_s=0.0)
    assert r.mtsr_feed_stopped_at_failure_k - 273.15 == pytest.approx(expected_c, abs=2e-3)


def _rk4_reference(trip_k: float, delay_s: float, e: float, failure_s: float) -> float:
    """An independent fixed-step RK4 integration of the same dosing model (test only)."""
    k_p, t_p, t_d = C17["rate_constant_per_s"], C17["process_temperature_k"], 3600.0
    m0, mf, q, cp = 0.40, 0.10, 60e3, 2000.0

    def rhs(y, feeding, adiabatic):
        f, x, temp = y
        k = k_p * np.exp(-(e / 8.314462618) * (1 / temp - 1 / t_p))
        r = k * max(f - x, 0.0)
        return np.array([1 / t_d if (feeding and f < 1) else 0.0, r,
                         q * r / ((m0 + mf * f) * cp) if adiabatic else 0.0])

    y, t, h, peak, stop_at = np.array([0.0, 0.0, t_p]), 0.0, 0.25, t_p, None
    while t < failure_s - 1e-9:
        k1 = rhs(y, True, False); k2 = rhs(y + h / 2 * k1, True, False)  # noqa: E702
        k3 = rhs(y + h / 2 * k2, True, False); k4 = rhs(y + h * k3, True, False)  # noqa: E702
        y, t = y + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4), t + h
    for _ in range(400_000):
        feeding = stop_at is None or t < stop_at
        k1 = rhs(y, feeding, True); k2 = rhs(y + h / 2 * k1, feeding, True)  # noqa: E702
        k3 = rhs(y + h / 2 * k2, feeding, True); k4 = rhs(y + h * k3, feeding, True)  # noqa: E702
        y, t = y + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4), t + h
        peak = max(peak, y[2])
        if stop_at is None and y[2] >= trip_k:
            stop_at = t + delay_s
        if (not feeding or y[0] >= 1) and y[0] - y[1] < 1e-7:
            break
    return peak


@pytest.mark.parametrize(("trip_c", "delay_s"), [(37.0, 60.0), (47.0, 120.0)])
def test_interlock_mtsr_agrees_with_an_independent_integration(trip_c, delay_s):
    # METHODS.md §13.3: checked against a fixed-step RK4 of the same model written here.
    e = 80e3
    r = interlock.feed_interlock_mtsr(**C17, failure_time_s=1800.0,
                                      activation_energy_j_per_mol=e,
                                      trip_temperature_k=trip_c + 273.15,
                                      response_time_s=delay_s)
    assert r.mtsr_with_interlock_k == pytest.approx(_rk4_reference(trip_c + 273.15, delay_s, e,
                                                                   1800.0), abs=0.05)
    # The interlock lies between stopping at once and never stopping.
    assert (r.mtsr_feed_stopped_at_failure_k < r.mtsr_with_interlock_k
            < r.mtsr_feed_never_stopped_k)
    assert r.trip_time_s is not None and r.feed_stopped_s == pytest.approx(
        r.trip_time_s + delay_s)


def test_an_interlock_that_never_trips_gives_the_never_stopped_case():
    r = interlock.feed_interlock_mtsr(**C17, failure_time_s=1800.0,
                                      activation_energy_j_per_mol=80e3,
                                      trip_temperature_k=800.0, response_time_s=0.0)
    assert r.trip_time_s is None and r.feed_stopped_s is None
    assert r.mtsr_with_interlock_k == pytest.approx(r.mtsr_feed_never_stopped_k)
    assert r.dosed_fraction_at_stop == pytest.approx(1.0)


@pytest.mark.parametrize(("field", "changes"), [
    ("trip_temperature_k", {"trip_temperature_k": 300.0}),
    ("failure_time_s", {"failure_time_s": 4000.0}),
    ("response_time_s", {"response_time_s": -5.0}),
])
def test_bad_interlock_input_is_refused_naming_the_field(field, changes):
    args = {**C17, "failure_time_s": 1800.0, "activation_energy_j_per_mol": 80e3,
            "trip_temperature_k": 320.0, "response_time_s": 60.0, **changes}
    with pytest.raises(CalcInputError, match=field):
        interlock.feed_interlock_mtsr(**args)


@pytest.mark.parametrize("module", [barriers, relief, interlock])
def test_every_reference_key_of_the_barrier_modules_has_its_citation(module):
    from calcs.constants import REFERENCES

    assert set(module.REFERENCES) <= set(REFERENCES)
