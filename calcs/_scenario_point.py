"""Operating-point step of :func:`calcs.scenario.assess_step`: where a semi-batch step's
MTSR and peak heat release come from when the lab series was measured at another dosing
time, temperature or fill (private; see :mod:`calcs.operating_point`)."""

from __future__ import annotations

import numpy as np

from calcs import operating_point as op
from calcs._scenario_context import _Ctx
from calcs.errors import CalcInputError

NO_PLANT_DOSING_TIME = ("the step has no dosing time: the lab series' time base "
                        "({td:.4g} min) is taken for the plant; enter the plant's dosing time")


def lab_basis(series, process_temperature_k: float) -> op.LabBasis:
    """The series' dosing time (first time the dosed fraction reaches its maximum, as the
    fit reads it), its temperature after dosing (mean T_r; T_p when the file has none) and
    its initial charge ratio."""
    t = np.asarray(series.time_s, dtype=float)
    fd = np.asarray(series.dosed_fraction, dtype=float)
    fd_max = float(fd.max())
    i_d = int(np.argmax(fd >= fd_max - 1e-6 * max(fd_max, 1.0)))
    temp = process_temperature_k
    if series.reactor_temperature_k is not None:
        tr = np.asarray(series.reactor_temperature_k, dtype=float)
        temp = float(tr[i_d:].mean())
    m0, mf = series.initial_mass_kg, series.feed_mass_kg
    return op.LabBasis(float(t[i_d] - t[0]), temp, m0 / (m0 + mf))


def operating_point(c: _Ctx) -> None:
    """Set ``c.point`` and record the lab basis beside the plant's point, the mode, why, and
    a warning when they differ."""
    s = c.s
    if s.operation_mode != "semi_batch":
        return
    if s.series is None:
        if s.max_accumulation is not None and s.accumulation_on_mass_present is None:
            c.point = op.plant_point(None, None, c.specific_heat, s.dosing_time_s,
                                     s.process_temperature_k, s.initial_mass_fraction)
            c.parameters["operating_point_mode"] = c.point.mode
            c.parameters["operating_point_basis"] = c.point.reason
        return
    ser = s.series
    lab = lab_basis(ser, s.process_temperature_k)
    if np.asarray(ser.dosed_fraction, dtype=float).max() <= 0.0 or lab.dosing_time_s <= 0.0:
        return  # no dosing in the record: the series analysis says so
    if s.dosing_time_s is None:
        c.warn(NO_PLANT_DOSING_TIME.format(td=lab.dosing_time_s / 60))
    model = None
    if op.differences(lab, s.dosing_time_s, s.process_temperature_k, s.initial_mass_fraction):
        try:
            model = op.model_from_series(
                ser.time_s, ser.heat_release_rate_w, ser.dosed_fraction, ser.initial_mass_kg,
                ser.feed_mass_kg, ser.reactor_temperature_k, s.process_temperature_k,
                s.dosing_activation_energy_j_per_mol)
            lab = model.lab
        except CalcInputError as exc:
            c.warn(f"no dosing model from the series ({exc.argument}: {exc.rule})")
    peak = s.max_heat_release_rate_w_per_kg or c.series_peak_w_per_kg
    p = op.plant_point(lab, model, c.specific_heat, s.dosing_time_s, s.process_temperature_k,
                       s.initial_mass_fraction, peak)
    c.point = p
    c.parameters.update({
        "operating_point_mode": p.mode, "operating_point_basis": p.reason,
        "lab_dosing_time_s": lab.dosing_time_s, "lab_temperature_k": lab.temperature_k,
        "lab_initial_mass_fraction": lab.initial_mass_fraction,
        "plant_dosing_time_s": p.dosing_time_s or lab.dosing_time_s,
        "plant_temperature_k": s.process_temperature_k,
        "plant_initial_mass_fraction": (lab.initial_mass_fraction if s.initial_mass_fraction
                                        is None else s.initial_mass_fraction)})
    if p.differences:
        c.parameters["operating_point_differences"] = ", ".join(p.differences)
        c.warn(op.describe(p))
    if p.mode == "series" and abs(s.process_temperature_k - lab.temperature_k) > 1e-9:
        c.parameters["temperature_shift_k"] = s.process_temperature_k - lab.temperature_k
    if p.mode == "model":
        c.parameters["dosing_model_rate_constant_per_s"] = p.rate_constant_per_s
        c.parameters["dosing_model_peak_scale"] = model.peak_scale
        if model.activation_energy_j_per_mol is not None:
            c.parameters["dosing_activation_energy_j_per_mol"] = \
                model.activation_energy_j_per_mol
        for w in model.warnings:
            c.warn(f"dosing model: {w}")
        c.ref("steinbach1999", "westerterp_molga2006")
    c.ref("stoessel2008", "methods_md")
