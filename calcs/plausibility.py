"""Plausibility warnings for the classic unit slips of METHODS.md §10 (warn, never refuse).

A value outside the range a plant record usually holds is used as entered, but the step
says which field, which value and which slip it most likely is (a factor 1000 between J
and kJ, °C typed into a kelvin field, K/min typed as K/s, gauge pressure as absolute ...).
The ranges are generous bounds of our own (common practice, no source) inside the hard
limits of :mod:`hazards.quantities`; the slips are those listed in METHODS.md §10.
"""

from __future__ import annotations

from typing import Any

from calcs.constants import ATM

K0 = 273.15
# (low, high) of each field in SI; outside them a warning names the likely slip.
PROCESS_TEMPERATURE_K = (200.0, 773.15)
ONSET_TEMPERATURE_K = (250.0, 1073.15)
SPECIFIC_HEAT_J_PER_KG_K = (500.0, 6000.0)  # liquids ~1.2-4.2 kJ/(kg K) (water 4.18)
ADIABATIC_RISE_K = (0.5, 1000.0)  # ΔT_ad in the thousands of kelvin is a slip
ACTIVATION_ENERGY_J_PER_MOL = (20e3, 500e3)  # decompositions ~50-300 kJ/mol
DECOMPOSITION_ENERGY_J_PER_KG = (1e3, 1e7)  # TNT ~4.2 MJ/kg (from memory)
HEATING_RATE_K_PER_S = (1e-4, 1.0)  # DSC 1-20 K/min = 0.017-0.33 K/s
TD24_ROOM_K = 298.15
DOSING_TIME_S = 60.0
OPERATING_PRESSURE_PA = 1e3  # 10 mbar: lower is a Pa/kPa/bar slip more often than a vacuum


def _c(t: float) -> str:
    return f"{t:.6g} K ({t - K0:.4g} °C)"


def _warn(field: str, shown: str, why: str, slip: str) -> str:
    return (
        f"plausibility: {field} = {shown} {why}; likely slip: {slip} (a warning only: the "
        "value is used as entered)"
    )


def unit_slip_warnings(s: Any, out: dict[str, Any]) -> list[str]:
    """Warnings for inputs and results that point to a unit slip (METHODS.md §10).

    Equation: none; each value is compared with the plausible range of its field.

    Parameters
    ----------
    s : calcs.scenario.StepInputs
        The step's inputs (SI floats).
    out : dict
        The indicators computed so far (``adiabatic_temperature_rise_k``, ``td24_k``).

    Returns
    -------
    list of str
        One warning per implausible value, naming the field, the value and the likely slip.

    Validity: screening of typing mistakes; a value outside the range may be real.

    Examples
    --------
    >>> from calcs.scenario import StepInputs
    >>> w = unit_slip_warnings(StepInputs("batch", 303.15, 1.0, 2.0, "open", None, None), {})
    >>> w[0].startswith("plausibility: specific_heat_capacity_j_per_kg_k = 2 J/(kg K)")
    True

    References
    ----------
    METHODS.md §10 (units practitioners enter and their pitfalls); common practice, no source
    for the ranges.
    """
    w: list[str] = []
    tp = s.process_temperature_k
    if tp < PROCESS_TEMPERATURE_K[0]:
        w.append(
            _warn(
                "process_temperature_k",
                _c(tp),
                "is below any process temperature",
                f"a value in °C entered as kelvin ({tp:g} °C would be {tp + K0:g} K)",
            )
        )
    elif tp > PROCESS_TEMPERATURE_K[1]:
        w.append(
            _warn(
                "process_temperature_k",
                _c(tp),
                "is above 500 °C",
                "a value in °F, or in K entered as °C",
            )
        )
    ton = s.onset_temperature_k
    if ton is not None and ton < ONSET_TEMPERATURE_K[0]:
        w.append(
            _warn(
                "onset_temperature_k",
                _c(ton),
                "is below −23 °C",
                f"a value in °C entered as kelvin ({ton:g} °C would be {ton + K0:g} K)",
            )
        )
    cp = s.specific_heat_capacity_j_per_kg_k
    if cp is not None and cp < SPECIFIC_HEAT_J_PER_KG_K[0]:
        w.append(
            _warn(
                "specific_heat_capacity_j_per_kg_k",
                f"{cp:g} J/(kg K)",
                "is below any liquid's (about 1200-4200 J/(kg K))",
                "kJ/(kg K) or J/(g K) entered as J/(kg K) (a factor 1000)",
            )
        )
    elif cp is not None and cp > SPECIFIC_HEAT_J_PER_KG_K[1]:
        w.append(
            _warn(
                "specific_heat_capacity_j_per_kg_k",
                f"{cp:g} J/(kg K)",
                "is above water's 4180 J/(kg K)",
                "a molar heat capacity (J/(mol K)) or a factor-1000 slip",
            )
        )
    dt, q = out.get("adiabatic_temperature_rise_k"), s.specific_reaction_heat_j_per_kg
    if dt is not None and q is not None and dt > ADIABATIC_RISE_K[1]:
        w.append(
            _warn(
                "specific_reaction_heat_j_per_kg",
                f"{q / 1e3:g} kJ/kg",
                f"gives ΔTad = {dt:.4g} K (thousands of kelvin)",
                "J/kg against kJ/kg (a factor 1000), or a molar heat (kJ/mol) entered "
                "as a specific one",
            )
        )
    elif dt is not None and q is not None and 0.0 < dt < ADIABATIC_RISE_K[0]:
        w.append(
            _warn(
                "specific_reaction_heat_j_per_kg",
                f"{q:g} J/kg",
                f"gives ΔTad = {dt:.3g} K",
                "kJ/kg entered as J/kg (a factor 1000)",
            )
        )
    ea = s.activation_energy_j_per_mol
    if ea is not None and ea < ACTIVATION_ENERGY_J_PER_MOL[0]:
        w.append(
            _warn(
                "activation_energy_j_per_mol",
                f"{ea / 1e3:g} kJ/mol",
                "is below any decomposition's (about 50-300 kJ/mol)",
                "kJ/mol entered as J/mol (a factor 1000), or kcal/mol against kJ/mol",
            )
        )
    elif ea is not None and ea > ACTIVATION_ENERGY_J_PER_MOL[1]:
        w.append(
            _warn(
                "activation_energy_j_per_mol",
                f"{ea / 1e3:g} kJ/mol",
                "is above 500 kJ/mol",
                "J/mol entered as kJ/mol, or E/R (K) as E_a",
            )
        )
    td = out.get("td24_k")
    if td is not None and td < TD24_ROOM_K:
        w.append(
            _warn(
                "td24_k",
                _c(td),
                "is near or below room temperature (real for some organic peroxides and diazo "
                "compounds; otherwise a slip is likely)",
                "E_a in J/mol against kJ/mol, or the reference heat-release rate in W "
                "or W/g against W/kg",
            )
        )
    qd = s.decomposition_energy_j_per_kg
    if qd and qd < DECOMPOSITION_ENERGY_J_PER_KG[0]:
        w.append(
            _warn(
                "decomposition_energy_j_per_kg",
                f"{qd:g} J/kg",
                "is below 1 J/g",
                "J/g or kJ/kg entered as J/kg (a factor 1000)",
            )
        )
    elif qd and qd > DECOMPOSITION_ENERGY_J_PER_KG[1]:
        w.append(
            _warn(
                "decomposition_energy_j_per_kg",
                f"{qd / 1e3:g} kJ/kg",
                "is above 10 kJ/g (more than high explosives)",
                "J/kg against kJ/kg (a factor 1000)",
            )
        )
    for beta, _tp in s.peak_temperatures or ():
        if beta > HEATING_RATE_K_PER_S[1]:
            w.append(
                _warn(
                    "peak_temperatures heating rate",
                    f"{beta:g} K/s ({beta * 60:g} K/min)",
                    "is above 60 K/min",
                    "K/min entered as K/s (a factor 60)",
                )
            )
            break
        if beta < HEATING_RATE_K_PER_S[0]:
            w.append(
                _warn(
                    "peak_temperatures heating rate",
                    f"{beta:g} K/s ({beta * 60:g} K/min)",
                    "is below 0.006 K/min",
                    "K/h or K/s confused with K/min",
                )
            )
            break
    if (
        s.operation_mode == "semi_batch"
        and s.dosing_time_s is not None
        and s.dosing_time_s < DOSING_TIME_S
    ):
        w.append(
            _warn(
                "dosing_time_s",
                f"{s.dosing_time_s:g} s",
                "is under a minute",
                "minutes or hours entered as seconds",
            )
        )
    p = s.operating_pressure_pa
    if p is not None and p < OPERATING_PRESSURE_PA:
        w.append(
            _warn(
                "operating_pressure_pa", f"{p:g} Pa", "is below 10 mbar", "kPa or bar entered as Pa"
            )
        )
    for name in ("vessel_relief_set_pressure_pa", "vessel_design_pressure_pa"):
        pset = getattr(s, name)
        if pset is not None and pset <= ATM:
            w.append(
                _warn(
                    name,
                    f"{pset / 1e5:g} bar (absolute)",
                    "is not above atmospheric",
                    "a gauge pressure entered as absolute (bar(a) = bar(g) + 1.01325)",
                )
            )
    return w
