"""Vessel-side steps of :func:`calcs.scenario.assess_step`: solvent, MTT, cooling, end pressure.

Private; the context object ``c`` is :class:`calcs._scenario_context._Ctx`.
"""

from __future__ import annotations

from calcs import mtt_methods as mm
from calcs._scenario_context import _Ctx
from calcs.cooling import cooling_capacity
from calcs.mtt_methods import mtt, mtt_methods
from calcs.pressure import closed_vessel_pressure
from calcs.vapour import (
    antoine_boiling_point,
    antoine_from_chemicals,
    antoine_vapour_pressure,
    extrapolation_warning,
)


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
    """MTT by the first method of the table (:mod:`calcs.mtt_methods`); why it is unknown when
    the table has none."""
    s = c.s
    src = "antoine" if s.solvent_antoine is not None else "chemicals"
    relief, design = s.vessel_relief_set_pressure_pa, s.vessel_design_pressure_pa
    methods = mtt_methods(system=s.system, override_k=s.mtt_override_k,
                          vapour_data=c.antoine is not None, non_volatile=s.non_volatile_declared,
                          relief_set_pressure_pa=relief, design_pressure_pa=design)
    method = methods[0] if methods else None
    if method == mm.OVERRIDE:
        c.out["mtt_k"], c.methods["mtt"] = s.mtt_override_k, method
        return
    if s.system == "open":
        if method is None:
            c.warn("no solvent vapour-pressure data: MTT (boiling point) unknown")
            return
        p_op = _pressure(c, "operating_pressure_pa")
        t = mtt(method=method, antoine=c.antoine, operating_pressure_pa=p_op)
        c.out["mtt_k"], c.methods["mtt"] = t, f"{method}.{src}"
        c.warn(extrapolation_warning(t, c.antoine))
        if p_op < c.cfg.ambient_pressure_pa:
            _vacuum(c, p_op, t)
        return
    if relief is None and design is not None:
        c.warn("no relief set pressure: the design pressure is used as the closed-vessel limit")
    if relief is None and design is None:
        c.warn("no relief set or design pressure: MTT of the closed vessel unknown")
        return
    if method is None:
        c.warn(NO_VAPOUR_CLOSED)
        return
    model = _closed_model(c)
    if model is None:
        return
    pvap, pad, n_gas = model
    t = mtt(method=method, relief_set_pressure_pa=relief, design_pressure_pa=design,
            vapour_pressure=pvap, pad_pressure_pa=pad,
            process_temperature_k=s.process_temperature_k, gas_amount_mol=n_gas,
            headspace_m3=s.vessel_headspace_m3)
    if t is None:
        c.warn("closed vessel stays below its set pressure up to 1500 K: MTT unknown")
        return
    if t == s.process_temperature_k:
        c.warn("closed vessel at or above its set pressure already at the process temperature")
    c.out["mtt_k"], c.methods["mtt"] = t, method
    if c.antoine is not None:
        c.warn(extrapolation_warning(t, c.antoine))
    c.ref("stoessel2008")


NO_VAPOUR_CLOSED = (
    "MTT unknown: the closed vessel has no solvent vapour-pressure data (missing input: the "
    "solvent, by CAS number or Antoine constants, or a recorded declaration that the reaction "
    "mass is non-volatile); pad gas alone would put MTT far above any liquid's boiling point, "
    "so no class is assigned"
)


def _vacuum(c: _Ctx, p_op: float, t: float) -> None:
    """Below ambient pressure the boiling barrier lasts only while vacuum and condenser do."""
    p_amb = c.cfg.ambient_pressure_pa
    t_amb = antoine_boiling_point(p_amb, c.antoine)
    c.out["mtt_at_ambient_pressure_k"] = t_amb
    c.parameters["ambient_pressure_pa"] = p_amb
    c.warn(f"operating under vacuum ({p_op / 1e5:.3g} bar absolute): MTT is the boiling point "
           f"at that pressure ({t - 273.15:.1f} °C), a barrier only while the vacuum and the "
           "condenser survive the cooling failure; if the vacuum is lost the mass boils at "
           f"{t_amb - 273.15:.1f} °C (1 atm), and the class at 1 atm is given beside the class")
    c.warn(extrapolation_warning(t_amb, c.antoine))


def _closed_model(c: _Ctx):
    """(P_vap(T) callable, pad pressure at T_p, gas amount) of the closed vessel, or None."""
    s = c.s
    if c.antoine is None:
        if not s.non_volatile_declared:
            return None  # pad gas alone would understate the pressure: unknown, not low
        c.warn("the reaction mass is declared non-volatile (recorded declaration): the "
               "closed-vessel pressure counts pad gas and released gas only")
        c.parameters["vapour_pressure_source"] = "none: reaction mass declared non-volatile"

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
    point = c.point
    if point is not None and point.mode in ("model", "no_credit"):
        # the lab's peak belongs to the lab's dosing time: the plant's point instead
        peak_w_per_kg = point.peak_heat_release_w_per_kg
    if peak_w_per_kg is not None and s.reaction_mass_kg is not None:
        peak = peak_w_per_kg * s.reaction_mass_kg
        out["plant_peak_heat_release_w"] = peak
        c.methods["plant_peak_heat_release"] = (
            f"cooling.lab_specific_peak_times_mass.{how}" if point is None
            or point.mode not in ("model", "no_credit")
            else f"cooling.{'dosing_model' if point.mode == 'model' else 'no_credit'}"
                 "_peak_times_mass")
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
