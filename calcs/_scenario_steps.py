"""Indicator steps of :func:`calcs.scenario.assess_step` (private; see that module)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calcs import criticality as crit
from calcs.accumulation import analyse_accumulation
from calcs.constants import R
from calcs.cooling import cooling_capacity
from calcs.errors import (
    CalcInputError,
    optional,
    require_absolute_temperature,
    require_finite,
    require_fraction,
    require_non_negative,
    require_positive,
)
from calcs.kinetics import kissinger
from calcs.phi import corrected_onset_temperature
from calcs.pressure import closed_vessel_mtt, closed_vessel_pressure
from calcs.scenario import Assessment, AssessmentSettings, StepInputs
from calcs.tmr import td24, tmr_zero_order_at
from calcs.vapour import (
    AntoineInputs,
    antoine_boiling_point,
    antoine_from_chemicals,
    antoine_vapour_pressure,
    extrapolation_warning,
)

NO_DECOMPOSITION = "no decomposition data: TD24 unknown, no class can be assigned"
NO_CALORIMETRY = "no calorimetry run: adiabatic temperature rise unknown"
TD24_BELOW_TP = "TD24 at or below the process temperature"


@dataclass
class _Ctx:
    s: StepInputs
    cfg: AssessmentSettings
    out: dict[str, Any] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    methods: dict[str, str] = field(default_factory=dict)
    parameters: dict[str, Any] = field(default_factory=dict)
    refs: list[str] = field(default_factory=list)
    q_model: tuple[float, float, float] | None = None  # (E_a, T_ref, q_ref)
    antoine: AntoineInputs | None = None
    specific_heat: float | None = None
    series_peak_w_per_kg: float | None = None

    def ref(self, *keys: str) -> None:
        self.refs.extend(k for k in keys if k not in self.refs)

    def warn(self, text: str | None) -> None:
        if text and text not in self.warnings:
            self.warnings.append(text)


def run(s: StepInputs, cfg: AssessmentSettings) -> Assessment:
    """Validate, compute every indicator in order, and build the Assessment."""
    _validate(s)
    c = _Ctx(s, cfg)
    _adiabatic_rise(c)
    _mtsr(c)
    _solvent(c)
    _mtt(c)
    _td24(c)
    _tmr_and_class(c)
    _severity_probability(c)
    _cooling(c)
    _end_pressure(c)
    return Assessment(**c.out, warnings=tuple(c.warnings), methods=c.methods,
                      parameters=c.parameters, references=tuple(c.refs))


def _validate(s: StepInputs) -> None:
    if s.operation_mode not in ("batch", "semi_batch"):
        raise CalcInputError("operation_mode", s.operation_mode, "must be 'batch' or 'semi_batch'")
    if s.system not in ("open", "closed"):
        raise CalcInputError("system", s.system, "must be 'open' or 'closed'")
    if s.decomposition_method not in (None, "dsc", "adiabatic"):
        raise CalcInputError("decomposition_method", s.decomposition_method,
                             "must be 'dsc', 'adiabatic' or None")
    require_absolute_temperature("process_temperature_k", s.process_temperature_k)
    for name in ("mtt_override_k", "vessel_coolant_temperature_k", "onset_temperature_k",
                 "reference_temperature_k"):
        optional(require_absolute_temperature, name, getattr(s, name))
    for name in ("reaction_mass_kg", "specific_heat_capacity_j_per_kg_k", "operating_pressure_pa",
                 "dosing_time_s", "vessel_heat_transfer_area_m2", "vessel_u_w_per_m2_k",
                 "vessel_relief_set_pressure_pa", "vessel_design_pressure_pa",
                 "vessel_headspace_m3", "activation_energy_j_per_mol",
                 "heat_release_rate_at_reference_w_per_kg"):
        optional(require_positive, name, getattr(s, name))
    for name in ("max_heat_release_rate_w_per_kg", "gas_release_mol_per_kg",
                 "decomposition_energy_j_per_kg"):
        optional(require_non_negative, name, getattr(s, name))
    optional(require_finite, "specific_reaction_heat_j_per_kg", s.specific_reaction_heat_j_per_kg)
    optional(require_fraction, "max_accumulation", s.max_accumulation)
    if s.phi_factor is not None and require_finite("phi_factor", s.phi_factor) < 1.0:
        raise CalcInputError("phi_factor", s.phi_factor, "must be at least 1")
    for beta, tp in s.peak_temperatures or ():
        require_positive("peak_temperatures heating rate", beta)
        require_absolute_temperature("peak_temperatures peak", tp)
    if s.series is not None:
        fd = np.asarray(s.series.dosed_fraction, dtype=float)
        if fd.size and not (fd.min() >= 0.0 and fd.max() <= 1.0):
            raise CalcInputError("series.dosed_fraction", fd, "must be a fraction between 0 and 1")


def _adiabatic_rise(c: _Ctx) -> None:
    s, cp = c.s, c.s.specific_heat_capacity_j_per_kg_k
    q_spec = s.specific_reaction_heat_j_per_kg
    if s.series is not None:
        ser = s.series
        a = analyse_accumulation(
            ser.time_s, ser.heat_release_rate_w, ser.dosed_fraction, cp or 1.0,
            ser.initial_mass_kg, ser.feed_mass_kg, ser.reactor_temperature_k,
            s.process_temperature_k, c.cfg.end_of_reaction_fraction)
        c.out["_series"] = a
        c.series_peak_w_per_kg = a.max_heat_release_rate_w_per_kg
        for w in a.warnings:
            c.warn(f"calorimetry series: {w}")
        c.parameters["series_end_criterion"] = a.end_criterion
        c.ref("harsbook_ch5", "methods_md")
        if q_spec is None:
            q_spec = a.specific_heat_j_per_kg
            c.methods["specific_reaction_heat"] = "series.trapezoid_per_final_mass"
    elif q_spec is not None:
        c.methods["specific_reaction_heat"] = "entered"
    c.specific_heat = q_spec
    if q_spec is None:
        c.warn(NO_CALORIMETRY)
    elif cp is None:
        c.warn("no specific heat capacity: adiabatic temperature rise unknown")
    else:
        c.out["adiabatic_temperature_rise_k"] = q_spec / cp
        c.methods["adiabatic_temperature_rise"] = "adiabatic.specific_heat_over_cp"
        c.ref("stoessel2008")


def _mtsr(c: _Ctx) -> None:
    s, out = c.s, c.out
    series = out.pop("_series", None)
    dt = out.get("adiabatic_temperature_rise_k")
    if dt is None:
        return
    tp = s.process_temperature_k
    if s.operation_mode == "batch":
        out["mtsr_k"], c.methods["mtsr"] = tp + dt, "mtsr.batch"
    elif series is not None:
        # MTSR(t) = T_r(t) + X_ac(t)·ΔT_ad·m_final/m(t): heat released into the mass present
        m_final = s.series.initial_mass_kg + s.series.feed_mass_kg
        t_r = s.series.reactor_temperature_k
        base = tp if t_r is None else np.asarray(t_r, dtype=float)
        mtsr_t = base + series.accumulation * (dt * m_final) / series.mass_kg
        i = int(np.argmax(mtsr_t))
        out["mtsr_k"], out["mtsr_time_s"] = float(mtsr_t[i]), float(series.time_s[i])
        c.methods["mtsr"] = "mtsr.semi_batch.series"
        c.parameters["accumulation_at_max_mtsr"] = float(series.accumulation[i])
        c.parameters["max_accumulation"] = series.max_accumulation
    elif s.max_accumulation is not None:
        out["mtsr_k"] = tp + s.max_accumulation * dt
        c.methods["mtsr"] = "mtsr.semi_batch.max_accumulation"
    else:
        out["mtsr_k"] = tp + dt
        c.methods["mtsr"] = "mtsr.semi_batch.worst_case_no_accumulation_data"
        c.warn("no accumulation data for the semi-batch step: MTSR taken as T_p + ΔT_ad")
    c.ref("stoessel2008")


def _solvent(c: _Ctx) -> None:
    s = c.s
    if s.solvent_antoine is not None:
        c.antoine = s.solvent_antoine
        c.parameters["vapour_pressure_source"] = s.solvent_antoine.source
    elif s.solvent_cas:
        c.antoine = antoine_from_chemicals(s.solvent_cas.strip())
        if c.antoine is None:
            c.warn(f"no Antoine data in the chemicals Poling set for CAS {s.solvent_cas}")
        else:
            c.parameters["vapour_pressure_source"] = c.antoine.source
            c.ref("poling2001")


def _pressure(c: _Ctx, name: str) -> float:
    p = getattr(c.s, name)
    if p is None:
        p = c.cfg.ambient_pressure_pa
        c.warn(f"operating pressure not given: {p:.0f} Pa (1 atm) assumed")
        c.parameters["operating_pressure_pa_assumed"] = p
    return p


def _mtt(c: _Ctx) -> None:
    s = c.s
    src = "antoine" if s.solvent_antoine is not None else "chemicals"
    if s.mtt_override_k is not None:
        c.out["mtt_k"], c.methods["mtt"] = s.mtt_override_k, "mtt.override"
        return
    if s.system == "open":
        if c.antoine is None:
            c.warn("no solvent vapour-pressure data: MTT (boiling point) unknown")
            return
        t = antoine_boiling_point(_pressure(c, "operating_pressure_pa"), c.antoine)
        c.out["mtt_k"], c.methods["mtt"] = t, f"mtt.boiling_point.{src}"
        c.warn(extrapolation_warning(t, c.antoine))
        return
    p_set, kind = s.vessel_relief_set_pressure_pa, "relief"
    if p_set is None and s.vessel_design_pressure_pa is not None:
        p_set, kind = s.vessel_design_pressure_pa, "design"
        c.warn("no relief set pressure: the design pressure is used as the closed-vessel limit")
    if p_set is None:
        c.warn("no relief set or design pressure: MTT of the closed vessel unknown")
        return
    model = _closed_model(c)
    if model is None:
        return
    pvap, pad, n_gas = model
    t = closed_vessel_mtt(p_set, pvap, pad, s.process_temperature_k, n_gas, s.vessel_headspace_m3)
    if t is None:
        c.warn("closed vessel stays below its set pressure up to 1500 K: MTT unknown")
        return
    if t == s.process_temperature_k:
        c.warn("closed vessel at or above its set pressure already at the process temperature")
    c.out["mtt_k"], c.methods["mtt"] = t, f"mtt.closed_vessel_{kind}"
    if c.antoine is not None:
        c.warn(extrapolation_warning(t, c.antoine))
    c.ref("stoessel2008")


def _closed_model(c: _Ctx):
    """(P_vap(T) callable, pad pressure at T_p, gas amount) of the closed vessel, or None."""
    s = c.s
    if c.antoine is None:
        c.warn("no solvent vapour-pressure data: closed-vessel pressure counts pad gas only")
        def pvap(t: float) -> float:
            return 0.0
    else:
        ant = c.antoine
        def pvap(t: float) -> float:
            return antoine_vapour_pressure(t, ant)
    p_op = _pressure(c, "operating_pressure_pa")
    p_v0 = pvap(s.process_temperature_k)
    pad = max(p_op - p_v0, 0.0)
    if p_v0 > p_op:
        c.warn("solvent vapour pressure at T_p exceeds the operating pressure: no pad gas counted")
    c.parameters["pad_pressure_at_process_temperature_pa"] = pad
    n_gas = 0.0
    if s.gas_release_mol_per_kg:
        if s.reaction_mass_kg is None or s.vessel_headspace_m3 is None:
            c.warn("gas release given without reaction mass or headspace: closed-vessel "
                   "pressure unknown")
            return None
        n_gas = s.gas_release_mol_per_kg * s.reaction_mass_kg
        c.parameters["gas_released_mol"] = n_gas
    return pvap, pad, n_gas


def _td24(c: _Ctx) -> None:
    s, cfg = c.s, c.cfg
    cp = s.specific_heat_capacity_j_per_kg_k
    ea, tref, qref = s.activation_energy_j_per_mol, s.reference_temperature_k, \
        s.heat_release_rate_at_reference_w_per_kg
    peaks = s.peak_temperatures or ()
    if ea is not None and tref is not None and qref is not None:
        c.q_model, method = (ea, tref, qref), "td24.kinetic"
        c.ref("townsend_tou1980")
    elif len(peaks) >= 3 and s.decomposition_energy_j_per_kg:
        fit = kissinger([p[0] for p in peaks], [p[1] for p in peaks])
        t_ref = min(p[1] for p in peaks)
        q = s.decomposition_energy_j_per_kg * fit.pre_exponential_per_s * math.exp(
            -fit.activation_energy_j_per_mol / (R * t_ref))
        c.q_model, method = (fit.activation_energy_j_per_mol, t_ref, q), "td24.kinetic_kissinger"
        c.parameters["kissinger_activation_energy_j_per_mol"] = fit.activation_energy_j_per_mol
        c.parameters["kissinger_pre_exponential_per_s"] = fit.pre_exponential_per_s
        for w in fit.warnings:
            c.warn(f"Kissinger fit: {w}")
        c.ref("kissinger1957", "astm_e2890", "townsend_tou1980")
    elif s.onset_temperature_k is not None and s.decomposition_method == "adiabatic":
        e = ea if ea is not None else cfg.screening_activation_energy_j_per_mol
        if ea is None:
            c.warn(f"adiabatic onset without E_a: {e / 1000:g} kJ/mol assumed for the "
                   "φ correction and the extrapolation")
            c.parameters["assumed_activation_energy_j_per_mol"] = e
        phi = s.phi_factor
        if phi is None:
            c.warn("φ not given: adiabatic onset not φ-corrected")
            method, t_on = "td24.adiabatic_uncorrected", s.onset_temperature_k
        else:
            method = "td24.adiabatic_phi_corrected"
            t_on = corrected_onset_temperature(s.onset_temperature_k, e, phi)
            c.parameters["corrected_onset_k"] = t_on
            c.ref("fisher_goetz1991", "astm_e1981")
        if cp is not None:
            # at the corrected onset the adiabatic self-heat rate equals the detection threshold
            q = cp * cfg.arc_detection_rate_k_per_s
            c.q_model = (e, t_on, q)
            c.parameters["arc_detection_rate_k_per_s"] = cfg.arc_detection_rate_k_per_s
        c.ref("townsend_tou1980")
    elif s.onset_temperature_k is not None:
        e = ea if ea is not None else cfg.screening_activation_energy_j_per_mol
        q = cfg.screening_heat_release_rate_w_per_kg
        c.q_model, method = (e, s.onset_temperature_k, q), "td24.dsc_onset_screening"
        c.parameters.update({"screening_activation_energy_j_per_mol": e,
                             "screening_heat_release_rate_w_per_kg": q,
                             "td24_label": "screening estimate"})
        c.warn(f"TD24 is a screening estimate from a single DSC onset (assumed Ea {e / 1000:g} "
               f"kJ/mol, q {q:g} W/kg at onset)")
        c.ref("keller1997", "townsend_tou1980")
    else:
        c.warn(NO_DECOMPOSITION)
        return
    c.methods["td24"] = method
    if cp is None:
        c.q_model = None
        c.warn("no specific heat capacity: TD24 unknown, no class can be assigned")
        return
    t = td24(cp, *c.q_model)
    if t is None:
        c.warn("TD24 outside 150-1500 K for the decomposition data given")
    c.out["td24_k"] = t


def _tmr_and_class(c: _Ctx) -> None:
    s, out = c.s, c.out
    tp, mtsr, td = s.process_temperature_k, out.get("mtsr_k"), out.get("td24_k")
    cp = s.specific_heat_capacity_j_per_kg_k
    if c.q_model is not None and mtsr is not None and cp is not None:
        out["tmr_ad_at_mtsr_s"] = tmr_zero_order_at(mtsr, cp, *c.q_model)
        c.methods["tmr_ad_at_mtsr"] = "tmr.zero_order"
        if s.decomposition_energy_j_per_kg:
            b = c.q_model[0] * (s.decomposition_energy_j_per_kg / cp) / (R * mtsr**2)
            c.parameters["b_parameter_at_mtsr"] = b
            if b < 10.0:
                c.warn(f"B = {b:.3g} < 10 at MTSR: the zero-order TMRad is strongly "
                       "conservative")
    out["criticality_class"] = crit.criticality_class(tp, mtsr, out.get("mtt_k"), td)
    if out["criticality_class"] is not None:
        c.methods["criticality_class"] = "criticality.stoessel"
        c.ref("stoessel1993", "stoessel2008")
    elif td is not None:
        c.warn("MTSR or MTT unknown: no class can be assigned")
    out["td24_below_process_temperature"] = crit.td24_at_or_below_process_temperature(tp, td)
    if out["td24_below_process_temperature"]:
        c.warn(TD24_BELOW_TP)
    mtt = out.get("mtt_k")
    if mtt is not None and mtt <= tp:
        c.warn("MTT at or below the process temperature")


def _severity_probability(c: _Ctx) -> None:
    s, out, cfg = c.s, c.out, c.cfg
    sev_scale, prob_scale = cfg.severity(), cfg.probability()
    dt = out.get("adiabatic_temperature_rise_k")
    mtsr, td = out.get("mtsr_k"), out.get("td24_k")
    cp = s.specific_heat_capacity_j_per_kg_k
    if dt is not None:
        c.methods["severity"] = "severity.synthesis_adiabatic_rise"
        if (mtsr is not None and td is not None and mtsr >= td
                and s.decomposition_energy_j_per_kg and cp):
            # the runaway triggers the decomposition: count its rise as well
            dt = dt + s.decomposition_energy_j_per_kg / cp
            c.methods["severity"] = "severity.synthesis_plus_decomposition_adiabatic_rise"
        out["severity"] = crit.severity(dt, sev_scale)
        if s.system == "closed" and out["severity"] == sev_scale.labels[0]:
            c.warn(f"severity '{out['severity']}' assumes no pressure effect; the system is closed")
    out["probability"] = crit.probability(out.get("tmr_ad_at_mtsr_s"), prob_scale)
    if out["probability"] is not None:
        c.methods["probability"] = "probability.tmr_ad_at_mtsr"
    out["risk_cell"] = crit.risk_cell(out.get("severity"), out["probability"], sev_scale,
                                      prob_scale, cfg.risk_matrix)
    if out["risk_cell"] is not None:
        c.methods["risk_cell"] = "risk_matrix"
        c.parameters["risk_matrix"] = cfg.risk_matrix.label
        c.parameters["severity_scale"], c.parameters["probability_scale"] = (
            sev_scale.name, prob_scale.name)


def _cooling(c: _Ctx) -> None:
    s, out = c.s, c.out
    cap = None
    if None not in (s.vessel_u_w_per_m2_k, s.vessel_heat_transfer_area_m2,
                    s.vessel_coolant_temperature_k):
        cap = cooling_capacity(s.vessel_u_w_per_m2_k, s.vessel_heat_transfer_area_m2,
                               s.process_temperature_k, s.vessel_coolant_temperature_k)
        out["cooling_capacity_w"], c.methods["cooling_capacity"] = cap, "cooling.ua_delta_t"
        if cap <= 0.0:
            c.warn("coolant not colder than the process: no cooling capacity")
    peak_w_per_kg, how = s.max_heat_release_rate_w_per_kg, "entered"
    if peak_w_per_kg is None and c.series_peak_w_per_kg is not None:
        peak_w_per_kg, how = c.series_peak_w_per_kg, "series"
    if peak_w_per_kg is not None and s.reaction_mass_kg is not None:
        peak = peak_w_per_kg * s.reaction_mass_kg
        out["plant_peak_heat_release_w"] = peak
        c.methods["plant_peak_heat_release"] = f"cooling.lab_specific_peak_times_mass.{how}"
        if cap is not None and peak > 0.0:
            out["cooling_margin"] = cap / peak
            c.methods["cooling_margin"] = "cooling.capacity_over_peak"
            if cap < peak:
                c.warn("cooling capacity below the plant peak heat release")
            elif cap / peak < c.cfg.minimum_cooling_margin:
                c.warn(f"cooling margin {cap / peak:.2f} below {c.cfg.minimum_cooling_margin:g} "
                       "(common practice, no source)")
    if (s.operation_mode == "semi_batch" and cap is not None and cap > 0.0
            and c.specific_heat is not None and s.reaction_mass_kg is not None):
        t_min = max(c.specific_heat, 0.0) * s.reaction_mass_kg / cap
        out["minimum_dosing_time_s"] = t_min
        c.methods["minimum_dosing_time"] = "cooling.dosing_controlled_q_tot_over_q_ex"
        if s.dosing_time_s is not None and s.dosing_time_s < t_min:
            c.warn("dosing time shorter than the minimum dosing time at the plant cooling "
                   "capacity")
    if cap is not None or "plant_peak_heat_release_w" in out:
        c.ref("methods_md")


def _end_pressure(c: _Ctx) -> None:
    s, out = c.s, c.out
    mtsr = out.get("mtsr_k")
    if s.system != "closed" or mtsr is None:
        return
    model = _closed_model(c)  # repeated warnings are dropped by c.warn
    if model is None:
        return
    pvap, pad, n_gas = model
    out["end_pressure_pa"] = closed_vessel_pressure(
        mtsr, pvap(mtsr), pad, s.process_temperature_k, n_gas, s.vessel_headspace_m3)
    c.methods["end_pressure"] = "pressure.closed_vessel_at_mtsr"
    p_set = s.vessel_relief_set_pressure_pa or s.vessel_design_pressure_pa
    if p_set is not None and out["end_pressure_pa"] > p_set:
        c.warn("pressure at MTSR exceeds the vessel's set pressure")
    if c.antoine is not None:
        c.warn(extrapolation_warning(mtsr, c.antoine))
