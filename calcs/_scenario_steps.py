"""Indicator steps of :func:`calcs.scenario.assess_step` (private; see that module)."""

from __future__ import annotations

import numpy as np

from calcs import criticality as crit
from calcs import td24_methods as tm
from calcs._scenario_barriers import barrier_checks
from calcs._scenario_context import _Ctx
from calcs._scenario_edges import _extrapolation, _mtsr_from_entered_accumulation
from calcs._scenario_kinetics import kinetic_td24, kinetic_tmr_at_mtsr
from calcs._scenario_point import operating_point
from calcs._scenario_vessel import _cooling, _end_pressure, _mtt, _solvent
from calcs.accumulation import analyse_accumulation
from calcs.constants import DAY, R
from calcs.errors import (
    CalcInputError,
    optional,
    require_absolute_temperature,
    require_finite,
    require_fraction,
    require_non_negative,
    require_positive,
)
from calcs.plausibility import unit_slip_warnings
from calcs.scenario_types import Assessment, AssessmentSettings, StepInputs
from calcs.td24_methods import td24_methods, td24_model
from calcs.tmr import td24, td_refusal, tmr_zero_order_at

NO_DECOMPOSITION = "no decomposition data: TD24 unknown, no class can be assigned"
NO_CALORIMETRY = "no calorimetry run: adiabatic temperature rise unknown"
TD24_BELOW_TP = "TD24 at or below the process temperature"


def run(s: StepInputs, cfg: AssessmentSettings) -> Assessment:
    """Validate, compute every indicator in order, and build the Assessment."""
    _validate(s)
    c = _Ctx(s, cfg)
    _adiabatic_rise(c)
    operating_point(c)
    _mtsr(c)
    _solvent(c)
    _mtt(c)
    _td24(c)
    _tmr_and_class(c)
    _extrapolation(c)
    _severity_probability(c)
    _cooling(c)
    _end_pressure(c)
    if s.measures:
        c.out["barrier_checks"] = tuple(barrier_checks(c))
        for check in c.out["barrier_checks"]:
            c.ref(*check["references"])
    for w in unit_slip_warnings(s, c.out):
        c.warn(w)
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
                 "heat_release_rate_at_reference_w_per_kg", "dosing_activation_energy_j_per_mol",
                 "accumulation_time_s"):
        optional(require_positive, name, getattr(s, name))
    for name in ("max_heat_release_rate_w_per_kg", "gas_release_mol_per_kg",
                 "decomposition_energy_j_per_kg"):
        optional(require_non_negative, name, getattr(s, name))
    optional(require_finite, "specific_reaction_heat_j_per_kg", s.specific_reaction_heat_j_per_kg)
    optional(require_fraction, "max_accumulation", s.max_accumulation)
    optional(require_fraction, "accumulation_on_mass_present", s.accumulation_on_mass_present)
    if s.initial_mass_fraction is not None and not (
            0.0 < require_finite("initial_mass_fraction", s.initial_mass_fraction) <= 1.0):
        raise CalcInputError("initial_mass_fraction", s.initial_mass_fraction,
                             "must be a fraction above 0 and at most 1")
    if s.phi_factor is not None and require_finite("phi_factor", s.phi_factor) < 1.0:
        raise CalcInputError("phi_factor", s.phi_factor, "must be at least 1")
    for beta, tp in s.peak_temperatures or ():
        require_positive("peak_temperatures heating rate", beta)
        require_absolute_temperature("peak_temperatures peak", tp)
    if s.series is not None:
        # above 1 is a feed beyond the stoichiometric amount: accepted, capped at 1 for the
        # accumulation (METHODS.md §1.2 step 4)
        fd = np.asarray(s.series.dosed_fraction, dtype=float)
        if fd.size and not fd.min() >= 0.0:
            raise CalcInputError("series.dosed_fraction", fd, "must not be negative")


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
    elif q_spec < 0.0:
        # heat taken up, not released: a cooling failure adds no rise (never below T_p)
        c.out["adiabatic_temperature_rise_k"] = 0.0
        c.methods["adiabatic_temperature_rise"] = "adiabatic.endothermic_no_rise"
        c.warn(f"the reaction is endothermic (reaction heat {q_spec / 1000:g} kJ/kg): no "
               "adiabatic temperature rise from the synthesis, MTSR taken as the process "
               "temperature; check the sign (heat released is entered as positive)")
        c.ref("stoessel2008")
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
    elif c.point is not None and c.point.mode in ("model", "no_credit"):
        # at the plant's dosing time, temperature and fill (calcs.operating_point)
        x = c.point.accumulation_on_mass_present
        out["mtsr_k"], out["mtsr_time_s"] = tp + x * dt, c.point.accumulation_time_s
        c.methods["mtsr"] = {"model": "mtsr.semi_batch.dosing_model",
                             "no_credit": "mtsr.semi_batch.no_credit"}[c.point.mode]
        c.parameters["accumulation_on_mass_present"] = x
        if c.point.accumulation_at_end_of_dosing is not None:
            c.parameters["accumulation_at_end_of_dosing"] = c.point.accumulation_at_end_of_dosing
    elif series is not None:
        # MTSR(t) = T_r(t) + X_ac(t)·ΔT_ad·m_final/m(t): heat released into the mass present,
        # T_r moved to the plant's T_p when they differ by less than the tolerance
        m_final = s.series.initial_mass_kg + s.series.feed_mass_kg
        t_r = s.series.reactor_temperature_k
        shift = c.parameters.get("temperature_shift_k", 0.0)
        base = tp if t_r is None else np.asarray(t_r, dtype=float) + shift
        mtsr_t = base + series.accumulation * (dt * m_final) / series.mass_kg
        i = int(np.argmax(mtsr_t))
        out["mtsr_k"], out["mtsr_time_s"] = float(mtsr_t[i]), float(series.time_s[i])
        c.methods["mtsr"] = "mtsr.semi_batch.series"
        c.parameters["accumulation_at_max_mtsr"] = float(series.accumulation[i])
        c.parameters["max_accumulation"] = series.max_accumulation
    elif s.accumulation_on_mass_present is not None:
        out["mtsr_k"] = tp + s.accumulation_on_mass_present * dt
        out["mtsr_time_s"] = s.accumulation_time_s
        c.methods["mtsr"] = "mtsr.semi_batch.accumulation_on_mass_present"
    elif s.max_accumulation is not None:
        _mtsr_from_entered_accumulation(c, tp, dt)
    else:
        out["mtsr_k"] = tp + dt
        c.methods["mtsr"] = "mtsr.semi_batch.worst_case_no_accumulation_data"
        c.warn("no accumulation data for the semi-batch step: MTSR taken as T_p + ΔT_ad")
    c.ref("stoessel2008")


def _td24(c: _Ctx) -> None:
    """TD24 by the first method of the table (:mod:`calcs.td24_methods`) after a fitted
    model; the warnings, parameters and references of the method chosen."""
    s, cfg = c.s, c.cfg
    cp = s.specific_heat_capacity_j_per_kg_k
    ea, tref = s.activation_energy_j_per_mol, s.reference_temperature_k
    peaks = s.peak_temperatures or ()
    if kinetic_td24(c):
        return
    inputs = {
        "activation_energy_j_per_mol": ea, "reference_temperature_k": tref,
        "heat_release_rate_at_reference_w_per_kg": s.heat_release_rate_at_reference_w_per_kg,
        "peak_temperatures": peaks, "decomposition_energy_j_per_kg":
            s.decomposition_energy_j_per_kg,
        "onset_temperature_k": s.onset_temperature_k, "phi_factor": s.phi_factor,
    }
    methods = td24_methods(onset_adiabatic=s.decomposition_method == "adiabatic", **inputs)
    if not methods:
        c.warn(NO_DECOMPOSITION)
        return
    method = methods[0]
    m = td24_model(
        method, specific_heat_capacity_j_per_kg_k=cp, **inputs,
        screening_activation_energy_j_per_mol=cfg.screening_activation_energy_j_per_mol,
        screening_heat_release_rate_w_per_kg=cfg.screening_heat_release_rate_w_per_kg,
        arc_detection_rate_k_per_s=cfg.arc_detection_rate_k_per_s)
    c.q_model = (m.activation_energy_j_per_mol, m.reference_temperature_k,
                 m.heat_release_rate_at_reference_w_per_kg)
    if method == tm.KINETIC:
        c.ref("townsend_tou1980")
    elif method == tm.KINETIC_KISSINGER:
        c.parameters["kissinger_activation_energy_j_per_mol"] = m.fit.activation_energy_j_per_mol
        c.parameters["kissinger_pre_exponential_per_s"] = m.fit.pre_exponential_per_s
        for w in m.fit.warnings:
            c.warn(f"Kissinger fit: {w}")
        c.ref("kissinger1957", "astm_e2890", "townsend_tou1980")
    elif method in (tm.ADIABATIC_PHI_CORRECTED, tm.ADIABATIC_UNCORRECTED):
        e = m.activation_energy_j_per_mol
        if ea is None:
            c.warn(f"adiabatic onset without E_a: {e / 1000:g} kJ/mol assumed for the "
                   "φ correction and the extrapolation")
            c.parameters["assumed_activation_energy_j_per_mol"] = e
        if method == tm.ADIABATIC_UNCORRECTED:
            c.warn("φ not given: adiabatic onset not φ-corrected")
        else:
            c.parameters["corrected_onset_k"] = m.corrected_onset_k
            c.ref("fisher_goetz1991", "astm_e1981")
        if cp is not None:
            c.parameters["arc_detection_rate_k_per_s"] = cfg.arc_detection_rate_k_per_s
        else:
            c.q_model = None
        c.ref("townsend_tou1980")
    else:  # tm.DSC_ONSET_SCREENING
        e, q = m.activation_energy_j_per_mol, m.heat_release_rate_at_reference_w_per_kg
        c.parameters.update({"screening_activation_energy_j_per_mol": e,
                             "screening_heat_release_rate_w_per_kg": q,
                             "td24_label": "screening estimate"})
        c.warn(f"TD24 is a screening estimate from a single DSC onset (assumed Ea {e / 1000:g} "
               f"kJ/mol, q {q:g} W/kg at onset)")
        c.ref("keller1997", "townsend_tou1980")
    c.methods["td24"] = method
    c.lowest_measured_k = {"td24.kinetic": tref,
                           "td24.kinetic_kissinger": min((p[1] for p in peaks), default=None)
                           }.get(method, s.onset_temperature_k)
    if cp is None:
        c.q_model = None
        c.warn("no specific heat capacity: TD24 unknown, no class can be assigned")
        return
    t = td24(cp, *c.q_model)
    if t is None:
        c.warn(f"TD24 unknown: {td_refusal(DAY, cp, *c.q_model)}")
    c.out["td24_k"] = t


def _tmr_and_class(c: _Ctx) -> None:
    s, out = c.s, c.out
    tp, mtsr, td = s.process_temperature_k, out.get("mtsr_k"), out.get("td24_k")
    cp = s.specific_heat_capacity_j_per_kg_k
    if kinetic_tmr_at_mtsr(c):
        pass
    elif c.q_model is not None and mtsr is not None and cp is not None:
        out["tmr_ad_at_mtsr_s"] = tmr_zero_order_at(mtsr, cp, *c.q_model)
        c.methods["tmr_ad_at_mtsr"] = "tmr.zero_order"
        if s.decomposition_energy_j_per_kg:
            b = c.q_model[0] * (s.decomposition_energy_j_per_kg / cp) / (R * mtsr**2)
            c.parameters["b_parameter_at_mtsr"] = b
            if b < 10.0:
                c.warn(f"B = {b:.3g} < 10 at MTSR: the zero-order TMRad is strongly "
                       "conservative")
    out["criticality_class"] = crit.criticality_class(tp, mtsr, out.get("mtt_k"), td)
    if out.get("mtt_at_ambient_pressure_k") is not None:
        out["criticality_class_at_ambient_pressure"] = crit.criticality_class(
            tp, mtsr, out["mtt_at_ambient_pressure_k"], td)
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


