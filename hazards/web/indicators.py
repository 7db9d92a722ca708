"""The indicators and inputs of a step as the step page shows them."""

from __future__ import annotations

import base64
import hashlib
import importlib.util
import json
from pathlib import Path

from django.core.cache import caches

from hazards.dossier import charts
from hazards.dossier.decomposition_charts import (
    arc_chart,
    e_alpha_chart,
    run_points,
    scan_data,
    scans_chart,
)

# The dossier's labels, so a page and its dossier say the same thing (the dossier app is
# always installed; the pages sit above it in the layers).
from hazards.dossier.view import operating_point_view, parameter_kind, parameter_row
from hazards.fieldkinds import LABELS
from hazards.models import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionTest,
    ReactionStep,
    Solvent,
    Vessel,
)
from hazards.presenting import SPECS as INDICATOR_SPECS
from hazards.presenting import present_snapshot
from hazards.review.selectors import record_history
from hazards.web import display

# The step page shows the criticality class above the table, not as one of its rows.
PAGE_OMITS = ("criticality_class",)
ONLY_WHEN_SET = ("mtt_at_ambient_pressure_k", "criticality_class_at_ambient_pressure")
KEY_INDICATORS = ("mtsr_k", "mtt_k", "td24_k", "tmr_ad_at_mtsr_s")


def parameter_rows(snapshot) -> list[dict]:
    """What the methods assumed, labelled and in display units as in the dossier."""
    if snapshot is None:
        return []
    rows = []
    for key, value in sorted((snapshot.parameters or {}).items()):
        row = parameter_row(key, value)
        chosen = display.in_person_units(value, parameter_kind(key))
        if chosen is not None:  # the person reads other units than the dossier's
            row["value"], row["unit"] = chosen
        rows.append(row)
    return rows


def operating_point(snapshot) -> dict | None:
    """The plant's dosing time, temperature and fill beside the lab run's (as the dossier)."""
    return None if snapshot is None else operating_point_view(snapshot.parameters or {})


def indicator_rows(snapshot) -> list[dict]:
    """The snapshot's indicators as the presenter labels them (hazards.presenting), in the
    person's display units, with the warnings that name each."""
    if snapshot is None:
        return []
    values, methods = snapshot.values, snapshot.methods
    rows = []
    for row in present_snapshot(snapshot):
        spec = INDICATOR_SPECS[row.key]
        if row.key in PAGE_OMITS or (row.key not in values and spec.method not in methods):
            continue
        if row.key in ONLY_WHEN_SET and row.si_value is None:
            continue
        rows.append({"key": row.key, "label": row.label, "value": row.text,
                     "method": row.method_label, "method_key": row.method_key,
                     "warnings": list(row.warnings)})
    return rows


def _last_changes(obj) -> dict[str, dict]:
    """field -> the audit row that last set it (who, when, why)."""
    last: dict[str, dict] = {}
    for row in record_history(obj):
        for field in row["changes"]:
            last[field] = row
    return last


MODEL_SOURCE = {
    ReactionStep: "the step",
    CalorimetryRun: "calorimetry run",
    DecompositionTest: "decomposition test",
    Vessel: "vessel",
    Solvent: "solvent",
}
SKIP = {"id", "created_at", "updated_at", "version", "needs_review", "approved_inputs_hash",
        "raw_file", "raw_file_sha256", "process_id", "step_id", "notes", "name", "sequence",
        "solvent_id", "vessel_id", "tag"}


_FROM_CURVES = ("onset_temperature_k", "decomposition_energy_j_per_kg", "heating_rate_k_per_s",
                "phi_factor", "activation_energy_j_per_mol")


def input_rows(obj, *, provenance_note: str = "") -> list[dict]:
    """Every stored input of a record with its unit and where it came from."""
    if obj is None:
        return []
    history = _last_changes(obj)
    series = None
    if isinstance(obj, CalorimetryRun):
        series = CalorimetrySeries.objects.filter(run=obj).only("file_name", "sha256").first()
    rows = []
    for field in obj._meta.concrete_fields:
        if field.attname == "kinetics":  # summarised under the measurements, charts above
            continue
        if field.attname in SKIP or field.attname.startswith("antoine_") and isinstance(
                obj, Solvent) and getattr(obj, field.attname) in (None, ""):
            continue
        value = getattr(obj, field.attname)
        kind = display.field_kind(type(obj), field.name)
        if field.choices:
            shown = getattr(obj, f"get_{field.name}_display")()
        elif kind:
            shown = display.quantity(value, kind)
        elif isinstance(value, bool):
            shown = "yes" if value else "no"
        else:
            shown = "—" if value in (None, "") else str(value)
        change = history.get(field.attname)
        source = "entered"
        if series is not None and field.attname in ("specific_reaction_heat_j_per_kg",
                                                    "max_accumulation"):
            source = f"derived from calorimeter file {series.file_name} (SHA-256 {series.sha256[:12]}…)"
        derived = (getattr(obj, "kinetics", None) or {}).get("files_sha256")
        if derived and field.attname in _FROM_CURVES and (
                field.attname != "activation_energy_j_per_mol"
                or obj.kinetics.get("activation_energy_source") == "curve"):
            source = f"derived from {len(derived)} curve file{'s' if len(derived) > 1 else ''}"
        rows.append({
            "field": field.attname,
            "label": LABELS.get(field.attname, field.verbose_name.capitalize()),
            "value": shown,
            "unit_kind": kind,
            "source": source,
            "by": (change or {}).get("user") or "—",
            "at": (change or {}).get("at"),
            "reason": (change or {}).get("reason") or "",
        })
    return rows


def _charts_code_digest() -> str:
    """Digest of the chart code (read, not imported: matplotlib loads on the first drawing),
    so that a release that draws differently does not serve old charts."""
    origin = importlib.util.find_spec("hazards.dossier.charts").origin
    return hashlib.sha256(Path(origin).read_bytes()).hexdigest()[:16]


CHARTS_CODE = _charts_code_digest()


def chart_key(snapshot, series_key: str) -> str:
    """The charts of a step depend on its snapshot (its inputs, calcs and libraries: the
    inputs hash and versions), the basis series and the chart code; nothing else. A forced
    recompute of the same inputs finds the same charts."""
    parts = [str(snapshot.step_id), snapshot.inputs_hash, snapshot.calcs_version,
             json.dumps(getattr(snapshot, "libraries", None), sort_keys=True, default=str),
             series_key, CHARTS_CODE]
    return "step-charts:" + hashlib.sha256("|".join(parts).encode()).hexdigest()


def chart_images(snapshot, series_data: dict | None, *, series_key: str = "") -> list[dict]:
    """The dossier's charts of a step, as images (data: URIs keep the page's CSP strict),
    drawn once per set of inputs (about 250 ms of CPU) and then read from the chart cache."""
    if snapshot is None:
        return []
    if series_data is not None and not series_key:
        series_key = hashlib.sha256(
            json.dumps(series_data, sort_keys=True, default=str).encode()).hexdigest()
    cache = caches["charts"]
    key = chart_key(snapshot, series_key if series_data is not None else "")
    found = cache.get(key)
    if found is not None:
        return found
    drawn = _draw(snapshot, series_data)
    cache.set(key, drawn)
    return drawn


def _draw(snapshot, series_data: dict | None) -> list[dict]:
    titles = {"cooling_failure": "Cooling-failure scenario: Tp, MTSR, MTT and TD24",
              "accumulation": "Accumulation and MTSR over the dosing",
              "tmr": "TMRad against temperature",
              "heat_release": "Heat release against cooling capacity"}
    out = []
    for name, svg in charts.step_charts(snapshot, series_data).items():
        encoded = base64.b64encode(svg.encode("utf-8")).decode("ascii")
        out.append({"name": name, "title": titles.get(name, name.replace("_", " ")),
                    "src": f"data:image/svg+xml;base64,{encoded}"})
    return out


def kinetics_parameters(test) -> list[dict]:
    """The chosen model's parameters with their standard uncertainties (fit and scans)."""
    k = (test.kinetics or {}) if test is not None else {}
    fit = (k.get("fits") or {}).get(k.get("model")) or {}
    return [{"name": name.replace("_", " "), "value": display.number(p["value"]),
             "stderr": display.number(p["stderr"]), "unit": p["unit"]}
            for name, p in (fit.get("parameters") or {}).items()]


def decomposition_chart_images(test) -> list[dict]:
    """The evidence of a test's curves (scans with baselines and fit, E(α)) as images."""
    if test is None or not test.curves.exists():
        return []
    # a test's version changes with every curve and every derived value: the charts' key
    key = f"decomposition-charts:{test.pk}:{test.version}"
    found = caches["charts"].get(key)
    if found is not None:
        return found
    kinetics = test.kinetics or {}
    out = []
    figures = (
        (("dsc_scans", "DSC scans with baselines and the fitted model",
          scans_chart(scan_data(test), kinetics)),
         ("e_alpha", "Activation energy against conversion (Friedman, OFW)",
          e_alpha_chart(kinetics)))
        if test.method == "dsc"
        else (("adiabatic_runs", "Adiabatic runs: self-heat rate, measured and φ-corrected",
               arc_chart(run_points(test.curves.order_by("id"), 400))),)
    )
    for name, title, svg in figures:
        encoded = base64.b64encode(svg.encode("utf-8")).decode("ascii")
        out.append({"name": name, "title": title, "src": f"data:image/svg+xml;base64,{encoded}"})
    caches["charts"].set(key, out)
    return out
