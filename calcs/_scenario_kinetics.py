"""TD24 and TMRad at MTSR of a step from fitted decomposition kinetics (private).

Called by :mod:`calcs._scenario_steps` before the zero-order routes: where a
decomposition test's curves gave a fitted rate model, both indicators come from the
adiabatic simulation of that model from fresh material at plant scale (φ = 1), with
ΔT_ad = Q_dec / c_p of the step (METHODS.md §12.4).
"""

from __future__ import annotations

from calcs.adiabatic_sim import td_simulated, td_uncertainty, tmr_simulated
from calcs.errors import CalcInputError
from calcs.rate_models import RATE_MODELS

#: coverage of the TD24 band (fit and scan-to-scan covariance, Student's t)
TD24_BAND_LEVEL = 0.90


def kinetic_td24(c) -> bool:
    """Set TD24 from the fitted model; False when the step has no usable fitted model."""
    s = c.s
    k = s.decomposition_kinetics
    cp, q = s.specific_heat_capacity_j_per_kg_k, s.decomposition_energy_j_per_kg
    if k is None or not cp or not q or k.model not in RATE_MODELS:
        return False
    rise = q / cp
    try:
        # the extrapolation distance and its warning: _scenario_edges._extrapolation
        td = td_simulated(k.model, k.parameters, k.reference_temperature_k, rise)
    except CalcInputError as exc:
        c.warn(f"TD24 by simulation failed ({exc}); typed decomposition data used instead")
        return False
    c.methods["td24"] = f"td24.adiabatic_simulation.{k.model}"
    c.kinetics = k
    c.lowest_measured_k = k.lowest_measured_k
    c.parameters.update(
        {
            "decomposition_model": k.model,
            "decomposition_model_parameters": dict(
                zip(RATE_MODELS[k.model][0], k.parameters, strict=True)
            ),
            "decomposition_reference_temperature_k": k.reference_temperature_k,
            "decomposition_adiabatic_rise_k": rise,
            "decomposition_curves_sha256": list(k.files_sha256),
        }
    )
    for w in td.warnings:
        c.warn(w)
    if td.value is not None and k.covariance is not None:
        band = td_uncertainty(
            k.model,
            k.parameters,
            k.covariance,
            k.reference_temperature_k,
            rise,
            rise_stderr_k=k.energy_stderr_j_per_kg / cp,
            dof=k.degrees_of_freedom,
            level=TD24_BAND_LEVEL,
        )
        if band.value is not None:
            c.parameters["td24_standard_uncertainty_k"] = band.value
            c.parameters["td24_band_k"] = band.parameters["band_k"]
            c.parameters["td24_band_level"] = TD24_BAND_LEVEL
    c.ref("townsend_tou1980", "ictac2011", "methods_md")
    c.out["td24_k"] = td.value
    if td.value is None:
        c.warn("TD24 unknown: the simulated TMRad does not reach 24 h between 150 and 1500 K")
    return True


def kinetic_tmr_at_mtsr(c) -> bool:
    """Set TMRad at MTSR from the fitted model; False when TD24 did not come from one."""
    k, mtsr = getattr(c, "kinetics", None), c.out.get("mtsr_k")
    if k is None or mtsr is None:
        return False
    s = c.s
    rise = s.decomposition_energy_j_per_kg / s.specific_heat_capacity_j_per_kg_k
    r = tmr_simulated(k.model, k.parameters, k.reference_temperature_k, mtsr, rise)
    c.out["tmr_ad_at_mtsr_s"] = r.value
    c.methods["tmr_ad_at_mtsr"] = f"tmr.adiabatic_simulation.{k.model}"
    return True
