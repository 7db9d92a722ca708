"""The frozen dossier content -> what the templates print (display units, labels, sources)."""

from __future__ import annotations

import datetime as dt

from hazards import presenting
from hazards.models.measures import MeasureKind, MeasureStatus
from hazards.presenting import (  # noqa: F401 - method_label and point_source: their old home
    METHOD_LABELS,
    cited,
    method_label,
    method_text,
    point_source,
)
from hazards.quantities import format_number, si_to_unit


def _fixed(label: str, si_unit: str, unit: str):
    """(unit as printed, SI -> that unit): the dossier's own units, converted on pint's
    registry (hazards.quantities.si_to_unit), never a person's display units."""
    return label, lambda value: si_to_unit(value, si_unit, unit)


# SI key -> (label, display unit, SI -> display)
_C = _fixed("°C", "kelvin", "degC")
_K = _fixed("K", "kelvin", "kelvin")
_H = _fixed("h", "second", "hour")
_MIN = _fixed("min", "second", "minute")
_KJKG = _fixed("kJ/kg", "J/kg", "kJ/kg")
_KJMOL = _fixed("kJ/mol", "J/mol", "kJ/mol")
_KW = _fixed("kW", "watt", "kilowatt")
_BAR = _fixed("bar abs", "pascal", "bar")
_PERCENT = _fixed("%", "dimensionless", "percent")
_PER_MIN = _fixed("1/min", "1/second", "1/minute")
_MOLKG = _fixed("mol/kg", "mol/kg", "mol/kg")
_MG = _fixed("mg", "kilogram", "milligram")
_KMIN = _fixed("K/min", "K/s", "K/min")
_PLAIN = ("", lambda x: x)

INPUTS = [
    # key, label, unit converter, where it comes from
    ("process_temperature_k", "Process temperature Tp", _C, "step"),
    ("reaction_mass_kg", "Reaction mass (plant)", _fixed("kg", "kilogram", "kilogram"), "step"),
    ("specific_heat_capacity_j_per_kg_k", "Specific heat capacity cp",
     _fixed("kJ/(kg·K)", "J/(kg*K)", "kJ/(kg*K)"), "step"),
    ("operation_mode", "Operation mode", None, "step"),
    ("system", "System", None, "step"),
    ("operating_pressure_pa", "Operating pressure", _BAR, "step"),
    ("dosing_time_s", "Dosing time", _MIN, "step"),
    ("mtt_override_k", "MTT override", _C, "step"),
    ("initial_mass_fraction", "Initial charge / final mass", _PERCENT, "step"),
    ("non_volatile_declared", "Reaction mass declared non-volatile", None, "step"),
    ("non_volatile_reason", "Basis of the non-volatile declaration", None, "step"),
    ("specific_reaction_heat_j_per_kg", "Specific reaction heat Q′", _KJKG, "calorimetry"),
    ("max_accumulation", "Maximum accumulation", _PERCENT, "calorimetry"),
    ("max_heat_release_rate_w_per_kg", "Peak heat-release rate", _fixed("W/kg", "W/kg", "W/kg"),
     "calorimetry"),
    ("gas_release_mol_per_kg", "Gas release", _MOLKG, "calorimetry"),
    ("series_sha256", "Calorimetry series (SHA-256)", None, "calorimetry"),
    ("decomposition_method", "Decomposition test method", None, "decomposition"),
    ("onset_temperature_k", "Onset temperature", _C, "decomposition"),
    ("decomposition_energy_j_per_kg", "Decomposition energy", _KJKG, "decomposition"),
    ("activation_energy_j_per_mol", "Activation energy Ea", _KJMOL,
     "decomposition"),
    ("reference_temperature_k", "Reference temperature", _C, "decomposition"),
    ("heat_release_rate_at_reference_w_per_kg", "Heat-release rate at reference",
     _fixed("W/kg", "W/kg", "W/kg"), "decomposition"),
    ("phi_factor", "φ factor of the test", _PLAIN, "decomposition"),
    ("solvent_cas", "Solvent (CAS)", None, "solvent"),
    ("vessel_heat_transfer_area_m2", "Heat-transfer area", _fixed("m²", "m**2", "m**2"), "vessel"),
    ("vessel_u_w_per_m2_k", "Overall heat-transfer coefficient U", _fixed("W/(m²·K)", "W/(m**2*K)", "W/(m**2*K)"),
     "vessel"),
    ("vessel_coolant_temperature_k", "Coolant temperature", _C, "vessel"),
    ("vessel_relief_set_pressure_pa", "Relief set pressure", _BAR, "vessel"),
    ("vessel_design_pressure_pa", "Design pressure", _BAR, "vessel"),
    ("vessel_headspace_m3", "Headspace volume", _fixed("m³", "m**3", "m**3"), "vessel"),
]

# The dossier's fixed unit of each quantity kind of the indicators (hazards.presenting).
INDICATOR_UNITS = {"temperature": _C, "temperature_difference": _K, "time": _MIN,
                   "duration_h": _H, "power": _KW, "pressure": _BAR, None: _PLAIN}
# value key, label, converter, method key: the presenter's table in the dossier's units
INDICATORS = [(spec.key, spec.short_label, INDICATOR_UNITS[spec.kind], spec.method)
              for spec in presenting.INDICATORS]

# calcs parameter key -> (label, display unit and SI -> display); text values print as they are.
PARAMETERS = {
    "accumulation_at_max_mtsr": ("Accumulation at the MTSR maximum", _PERCENT),
    "max_accumulation": ("Maximum accumulation of the series", _PERCENT),
    "series_end_criterion": ("End of reaction in the series", None),
    "kissinger_activation_energy_j_per_mol": ("Activation energy Ea (Kissinger fit)",
                                              _KJMOL),
    "kissinger_pre_exponential_per_s": ("Pre-exponential factor A (Kissinger fit)",
                                        _fixed("1/s", "1/second", "1/second")),
    "assumed_activation_energy_j_per_mol": ("Activation energy Ea assumed",
                                            _KJMOL),
    "screening_activation_energy_j_per_mol": ("Activation energy Ea assumed for the screen",
                                              _KJMOL),
    "screening_heat_release_rate_w_per_kg": ("Heat-release rate assumed at the onset",
                                             _fixed("W/kg", "W/kg", "W/kg")),
    "td24_label": ("Kind of TD24", None),
    "corrected_onset_k": ("Onset corrected for the φ factor", _C),
    "arc_detection_rate_k_per_s": ("Detection threshold of the adiabatic test",
                                   _KMIN),
    "b_parameter_at_mtsr": ("B = Ea·ΔTad,dec / (R·MTSR²) at MTSR", _PLAIN),
    "risk_matrix": ("Risk matrix", None),
    "severity_scale": ("Severity scale", None),
    "probability_scale": ("Probability scale", None),
    "vapour_pressure_source": ("Vapour-pressure data", None),
    "operating_pressure_pa_assumed": ("Operating pressure assumed", _BAR),
    "pad_pressure_at_process_temperature_pa": ("Pad-gas pressure at Tp", _BAR),
    "gas_released_mol": ("Gas released in the vessel", _fixed("mol", "mol", "mol")),
    "accumulation_mass_basis": ("Mass the entered accumulation is referred to", None),
    "accumulation_on_mass_present": ("Largest accumulation on the mass present (final-mass "
                                     "terms)", _PERCENT),
    "initial_mass_fraction": ("Initial charge / final mass", _PERCENT),
    "rate_constant_from_accumulation_per_s": ("Rate constant implied by the accumulation",
                                              _PER_MIN),
    "lowest_measured_temperature_k": ("Lowest temperature of the decomposition data", _C),
    "td24_extrapolation_k": ("TD24 below the lowest measured temperature", _K),
    "tmr_extrapolation_k": ("MTSR below the lowest measured temperature (TMRad)", _K),
    "ambient_pressure_pa": ("Atmospheric pressure for the class without vacuum", _BAR),
    # where a semi-batch step's MTSR and peak come from (calcs.operating_point)
    "operating_point_mode": ("Operating point of the semi-batch indicators", None),
    "operating_point_basis": ("Where the semi-batch numbers come from", None),
    "operating_point_differences": ("Lab run and plant differ in", None),
    "lab_dosing_time_s": ("Dosing time of the lab run", _MIN),
    "lab_temperature_k": ("Temperature of the lab run", _C),
    "lab_initial_mass_fraction": ("Initial charge / final mass of the lab run",
                                  _PERCENT),
    "plant_dosing_time_s": ("Dosing time at the plant", _MIN),
    "plant_temperature_k": ("Process temperature at the plant", _C),
    "plant_initial_mass_fraction": ("Initial charge / final mass at the plant",
                                    _PERCENT),
    "temperature_shift_k": ("Lab series moved to the plant's temperature by", _K),
    "dosing_model_rate_constant_per_s": ("Rate constant of the dosing model at the plant's "
                                         "temperature", _PER_MIN),
    "dosing_model_peak_scale": ("Peak factor of the dosing model (measured / model at the lab "
                                "run, at least 1)", _PLAIN),
    "dosing_activation_energy_j_per_mol": ("Activation energy of the desired reaction",
                                           _KJMOL),
    "accumulation_at_end_of_dosing": ("Accumulation at the end of dosing (plant)",
                                      _PERCENT),
}

OPERATING_POINT_MODES = {
    "series": "lab series as measured (lab run and plant agree)",
    "model": "dosing model at the plant's dosing time, temperature and fill",
    "no_credit": "no dosing model: no credit for reaction during dosing (conservative bound)",
    "lab_accumulation": "entered maximum accumulation, taken as measured at the plant's point",
}

# The quantity kind behind a parameter's unit, for the pages that write parameters in a
# person's display units (the dossier itself keeps the units above).
_KIND_OF = {_C: "temperature", _K: "temperature_difference", _BAR: "pressure", _KW: "power"}


def parameter_kind(key: str) -> str | None:
    return _KIND_OF.get(PARAMETERS.get(key, (key, None))[1])


MODE = {"batch": "batch", "semi_batch": "semi-batch"}
SYSTEM = {"open": "open (vented)", "closed": "closed"}


def _number(value) -> str:
    return format_number(value)  # the pages' rule (hazards.quantities.format_number)


def _show(value, conv) -> tuple[str, str]:
    if value is None or value == "":
        return "—", ""
    if isinstance(value, bool):
        return ("yes" if value else "no"), ""
    if conv is None:
        text = {**MODE, **SYSTEM}.get(value, str(value)) if isinstance(value, str) else str(value)
        return text, ""
    unit, fn = conv
    return _number(fn(value)) if isinstance(value, (int, float)) else str(value), unit


def when(iso: str | None) -> str:
    """An ISO time as printed: 2026-03-04 09:15 UTC (the zone is always shown)."""
    if not iso:
        return "—"
    value = dt.datetime.fromisoformat(iso.replace("Z", "+00:00"))
    if value.tzinfo is None:
        return value.strftime("%Y-%m-%d")
    offset = value.utcoffset()
    zone = "UTC" if not offset else value.strftime("UTC%z")
    return value.strftime("%Y-%m-%d %H:%M:%S ") + zone


def _source(kind: str, prov: dict, inputs: dict) -> str:
    run, test = prov.get("calorimetry_run"), prov.get("decomposition_test")
    if kind == "calorimetry" and run:
        bits = [run.get("instrument") or "calorimeter", (run.get("run_date") or "")[:10]]
        if run.get("file_name"):
            bits.append(f"file {run['file_name']} sha256 {run.get('file_sha256', '')[:16]}…")
        if run.get("series_sha256"):
            bits.append(f"series {run.get('series_file_name', '')}")
        return f"calorimetry run #{run['id']} ({run.get('chosen')}): " + ", ".join(
            b for b in bits if b)
    if kind == "decomposition" and test:
        bits = [test.get("method"), test.get("instrument"), (test.get("test_date") or "")[:10],
                test.get("crucible")]
        return f"decomposition test #{test['id']} ({test.get('chosen')}): " + ", ".join(
            b for b in bits if b)
    if kind == "solvent" and prov.get("solvent"):
        s = prov["solvent"]
        return f"solvent {s['name']} ({s['vapour_pressure_source']} vapour pressure)"
    if kind == "vessel" and prov.get("vessel"):
        v = prov["vessel"]
        return f"vessel {v['tag']} {v['name']}"
    if kind == "step":
        return "reaction step record"
    return "—"


def parameter_row(key: str, value) -> dict:
    """A parameter a method assumed, with a label and unit a reader knows; the key for tracing."""
    label, conv = PARAMETERS.get(key, (key, None))
    if key == "operating_point_mode":
        value = OPERATING_POINT_MODES.get(value, value)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        shown, unit = _show(value, conv) if conv else (_number(value), "")
    else:
        shown, unit = cited(str(value)), ""
    return {"key": key, "label": label, "value": shown, "unit": unit}


def operating_point_view(params: dict) -> dict | None:
    """The plant's operating point beside the lab run's, the mode, and whether they differ;
    ``None`` when the step has no lab series basis."""
    mode = params.get("operating_point_mode")
    if not mode or "lab_dosing_time_s" not in params:
        return None
    differs = [d.strip() for d in (params.get("operating_point_differences") or "").split(",")
               if d.strip()]
    rows = []
    for name, label, plant_key, lab_key, conv in (
            ("dosing time", "Dosing time", "plant_dosing_time_s", "lab_dosing_time_s", _MIN),
            ("temperature", "Temperature", "plant_temperature_k", "lab_temperature_k", _C),
            ("fill", "Final mass / initial charge", "plant_initial_mass_fraction",
             "lab_initial_mass_fraction", ("", lambda r: 1 / r))):
        plant, unit = _show(params.get(plant_key), conv)
        rows.append({"label": label, "plant": plant, "lab": _show(params.get(lab_key), conv)[0],
                     "unit": unit, "differs": name in differs})
    return {"mode": OPERATING_POINT_MODES.get(mode, mode), "mode_key": mode,
            "basis": cited(params.get("operating_point_basis") or ""), "rows": rows,
            "differs": differs}


def _decomposition_view(d: dict | None) -> dict | None:
    """The rows a dossier page prints of a step's decomposition curves and kinetics."""
    if not d:
        return None
    curves = []
    for c in d["curves"]:
        x = c["derived"]
        if x.get("kind") == "dsc":
            figures = (f"{_show(x['heating_rate_k_per_s'], _KMIN)[0]} K/min; onset "
                       f"{_show(x.get('onset_k'), _C)[0]} °C (first deviation "
                       f"{_show(x.get('first_deviation_k'), _C)[0]} °C); peak "
                       f"{_show(x.get('peak_k'), _C)[0]} °C; "
                       f"{_show(x['energy_j_per_kg'], _KJKG)[0]} kJ/kg ({x.get('baseline')} "
                       "baseline)")
        else:
            corr = x.get("corrected") or {}
            gas = (x.get("gas") or {}).get("mol_per_kg")
            figures = (f"φ {_show(x.get('phi'), None)[0]}; onset "
                       f"{_show(x.get('onset_k'), _C)[0]} °C at 0.02 K/min; measured TMR "
                       f"{_show(x['measured_tmr_s'], _MIN)[0]} min; φ-corrected onset "
                       f"{_show(corr.get('onset_k'), _C)[0]} °C, TMR there "
                       f"{_show(corr.get('tmr_at_onset_s'), _MIN)[0]} "
                       f"min; max pressure "
                       f"{_show(x.get('max_pressure_pa'), _BAR)[0]} bar"
                       f"; gas after cooling {_show(gas, _MOLKG)[0]} mol/kg")
        curves.append({"file_name": c["file_name"], "sha256": c["sha256"],
                       "sample_mass": _show(c["sample_mass_kg"], _MG)[0],
                       "figures": figures})
    k = d.get("kinetics") or {}
    params = []
    fit = (k.get("fits") or {}).get(k.get("model")) or {}
    for name, p in (fit.get("parameters") or {}).items():
        params.append(f"{name} = {_number(p['value'])} ± {_number(p['stderr'])} {p['unit']}")
    choice = k.get("choice") or {}
    return {
        "method": d.get("method"),
        "curves": curves,
        "status": k.get("status", ""),
        "model": k.get("model"),
        "f_alpha": fit.get("f_alpha", ""),
        "parameters": params,
        "criterion": choice.get("criterion", ""),
        "delta_aic": _number(choice["delta_aic"]) if choice.get("delta_aic") is not None
        else None,
        "screen": (k.get("screen") or {}).get("reason", ""),
        "covariance_method": k.get("covariance_method", ""),
    }


def _step(step: dict, context: dict) -> dict:
    snap = step.get("snapshot") or step.get("indicators") or {}
    inputs, values = snap.get("inputs") or {}, snap.get("values") or {}
    methods, params = snap.get("methods") or {}, snap.get("parameters") or {}
    prov = context.get("provenance", {}).get(str(step.get("id")), {})
    input_rows = []
    for key, label, conv, kind in INPUTS:
        if key not in inputs:
            continue
        value, unit = _show(inputs.get(key), conv)
        if key == "series_sha256" and inputs.get(key):
            value = inputs[key]
        input_rows.append({"label": label, "value": value, "unit": unit,
                           "source": _source(kind, prov, inputs) if inputs.get(key) is not None
                           else "not given", "hash": key == "series_sha256"})
    indicator_rows = []
    for row in presenting.present(values, methods, params, inputs,
                                  text=lambda v, kind: _show(v, INDICATOR_UNITS[kind])[0]):
        if row.key in presenting.ONLY_WHEN_SET and row.si_value is None:
            continue
        label = row.short_label
        if row.key == "td24_k" and params.get("td24_label"):
            label = f"{label} ({params['td24_label']})"
        indicator_rows.append({"label": label, "value": row.text,
                               "unit": _show(row.si_value, INDICATOR_UNITS[row.kind])[1],
                               "method": row.method_label, "method_key": row.method_key})
    ser = context.get("series", {}).get(inputs.get("series_sha256") or "")
    td24_low = values.get("td24_below_process_temperature")
    return {
        "id": step.get("id"),
        "sequence": step.get("sequence"),
        "name": step.get("name"),
        "mode": MODE.get(inputs.get("operation_mode") or step.get("operation_mode"), "—"),
        "snapshot": snap,
        "series": ser,
        "decomposition": context.get("decomposition", {}).get(str(step.get("id"))),
        "decomposition_view": _decomposition_view(
            context.get("decomposition", {}).get(str(step.get("id")))),
        "inputs": input_rows,
        "indicators": indicator_rows,
        "parameters": [parameter_row(k, v) for k, v in sorted(params.items())],
        "operating_point": operating_point_view(params),
        "warnings": list(snap.get("warnings") or []),
        "mtt_override_reason": step.get("mtt_override_reason") or "",
        "criticality_class": values.get("criticality_class"),
        "td24_below_tp": bool(td24_low),
        "tp": _show(inputs.get("process_temperature_k"), _C)[0],
        "summary": {key: _show(values.get(key), conv)[0] for key, _, conv, _ in INDICATORS},
        "inputs_hash": snap.get("inputs_hash", ""),
        "computed_at": when(snap.get("computed_at")),
        "calcs_version": snap.get("calcs_version", ""),
        "libraries_text": ", ".join(f"{name} {version}" for name, version
                                    in (snap.get("libraries") or {}).items()
                                    if name not in ("calcs",)),
        "no_snapshot": not snap,
        "measures": _measures_view(step, values),
    }


_KINDS = dict(MeasureKind.choices)
_STATUSES = dict(MeasureStatus.choices)


def _measures_view(step: dict, values: dict) -> list[dict]:
    """Each protective measure of the step as frozen, with its barrier checks and inputs."""
    checks = values.get("barrier_checks") or []
    out = []
    for m in step.get("measures") or []:
        out.append({
            "kind": _KINDS.get(m.get("kind"), m.get("kind")), "acts_on": m.get("acts_on"),
            "status": _STATUSES.get(m.get("status"), m.get("status")),
            "due_date": m.get("due_date"), "evidence": m.get("evidence_reference") or "",
            "test_date": m.get("test_date") or "",
            "checks": [{**c, "shown": [
                (k.replace("_", " "), "—" if v.get("value") is None
                 else f"{format_number(v['value'])} {v.get('unit') or ''}".strip())
                for k, v in (c.get("numbers") or {}).items()]}
                for c in checks if c.get("measure") == m.get("id")],
        })
    return out


def dossier_view(content: dict, meta) -> dict:
    record, context = content["record"], content["context"]
    revision = context.get("revision")
    steps = sorted((_step(s, context) for s in record.get("steps", [])),
                   key=lambda s: (s["sequence"] or 0, s["id"] or 0))
    signatures = [{**s, "signed_at_text": when(s.get("signed_at"))}
                  for s in context.get("signatures", [])]
    history = [{**h, "at_text": when(h.get("at"))} for h in context.get("history", [])]
    return {
        "process": context["process"],
        "revision": revision,
        "revision_text": (f"revision {revision['number']} — {revision['state_label']}"
                          if revision else "current state (no revision recorded)"),
        "status_text": revision["state_label"] if revision else "not submitted for review",
        "signatures": signatures,
        "findings": context.get("findings", []),
        "risk_acceptances": [{**a, "signed_at_text": when(a.get("signed_at"))}
                             for a in context.get("risk_acceptances", [])],
        "history": history,
        "last_approved": context.get("last_approved"),
        "audit_head_hash": context.get("audit_head_hash"),
        "software_text": ", ".join(f"{name} {version}" for name, version
                                   in (context.get("software") or {}).items()),
        "audit_head": context.get("audit_head"),
        "revalidation": context.get("revalidation"),
        "approval": context.get("approval"),
        "references": sorted((key, cited(text))
                             for key, text in context.get("references", {}).items()),
        "steps": steps,
        "record_date_text": when(context.get("record_date")),
        "issued_text": when(meta.created_at),
    }
