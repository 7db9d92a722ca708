"""One presenter of an indicator snapshot: which indicators, in what order, labelled how.

`INDICATORS` is the one table (snapshot key, label, the dossier's short label, quantity kind,
method key, words that tie a warning to the row); `present` turns a snapshot into its
labelled rows (key, label, SI value, kind, display text, method label, warnings). The step
page writes the text in the person's display units (the default, `quantity_text`); the
dossier passes its own fixed-unit writer; the API keeps its canonical {value, unit} and takes
its kinds from `KINDS`. Method labels and citations live here too, so that a page and its
dossier say the same thing. Presentation only: nothing here is stored or hashed.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from hazards.quantities import format_number, quantity_text


@dataclass(frozen=True)
class IndicatorSpec:
    key: str  # key in the snapshot's SI values
    label: str
    short_label: str  # the dossier's table column
    kind: str | None  # quantity kind (hazards.quantities.SPECS) or None for a plain value
    method: str  # key in the snapshot's methods
    words: tuple[str, ...] = ()  # a warning that names one of these belongs to the row


INDICATORS = (
    IndicatorSpec("adiabatic_temperature_rise_k", "Adiabatic temperature rise ΔTad",
                  "Adiabatic temperature rise ΔTad", "temperature_difference",
                  "adiabatic_temperature_rise", ("ΔTad", "adiabatic")),
    IndicatorSpec("mtsr_k", "MTSR (maximum temperature of the synthesis reaction)", "MTSR",
                  "temperature", "mtsr", ("MTSR", "lab and plant differ")),
    IndicatorSpec("mtsr_time_s", "Time of the MTSR maximum", "Time of the MTSR maximum",
                  "time", "mtsr"),
    IndicatorSpec("mtt_k", "MTT (maximum technical temperature)", "MTT", "temperature", "mtt",
                  ("MTT", "boiling")),
    IndicatorSpec("mtt_at_ambient_pressure_k", "MTT at 1 atm (if the vacuum is lost)",
                  "MTT at 1 atm (if the vacuum is lost)", "temperature", "mtt", ("vacuum",)),
    IndicatorSpec("td24_k", "TD24 (TMRad = 24 h)", "TD24", "temperature", "td24",
                  ("TD24", "onset")),
    IndicatorSpec("tmr_ad_at_mtsr_s", "TMRad at MTSR", "TMRad at MTSR", "duration_h",
                  "tmr_ad_at_mtsr", ("TMRad", "B =")),
    IndicatorSpec("criticality_class", "Criticality class", "Criticality class", None,
                  "criticality_class"),
    IndicatorSpec("criticality_class_at_ambient_pressure",
                  "Criticality class at 1 atm (if the vacuum is lost)",
                  "Criticality class at 1 atm (if the vacuum is lost)", None, "criticality_class"),
    IndicatorSpec("severity", "Severity", "Severity", None, "severity", ("severity",)),
    IndicatorSpec("probability", "Probability", "Probability", None, "probability",
                  ("probability",)),
    IndicatorSpec("risk_cell", "Risk-matrix cell", "Risk-matrix cell", None, "risk_cell",
                  ("risk",)),
    IndicatorSpec("cooling_capacity_w", "Cooling capacity", "Cooling capacity", "power",
                  "cooling_capacity", ("cooling",)),
    IndicatorSpec("plant_peak_heat_release_w", "Peak heat release at plant scale",
                  "Peak heat release at plant scale", "power", "plant_peak_heat_release",
                  ("peak", "lab and plant differ")),
    IndicatorSpec("cooling_margin", "Cooling margin (capacity / peak)",
                  "Cooling margin (capacity / peak)", None, "cooling_margin", ("margin",)),
    IndicatorSpec("minimum_dosing_time_s", "Minimum dosing time", "Minimum dosing time", "time",
                  "minimum_dosing_time", ("dosing",)),
    IndicatorSpec("end_pressure_pa", "Pressure at MTSR (closed vessel)",
                  "Pressure at MTSR (closed vessel)", "pressure", "end_pressure",
                  ("pressure", "relief")),
)
SPECS = {spec.key: spec for spec in INDICATORS}
# The quantity kind of each indicator that has one (the API's canonical units, the diffs).
KINDS = {spec.key: spec.kind for spec in INDICATORS if spec.kind}
# Rows that only exist for some steps (vacuum, the time of a semi-batch maximum).
ONLY_WHEN_SET = ("mtsr_time_s", "mtt_at_ambient_pressure_k",
                 "criticality_class_at_ambient_pressure")


@dataclass(frozen=True)
class IndicatorRow:
    key: str
    label: str
    short_label: str
    si_value: object
    kind: str | None
    text: str
    method_label: str  # "—" when the snapshot names no method
    method_key: str
    warnings: tuple[str, ...]


def value_text(value, kind: str | None) -> str:
    """A value as the pages write it: a quantity in the person's display units, a number by
    the one rule, a label as it is, '—' when unknown."""
    if kind:
        return quantity_text(value, kind)
    return format_number(value) if isinstance(value, int | float) else (value or "—")


def present(values: Mapping, methods: Mapping, parameters: Mapping, inputs: Mapping,
            warnings=(), *, text: Callable[[object, str | None], str] = value_text
            ) -> list[IndicatorRow]:
    """Every indicator of a snapshot in the table's order, labelled, with its text."""
    warnings = [str(w) for w in warnings]
    rows = []
    for spec in INDICATORS:
        value = values.get(spec.key)
        method_key = methods.get(spec.method) or ""
        rows.append(IndicatorRow(
            key=spec.key, label=spec.label, short_label=spec.short_label, si_value=value,
            kind=spec.kind, text=text(value, spec.kind),
            method_label=method_text(spec.method, method_key, parameters, inputs)
            if method_key else "—",
            method_key=method_key,
            warnings=tuple(w for w in warnings
                           if any(word.lower() in w.lower() for word in spec.words)),
        ))
    return rows


def present_snapshot(snapshot, *, text: Callable[[object, str | None], str] = value_text
                     ) -> list[IndicatorRow]:
    """`present` for a stored snapshot (an IndicatorSnapshot) or its frozen dict."""
    if snapshot is None:
        return []
    if isinstance(snapshot, Mapping):
        parts = [snapshot.get(name) or {} for name in ("values", "methods", "parameters",
                                                        "inputs")]
        return present(*parts, snapshot.get("warnings") or (), text=text)
    return present(snapshot.values or {}, snapshot.methods or {}, snapshot.parameters or {},
                   snapshot.inputs or {}, snapshot.warnings or (), text=text)


METHOD_LABELS = {
    "entered": "entered from the calorimetry run",
    "series.trapezoid_per_final_mass": "trapezoid integral of the series, per final mass",
    "adiabatic.specific_heat_over_cp": "ΔTad = Q′ / cp",
    "adiabatic.endothermic_no_rise": "endothermic reaction: no rise (ΔTad = 0)",
    "mtsr.batch": "batch: MTSR = Tp + ΔTad",
    "mtsr.semi_batch.series": "semi-batch, lab series as measured: max of Tr(t) + "
                              "X_ac(t)·Q/(m(t)·cp) over the series",
    "mtsr.semi_batch.dosing_model": "semi-batch: dosing model fitted to the lab series, at the "
                                    "plant's dosing time, temperature and fill (max over time, "
                                    "mass present)",
    "mtsr.semi_batch.no_credit": "semi-batch, no dosing model for the plant's point: no credit "
                                 "for reaction during dosing, Tp + ΔTad",
    "mtsr.semi_batch.accumulation_on_mass_present":
        "semi-batch: the dosing model's accumulation on the mass present at this point",
    "mtsr.semi_batch.max_accumulation": "semi-batch: Tp + X_ac,max·ΔTad (final mass)",
    "mtsr.semi_batch.max_accumulation_mass_basis":
        "semi-batch: entered X_ac,max on the mass present (initial charge given)",
    "mtsr.semi_batch.worst_case_no_accumulation_data": "semi-batch worst case: Tp + ΔTad",
    "mtt.override": "entered override (reason recorded)",
    "td24.kinetic": "zero-order kinetics from Ea, Tref, qref",
    "td24.kinetic_kissinger": "Kissinger fit of DSC peaks, zero order",
    "td24.adiabatic_phi_corrected": "adiabatic onset, φ-corrected (Fisher-Goetz)",
    "td24.adiabatic_uncorrected": "adiabatic onset, not φ-corrected",
    "td24.dsc_onset_screening": "screening estimate from one DSC onset (assumed Ea and q)",
    "tmr.zero_order": "zero order (Townsend-Tou) from the q(T) behind TD24",
    "criticality.stoessel": "Stoessel criticality classes (Tp, MTSR, MTT, TD24)",
    "risk_matrix": "site risk matrix (configuration)",
    "cooling.ua_delta_t": "U·A·(Tp − Tcoolant)",
    "cooling.capacity_over_peak": "cooling capacity / peak heat release",
    "cooling.dosing_controlled_q_tot_over_q_ex": "dosing-controlled: Q_tot / q_ex",
    "pressure.closed_vessel_at_mtsr": "closed vessel: vapour + pad + gas at MTSR",
    "severity.synthesis_adiabatic_rise": "from ΔTad of the synthesis",
    "severity.synthesis_plus_decomposition_adiabatic_rise":
        "from ΔTad of synthesis plus decomposition",
    "probability.tmr_ad_at_mtsr": "from TMRad at MTSR",
    "cooling.lab_specific_peak_times_mass.entered":
        "entered peak heat-release rate × plant mass",
    "cooling.lab_specific_peak_times_mass.series": "series peak heat-release rate × plant mass",
    "cooling.dosing_model_peak_times_mass":
        "dosing model's peak at the plant's dosing time × plant mass",
    "cooling.no_credit_peak_times_mass":
        "no dosing model: the larger of the lab peak and Q′ / plant dosing time, × plant mass",
}

# the methods whose number depends on where a semi-batch step was evaluated
_POINT_METHODS = ("mtsr", "plant_peak_heat_release")

def method_label(key: str) -> str:
    if key in METHOD_LABELS:
        return METHOD_LABELS[key]
    if key.startswith("mtt.boiling_point."):
        return f"boiling point at the operating pressure ({key.rsplit('.', 1)[1]} data)"
    if key.startswith("mtt.closed_vessel_"):
        return "closed vessel: temperature at which the pressure reaches the relief set point"
    return key



# Snapshots computed before the labels cited their chapters say how a citation was looked up
# ("Stoessel 2008, from memory"); a signed dossier prints the citation only.
_LOOKED_UP = re.compile(r"[,;]?\s*(?:bibliographic\s+)?(?:details\s+)?from memory", re.I)


def cited(text: str) -> str:
    """The text with any note on how its citation was looked up taken out."""
    return re.sub(r"\s*\(\s*\)", "", _LOOKED_UP.sub("", text)).replace(" )", ")")



def point_source(params: dict, inputs: dict) -> str:
    """Where a semi-batch step's MTSR and peak come from, naming the lab run:
    "dosing model (series fit) at the plant's 180 min; lab series of calorimetry run #7"."""
    basis = params.get("operating_point_basis")
    if not basis:
        return ""
    run = (inputs.get("basis") or {}).get("calorimetry_run")
    if run and params.get("operating_point_mode") in ("series", "model", "no_credit"):
        return f"{basis}; lab series of calorimetry run #{run}"
    return basis


def method_text(method: str, key: str, params: dict, inputs: dict) -> str:
    """The label of an indicator's method; for MTSR and the peak of a semi-batch step also
    where the number came from."""
    text = cited(method_label(key))
    source = point_source(params, inputs) if method in _POINT_METHODS else ""
    return f"{text}; here: {source}" if source else text
