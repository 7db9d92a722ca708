"""Barrier checks of a step's measures (issue 17), checked against independent computations:
the feed interlock against a separate scipy integration of the same dosing model, the
evaporative-cooling chain against a hand calculation with IAPWS-IF97 water properties, and
the ω method against Leung's published fit of the critical pressure ratio (from memory)."""

from __future__ import annotations

import math

import iapws
import numpy as np
import pytest
from scipy.integrate import solve_ivp

from calcs import barriers, interlock, relief, scenario
from calcs.constants import R

# -- feed interlock: an independent integration (Radau, one system with a stop flag) ----------


def _independent_mtsr(*, t_p, m0, mf, td, tf, k_p, e, q, cp, trip, delay):
    """Isothermal dosing to the failure, then adiabatic; the feed stops `delay` s after T
    first reaches `trip` (or at its end); MTSR = max T. Written here, not shared with calcs."""

    def rhs(feeding, adiabatic):
        def f(_t, y):
            d, x, temp = y
            k = k_p * math.exp(-(e / R) * (1 / temp - 1 / t_p))
            r = k * max(d - x, 0.0)
            return [
                1 / td if feeding and d < 1 else 0.0,
                r,
                q * r / ((m0 + mf * d) * cp) if adiabatic else 0.0,
            ]

        return f

    y = solve_ivp(rhs(True, False), (0, tf), [0, 0, t_p], method="Radau", rtol=1e-10, atol=1e-12).y[
        :, -1
    ]

    def hot(_t, y):
        return y[2] - trip

    hot.terminal, hot.direction = True, 1
    a = solve_ivp(
        rhs(True, True),
        (0, td - tf),
        y,
        method="Radau",
        events=hot,
        rtol=1e-10,
        atol=1e-12,
        max_step=5.0,
    )
    peak, y = a.y[2].max(), a.y[:, -1]
    if a.t_events[0].size:
        b = solve_ivp(
            rhs(True, True), (0, delay), y, method="Radau", rtol=1e-10, atol=1e-12, max_step=1.0
        )
        peak, y = max(peak, b.y[2].max()), b.y[:, -1]
    c = solve_ivp(
        rhs(False, True), (0, 400.0 / k_p), y, method="Radau", rtol=1e-10, atol=1e-12, max_step=20.0
    )
    return max(peak, c.y[2].max())


@pytest.mark.parametrize(("trip_c", "delay_s", "e"), [(40.0, 60.0, 60e3), (50.0, 300.0, 80e3)])
def test_the_interlock_mtsr_agrees_with_an_independent_scipy_integration(trip_c, delay_s, e):
    # METHODS.md §13.3 model; the check case C1.7's numbers (METHODS.md §1.3) as the base.
    args = dict(
        t_p=303.15,
        m0=0.40,
        mf=0.10,
        td=3600.0,
        tf=1800.0,
        k_p=0.1 / 60,
        e=e,
        q=60e3,
        cp=2000.0,
        trip=trip_c + 273.15,
        delay=delay_s,
    )
    r = interlock.feed_interlock_mtsr(
        process_temperature_k=args["t_p"],
        initial_mass_kg=args["m0"],
        feed_mass_kg=args["mf"],
        dosing_time_s=args["td"],
        failure_time_s=args["tf"],
        rate_constant_per_s=args["k_p"],
        activation_energy_j_per_mol=e,
        reaction_heat_j=args["q"],
        specific_heat_j_per_kg_k=args["cp"],
        trip_temperature_k=args["trip"],
        response_time_s=delay_s,
    )
    assert r.mtsr_with_interlock_k == pytest.approx(_independent_mtsr(**args), abs=0.05)


# -- evaporative cooling at MTT: the whole chain against a hand calculation --------------------


def water_step(**measure):
    m = scenario.MeasureInputs(id=7, kind="evaporative_cooling", **measure)
    return scenario.StepInputs(
        "batch",
        353.15,
        2000.0,
        4180.0,
        "open",
        101325.0,
        None,
        mtt_override_k=373.15,
        specific_reaction_heat_j_per_kg=150e3,
        max_heat_release_rate_w_per_kg=30.0,
        measures=(m,),
    )


def test_evaporative_cooling_chain_matches_a_hand_calculation_with_iapws_water():
    liquid, vapour = iapws.IAPWS97(P=0.101325, x=0), iapws.IAPWS97(P=0.101325, x=1)
    h_fg = (vapour.h - liquid.h) * 1e3  # 2256.5 kJ/kg (IAPWS-IF97)
    design = dict(
        condenser_ua_w_per_k=1500.0,
        coolant_inlet_temperature_k=293.15,
        coolant_outlet_temperature_k=303.15,
        vapour_line_diameter_m=0.15,
        latent_heat_j_per_kg=h_fg,
        vapour_molar_mass_kg_per_mol=0.018015,
        liquid_density_kg_per_m3=liquid.rho,
        synthesis_activation_energy_j_per_mol=50e3,
    )
    [check] = scenario.assess_step(water_step(**design)).barrier_checks
    # By hand: q(MTT) = 30·exp(50e3/R·(1/353.15 − 1/373.15)) W/kg, heat = q·2000 kg,
    # vapour = heat/h_fg, rho_v = P·M/(R·T), u = vapour/(rho_v·π·0.15²/4),
    # ΔT_lm = (80 − 70)/ln(80/70) K (textbook log-mean), duty = 1500·ΔT_lm.
    q = 30.0 * math.exp(50e3 / R * (1 / 353.15 - 1 / 373.15))
    heat = q * 2000.0
    vap = heat / h_fg
    rho_v = 101325.0 * 0.018015 / (R * 373.15)
    u = vap / (rho_v * math.pi * 0.15**2 / 4)
    dt_lm = 10.0 / math.log(80.0 / 70.0)
    n = check["numbers"]
    assert n["heat_release"]["value"] == pytest.approx(heat, rel=1e-9)
    assert n["vapour_flow"]["value"] == pytest.approx(vap, rel=1e-9)
    assert n["vapour_velocity"]["value"] == pytest.approx(u, rel=1e-9)
    assert n["log_mean_temperature_difference"]["value"] == pytest.approx(74.89, abs=0.01)
    assert n["condenser_duty"]["value"] == pytest.approx(1500.0 * dt_lm, rel=1e-9)
    # 1500 W/K·74.9 K = 112 kW < 149 kW released: the condenser is too small
    assert heat == pytest.approx(149.4e3, rel=1e-3)
    assert check["result"] == "fail" and check["passes"] is False
    [bigger] = scenario.assess_step(
        water_step(**{**design, "condenser_ua_w_per_k": 2e4})
    ).barrier_checks
    assert bigger["result"] == "pass"


def test_a_check_without_the_synthesis_kinetics_is_unknown_and_says_why():
    [check] = scenario.assess_step(water_step(latent_heat_j_per_kg=2.2e6)).barrier_checks
    assert check["result"] == "unknown" and check["passes"] is None
    assert "synthesis_activation_energy_j_per_mol" in check["missing"]
    assert "no bound" in check["note"]


def test_a_coolant_outlet_above_the_condensing_temperature_fails_the_condenser():
    design = dict(
        condenser_ua_w_per_k=4e5,
        coolant_inlet_temperature_k=293.15,
        coolant_outlet_temperature_k=380.0,
        vapour_line_diameter_m=0.3,
        latent_heat_j_per_kg=2.2e6,
        vapour_molar_mass_kg_per_mol=0.018015,
        liquid_density_kg_per_m3=958.0,
        synthesis_activation_energy_j_per_mol=50e3,
    )
    [check] = scenario.assess_step(water_step(**design)).barrier_checks
    assert check["result"] == "fail" and "coolant_outlet_k" in check["note"]


def test_log_mean_temperature_difference_of_the_textbook_definition():
    # (ΔT1 − ΔT2)/ln(ΔT1/ΔT2) with ΔT1 = 60 K, ΔT2 = 40 K: 49.33 K (definition, any
    # heat-transfer text); equal differences give the difference itself.
    assert barriers.log_mean_temperature_difference(373.15, 313.15, 333.15) == pytest.approx(
        20.0 / math.log(1.5)
    )
    assert barriers.log_mean_temperature_difference(373.15, 313.15, 313.15) == 60.0


# -- relief screening ----------------------------------------------------------------------


@pytest.mark.parametrize("omega", [4.0, 10.0, 50.0, 100.0])
def test_omega_critical_ratio_agrees_with_leungs_fit(omega):
    # Leung's fit of η_c for ω ≥ 4 (from memory: η_c ≈ 0.55 + 0.217 ln ω − 0.046 (ln ω)²
    # + 0.004 (ln ω)³, stated to about 2 %).
    x = math.log(omega)
    fit = 0.55 + 0.217 * x - 0.046 * x**2 + 0.004 * x**3
    assert relief.omega_critical_pressure_ratio(omega) == pytest.approx(fit, rel=0.02)


def test_relief_screening_says_it_is_screening_and_fails_a_small_vent():
    m = scenario.MeasureInputs(
        id=3,
        kind="emergency_relief",
        set_pressure_pa=3e5,
        vent_area_m2=1e-4,
        discharge_coefficient=0.8,
        relief_system="vapour",
        vessel_volume_m3=3.0,
        latent_heat_j_per_kg=2.2e6,
        vapour_molar_mass_kg_per_mol=0.018015,
        liquid_density_kg_per_m3=958.0,
        synthesis_activation_energy_j_per_mol=50e3,
    )
    s = scenario.StepInputs(
        "batch",
        353.15,
        2000.0,
        4180.0,
        "closed",
        101325.0,
        None,
        mtt_override_k=403.0,
        specific_reaction_heat_j_per_kg=150e3,
        max_heat_release_rate_w_per_kg=30.0,
        measures=(m,),
    )
    [check] = scenario.assess_step(s).barrier_checks
    assert check["result"] == "fail" and "relief specialist" in check["note"]
    n = check["numbers"]
    # A = W/(Kd·G): the required area follows from the flow and flux it reports
    assert n["required_area"]["value"] == pytest.approx(
        n["required_mass_flow"]["value"] / (0.8 * n["mass_flux"]["value"])
    )
    assert n["required_mass_flow"]["value"] > 0 and np.isfinite(n["omega"]["value"])
