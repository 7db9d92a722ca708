"""Barrier checks of a step's protective measures (private; see calcs.scenario, METHODS.md §13).

Each measure gets the checks its kind calls for, as plain dicts: a name, ``result`` ("pass",
"fail" or "unknown"), ``passes`` (True/False/None), its numbers as ``{"value", "unit"}`` in
SI, the method, the reference keys, a note and the inputs that were ``missing``. A check
whose inputs are missing says "unknown" and names them; it never passes on a guess.

- evaporative cooling at MTT: synthesis (and decomposition) heat release at MTT, the vapour
  it boils off, the condenser's U·A·ΔT_lm and the vapour-line velocity against Wallis
  flooding (§13.1);
- emergency pressure relief: DIERS screening at the relief temperature (tempered: Leung's
  flow with no overpressure credit and the ω-method flux; gassy: the homogeneous volumetric
  flow and the ω method with ω = α₀; hybrid: both flows at the smaller flux) against the
  installed area, always labelled as screening (§13.2);
- emergency measures (cooling, quench, dump, inhibitor, depressurisation, alarm): TMRad at
  MTSR, and at MTT when MTT is reached, against the response time (§13.3);
- feed interlock: MTSR with dosing until the trip plus the response delay, against stopping
  at once and never stopping, at the worst failure time (§13.3).
"""

from __future__ import annotations

import math

from calcs import barriers, relief
from calcs.adiabatic_sim import tmr_simulated
from calcs.constants import R
from calcs.errors import CalcInputError
from calcs.interlock import feed_interlock_mtsr
from calcs.semibatch import rate_constant_from_accumulation
from calcs.tmr import tmr_zero_order_at

TIME_KINDS = ("emergency_cooling", "quench", "dump", "inhibitor_injection",
              "controlled_depressurisation", "alarm_operator_action")
FAILURE_FRACTIONS = (0.25, 0.5, 0.75, 1.0)
NO_KINETICS = ("the synthesis activation energy is needed: the peak rate measured at T_p is "
               "no bound for the rate at a higher temperature")


def _q(value, unit: str) -> dict:
    return {"value": value, "unit": unit}


def _check(name: str, m, result: str, numbers: dict, method: str, refs=(), note: str = "",
           missing=()) -> dict:
    return {"name": name, "measure": m.id, "kind": m.kind, "result": result,
            "passes": {"pass": True, "fail": False}.get(result), "numbers": numbers,
            "method": method, "references": list(refs), "note": note, "missing": list(missing)}


def _missing(m, names) -> list[str]:
    return [n for n in names if getattr(m, n) is None]


def _synthesis_rate(c, m, temperature_k: float) -> float:
    return barriers.heat_release_rate_at(
        c.s.max_heat_release_rate_w_per_kg, c.s.process_temperature_k, temperature_k,
        m.synthesis_activation_energy_j_per_mol)


def _decomposition_rate(c, temperature_k: float) -> float | None:
    """Zero-order decomposition heat release at T [W/kg]; None without a zero-order model."""
    if c.q_model is None:
        return None
    e, t_ref, q_ref = c.q_model
    return q_ref * math.exp(-(e / R) * (1.0 / temperature_k - 1.0 / t_ref))


def _rates(c, m, temperature_k: float, numbers: dict, prefix: str) -> tuple[float, str]:
    q_syn = _synthesis_rate(c, m, temperature_k)
    q_dec = _decomposition_rate(c, temperature_k)
    numbers[f"synthesis_heat_release_at_{prefix}"] = _q(q_syn, "W/kg")
    note = ""
    if q_dec is None:
        q_dec, note = 0.0, "decomposition heat release not counted (no zero-order model). "
    numbers[f"decomposition_heat_release_at_{prefix}"] = _q(q_dec, "W/kg")
    return q_syn + q_dec, note


def _evaporative_cooling(c, m) -> dict:
    name, s, mtt = "Evaporative cooling at MTT", c.s, c.out.get("mtt_k")
    method = "barriers.evaporative_cooling_at_mtt"
    refs = ("stoessel2008", "wallis1969", "methods_md")
    need = _missing(m, ("condenser_ua_w_per_k", "coolant_inlet_temperature_k",
                        "coolant_outlet_temperature_k", "vapour_line_diameter_m",
                        "latent_heat_j_per_kg", "vapour_molar_mass_kg_per_mol",
                        "liquid_density_kg_per_m3", "synthesis_activation_energy_j_per_mol"))
    need += [n for n, v in (("mtt_k", mtt), ("max_heat_release_rate_w_per_kg",
                                             s.max_heat_release_rate_w_per_kg),
                            ("reaction_mass_kg", s.reaction_mass_kg)) if v is None]
    if s.system != "open":
        return _check(name, m, "unknown", {}, method, refs,
                      "evaporative cooling at MTT is the barrier of an open system; a closed "
                      "step's barrier at MTT is its pressure relief")
    if need:
        note = NO_KINETICS if "synthesis_activation_energy_j_per_mol" in need else ""
        return _check(name, m, "unknown", {}, method, refs, note, need)
    numbers = {"mtt": _q(mtt, "K")}
    q, note = _rates(c, m, mtt, numbers, "mtt")
    heat = q * s.reaction_mass_kg
    vapour = barriers.boil_off_rate(heat, m.latent_heat_j_per_kg)
    rho_v = barriers.vapour_density(s.operating_pressure_pa, m.vapour_molar_mass_kg_per_mol, mtt)
    u = barriers.vapour_line_velocity(vapour, rho_v, m.vapour_line_diameter_m)
    u_flood = barriers.flooding_velocity(m.vapour_line_diameter_m, m.liquid_density_kg_per_m3,
                                         rho_v)
    numbers.update({"heat_release": _q(heat, "W"), "vapour_flow": _q(vapour, "kg/s"),
                    "vapour_velocity": _q(u, "m/s"), "flooding_velocity": _q(u_flood, "m/s")})
    try:
        dt_lm = barriers.log_mean_temperature_difference(
            mtt, m.coolant_inlet_temperature_k, m.coolant_outlet_temperature_k)
    except CalcInputError as exc:
        return _check(name, m, "fail", numbers, method, refs, f"{note}condenser: {exc}")
    duty = barriers.condenser_duty(m.condenser_ua_w_per_k, 1.0, dt_lm)
    numbers.update({"log_mean_temperature_difference": _q(dt_lm, "K"),
                    "condenser_duty": _q(duty, "W")})
    passes = duty >= heat and u < u_flood
    note += ("level swell in the vessel is not checked here; flooding by Wallis with "
             f"C = {barriers.WALLIS_C:g} (the cautious end)")
    return _check(name, m, "pass" if passes else "fail", numbers, method, refs, note)


def _relief(c, m) -> dict:
    name, s, t = "Relief screening at the set pressure", c.s, c.out.get("mtt_k")
    method = f"relief.screening.{m.relief_system or 'unknown'}"
    refs = ("leung1986", "fauske1985", "fisher1992_diers", "ccps2017_relief", "methods_md")
    note = relief.SCREENING_NOTE
    need = _missing(m, ("set_pressure_pa", "vent_area_m2", "relief_system", "vessel_volume_m3",
                        "discharge_coefficient", "liquid_density_kg_per_m3",
                        "synthesis_activation_energy_j_per_mol"))
    if m.relief_system in ("vapour", "hybrid"):
        need += _missing(m, ("latent_heat_j_per_kg", "vapour_molar_mass_kg_per_mol"))
    need += [n for n, v in (("mtt_k", t), ("max_heat_release_rate_w_per_kg",
                                           s.max_heat_release_rate_w_per_kg),
                            ("specific_heat_capacity_j_per_kg_k",
                             s.specific_heat_capacity_j_per_kg_k)) if v is None]
    if m.relief_system in ("gassy", "hybrid"):
        need += [n for n, v in (("gas_release_mol_per_kg", s.gas_release_mol_per_kg),
                                ("specific_reaction_heat_j_per_kg",
                                 s.specific_reaction_heat_j_per_kg)) if not v]
    if need:
        return _check(name, m, "unknown", {}, method, refs, note, need)
    p, m0, vol, cp = m.set_pressure_pa, s.reaction_mass_kg, m.vessel_volume_m3, \
        s.specific_heat_capacity_j_per_kg_k
    v_f = 1.0 / m.liquid_density_kg_per_m3
    numbers = {"relief_temperature": _q(t, "K"), "set_pressure": _q(p, "Pa")}
    q, extra = _rates(c, m, t, numbers, "relief")
    flows, fluxes = [], []
    if m.relief_system in ("vapour", "hybrid"):
        v_fg = R * t / (p * m.vapour_molar_mass_kg_per_mol) - v_f
        w_t = relief.leung_tempered_mass_flow(m0, q, vol, m.latent_heat_j_per_kg, v_fg, cp, 0.0)
        omega = relief.omega_flashing(p, t, v_f, v_fg, m.latent_heat_j_per_kg, cp)
        g_t = relief.omega_critical_mass_flux(omega, p, v_f)
        flows.append(w_t)
        fluxes.append(g_t)
        numbers.update({"tempered_mass_flow": _q(w_t, "kg/s"), "omega": _q(omega, "1"),
                        "tempered_mass_flux": _q(g_t, "kg/(m2 s)")})
    if m.relief_system in ("gassy", "hybrid"):
        # gas evolves in proportion to the heat released (METHODS.md §13.2, derived)
        q_syn = numbers["synthesis_heat_release_at_relief"]["value"]
        mol_rate = s.gas_release_mol_per_kg * m0 * q_syn / s.specific_reaction_heat_j_per_kg
        q_gas = mol_rate * R * t / p
        alpha = 1.0 - m0 * v_f / vol
        numbers.update({"gas_release_rate": _q(mol_rate, "mol/s"),
                        "gas_volume_rate": _q(q_gas, "m3/s"), "void_fraction": _q(alpha, "1")})
        if alpha < 0.05:
            return _check(name, m, "unknown", numbers, method, refs,
                          f"{note}; the vessel is nearly full (void fraction {alpha:.3g}): the "
                          "screening form does not apply")
        w_g = relief.gassy_mass_flow(q_gas, m0, vol)
        g_g = relief.omega_critical_mass_flux(alpha, p, vol / m0)
        flows.append(w_g)
        fluxes.append(g_g)
        numbers.update({"gassy_mass_flow": _q(w_g, "kg/s"),
                        "gassy_mass_flux": _q(g_g, "kg/(m2 s)")})
    w, g = sum(flows), min(fluxes)
    area = relief.required_area(w, g, m.discharge_coefficient)
    numbers.update({"required_mass_flow": _q(w, "kg/s"), "mass_flux": _q(g, "kg/(m2 s)"),
                    "required_area": _q(area, "m2"), "installed_area": _q(m.vent_area_m2, "m2")})
    passes = m.vent_area_m2 >= area
    return _check(name, m, "pass" if passes else "fail", numbers, method, refs,
                  f"{extra}{note}; no credit taken for overpressure (Leung's ΔT = 0)")


def _tmr_at(c, temperature_k: float) -> float | None:
    s = c.s
    k = getattr(c, "kinetics", None)
    if k is not None and s.decomposition_energy_j_per_kg and s.specific_heat_capacity_j_per_kg_k:
        rise = s.decomposition_energy_j_per_kg / s.specific_heat_capacity_j_per_kg_k
        return tmr_simulated(k.model, k.parameters, k.reference_temperature_k, temperature_k,
                             rise).value
    if c.q_model is not None and s.specific_heat_capacity_j_per_kg_k:
        return tmr_zero_order_at(temperature_k, s.specific_heat_capacity_j_per_kg_k, *c.q_model)
    return None


def _time(c, m) -> dict:
    name, out = "Time for the emergency measure", c.out
    method, refs = "barriers.time_margin", ("stoessel2008", "methods_md")
    ratio_needed = c.cfg.minimum_time_ratio
    need = _missing(m, ("response_time_s",))
    mtsr, mtt = out.get("mtsr_k"), out.get("mtt_k")
    tmr_mtsr = out.get("tmr_ad_at_mtsr_s")
    if tmr_mtsr is None:
        need.append("tmr_ad_at_mtsr_s")
    if need:
        return _check(name, m, "unknown", {}, method, refs, missing=need)
    numbers = {"tmr_ad_at_mtsr": _q(tmr_mtsr, "s"), "response_time": _q(m.response_time_s, "s")}
    times = [tmr_mtsr]
    if mtt is not None and mtsr is not None and mtt <= mtsr:
        tmr_mtt = _tmr_at(c, mtt)
        if tmr_mtt is not None:
            numbers["tmr_ad_at_mtt"] = _q(tmr_mtt, "s")
            times.append(tmr_mtt)
    r = barriers.time_margin(min(times), m.response_time_s)
    numbers.update({"margin": _q(r["margin_s"], "s"), "ratio": _q(r["ratio"], "1"),
                    "required_ratio": _q(ratio_needed, "1")})
    passes = r["ratio"] >= ratio_needed
    return _check(name, m, "pass" if passes else "fail", numbers, method, refs,
                  f"the shorter TMRad (at MTSR, or at MTT when MTT is reached) against the "
                  f"response time; pass at a ratio of {ratio_needed:g} or more (common "
                  "practice, no source)")


def _interlock(c, m) -> dict:
    name, s, out = "Feed interlock: MTSR with dosing until the trip", c.s, c.out
    method, refs = "interlock.feed_interlock_mtsr", ("stoessel2008", "methods_md")
    if s.operation_mode != "semi_batch":
        return _check(name, m, "unknown", {}, method, refs,
                      "a feed interlock acts on the feed of a semi-batch step")
    x_ac = s.max_accumulation if s.max_accumulation is not None else c.parameters.get(
        "max_accumulation")
    need = _missing(m, ("trip_temperature_k", "response_time_s"))
    need += [n for n, v in (("initial_mass_fraction", s.initial_mass_fraction),
                            ("max_accumulation", x_ac),
                            ("specific_reaction_heat_j_per_kg", s.specific_reaction_heat_j_per_kg),
                            ("specific_heat_capacity_j_per_kg_k",
                             s.specific_heat_capacity_j_per_kg_k),
                            ("reaction_mass_kg", s.reaction_mass_kg)) if v is None]
    if need:
        return _check(name, m, "unknown", {}, method, refs, missing=need)
    if not 0.0 < x_ac < 1.0 or s.initial_mass_fraction >= 1.0:
        return _check(name, m, "unknown", {}, method, refs,
                      "the dosing model needs an accumulation strictly between 0 and 1 and "
                      "an initial charge below the final mass")
    t_d, m_final = s.dosing_time_s, s.reaction_mass_kg
    m0 = s.initial_mass_fraction * m_final
    e = m.synthesis_activation_energy_j_per_mol
    common = dict(process_temperature_k=s.process_temperature_k, initial_mass_kg=m0,
                  feed_mass_kg=m_final - m0, dosing_time_s=t_d,
                  rate_constant_per_s=rate_constant_from_accumulation(x_ac, t_d),
                  activation_energy_j_per_mol=e or 0.0,
                  reaction_heat_j=max(s.specific_reaction_heat_j_per_kg, 0.0) * m_final,
                  specific_heat_j_per_kg_k=s.specific_heat_capacity_j_per_kg_k,
                  trip_temperature_k=m.trip_temperature_k, response_time_s=m.response_time_s)
    worst, worst_at = None, None
    for f in FAILURE_FRACTIONS:
        r = feed_interlock_mtsr(**common, failure_time_s=f * t_d)
        if worst is None or r.mtsr_with_interlock_k > worst.mtsr_with_interlock_k:
            worst, worst_at = r, f * t_d
    limits = [v for v in (out.get("mtt_k"), out.get("td24_k")) if v is not None]
    numbers = {"mtsr_with_interlock": _q(worst.mtsr_with_interlock_k, "K"),
               "mtsr_feed_stopped_at_once": _q(worst.mtsr_feed_stopped_at_failure_k, "K"),
               "mtsr_feed_never_stopped": _q(worst.mtsr_feed_never_stopped_k, "K"),
               "failure_time": _q(worst_at, "s"),
               "trip_temperature": _q(m.trip_temperature_k, "K"),
               "response_time": _q(m.response_time_s, "s"),
               "trip_time_after_failure": _q(worst.trip_time_s, "s"),
               "rate_constant_at_process_temperature": _q(common["rate_constant_per_s"],
                                                          "1/s")}
    note = ("worst of failures at 1/4, 1/2, 3/4 and the end of dosing; the interlock must "
            "keep MTSR below MTT and TD24")
    if e is None:
        note += "; no synthesis activation energy entered: the rate taken as independent of T"
    if not limits:
        return _check(name, m, "unknown", numbers, method, refs, note, ["mtt_k", "td24_k"])
    limit = min(limits)
    numbers["limit"] = _q(limit, "K")
    passes = worst.mtsr_with_interlock_k < limit
    return _check(name, m, "pass" if passes else "fail", numbers, method, refs, note)


def barrier_checks(c) -> list[dict]:
    """Every check the step's measures call for, in the order of the measures."""
    checks = []
    for m in c.s.measures:
        try:
            if m.kind == "evaporative_cooling":
                checks.append(_evaporative_cooling(c, m))
            elif m.kind == "emergency_relief":
                checks.append(_relief(c, m))
            elif m.kind == "feed_interlock":
                checks.append(_interlock(c, m))
            elif m.kind in TIME_KINDS:
                checks.append(_time(c, m))
        except CalcInputError as exc:
            checks.append(_check("Barrier check", m, "unknown", {}, "refused", (),
                                 f"the check refused its inputs: {exc}"))
    return checks
