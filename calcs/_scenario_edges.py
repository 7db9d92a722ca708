"""Edge steps of :func:`calcs.scenario.assess_step`: an entered accumulation on the mass
present, and the extrapolation distance of TD24/TMRad (private; ``c`` is
:class:`calcs._scenario_context._Ctx`)."""

from __future__ import annotations

from calcs._scenario_context import _Ctx
from calcs.semibatch import mass_basis_accumulation, rate_constant_from_accumulation


def _mtsr_from_entered_accumulation(c: _Ctx, tp: float, dt: float) -> None:
    """T_p + X·ΔT_ad with the entered accumulation on the mass present when the initial
    charge is known (pseudo-first-order model, METHODS.md §1.1 note and C1.7), else on the
    final mass, said and warned."""
    s, out = c.s, c.out
    x, r0, td = s.max_accumulation, s.initial_mass_fraction, s.dosing_time_s
    if r0 is not None and td is not None and 0.0 < x < 1.0:
        k = rate_constant_from_accumulation(x, td)
        x_eff, t_max = mass_basis_accumulation(k, td, r0)
        out["mtsr_k"], out["mtsr_time_s"] = tp + x_eff * dt, t_max
        c.methods["mtsr"] = "mtsr.semi_batch.max_accumulation_mass_basis"
        c.parameters.update({"accumulation_mass_basis": "mass present",
                             "accumulation_on_mass_present": x_eff,
                             "initial_mass_fraction": r0,
                             "rate_constant_from_accumulation_per_s": k})
        c.ref("methods_md")
        return
    out["mtsr_k"] = tp + x * dt
    c.methods["mtsr"] = "mtsr.semi_batch.max_accumulation"
    if x <= 0.0 or x >= 1.0 or r0 == 1.0:
        return  # no accumulation, all of it, or no feed mass: the bases agree
    c.parameters["accumulation_mass_basis"] = "final mass"
    missing = "the initial charge as a fraction of the final mass" if r0 is None else \
        "the dosing time"
    c.warn("MTSR from the entered maximum accumulation on the final mass: before the end of "
           "the feed less mass takes up the heat, so this MTSR can be too low "
           f"(METHODS.md §1.1); enter {missing} to compute it on the mass present")


def _extrapolation(c: _Ctx) -> None:
    """How far TD24 and TMRad at MTSR lie below the lowest temperature the decomposition was
    measured at (METHODS.md §12.4), warned past the limit of the settings."""
    t_low, limit = c.lowest_measured_k, c.cfg.max_extrapolation_k
    if t_low is None or (c.q_model is None and c.kinetics is None):
        return
    c.parameters["lowest_measured_temperature_k"] = t_low
    for key, name, label in (("td24_k", "td24_extrapolation_k", "TD24"),
                             ("mtsr_k", "tmr_extrapolation_k", "TMRad at MTSR")):
        t = c.out.get(key)
        if t is None or (key == "mtsr_k" and c.out.get("tmr_ad_at_mtsr_s") is None):
            continue
        d = max(t_low - t, 0.0)
        c.parameters[name] = d
        if d > limit:
            c.warn(f"{label} extrapolates {d:.0f} K below the lowest measured temperature of the "
                   f"decomposition data ({t_low - 273.15:.1f} °C), beyond the {limit:g} K limit "
                   "(common practice, no source): the kinetics may change over that distance; "
                   "measure closer to the process temperature")
