"""A whole process as one JSON document, and back (format `exoledger-process`, version 1).

Export: the site, the process, its steps with their calorimetry runs (and series: original
file as base64 with its SHA-256, SI columns), decomposition tests (and DSC peaks, and
measured curves: original file as base64 with its SHA-256 and the analysis settings), the
vessels and solvents the steps use, and each step's current indicator snapshot (for
information: the import recomputes them). Every quantity is `{"value": v, "unit": u}` with
`u` the SI unit of its kind (`kelvin`, `pascal`, `J/kg` …), so that a round trip gives the
stored floats back bit for bit and the same indicators.

Import, all or nothing in one transaction: a vessel (by tag), solvent (by CAS number) or
site (by code) that already exists is reused when every field is identical and refused
otherwise; missing ones are created. The process must be new at its site. Review state
(`needs_review`, approvals) is not imported. Problems come back as one list of
`{field, value, rule, code}` with `field` the path in the document (`steps.0.name`).

A curve is imported from its bytes (checked against its SHA-256) through the same
`curve_attach` as an upload, so the test's onset, energy and kinetics are derived again
rather than trusted from the document.

The imported steps' `inputs_hash` equals the exported one except for the record ids in the
`basis` block; `portable_inputs_hash` (ids blanked) is equal, and is in every export.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
from datetime import date

from django.core.exceptions import ValidationError
from django.db import models, transaction
from django.utils import timezone

from calcs.errors import CalcInputError
from hazards.api.serializers import indicators_payload
from hazards.fieldkinds import kinds_for
from hazards.models import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionCurve,
    DecompositionPeak,
    DecompositionTest,
    Measure,
    Process,
    ReactionStep,
    Site,
    Solvent,
    Vessel,
)
from hazards.quantities import SPECS, QuantityError, parse_quantity
from hazards.services.curves_store import curve_attach
from hazards.services.indicators import canonical_json, sha256_hex
from hazards.services.series import MAX_ROWS
from hazards.services.series_store import SeriesRejected, analyse_series, derived_summary

FORMAT, VERSION = "exoledger-process", 1
CAUTION = ("These records support, and do not replace, a qualified assessment; local codes, "
           "company standards and licensed practice prevail.")
SKIP = {"id", "created_at", "updated_at", "version", "needs_review", "approved_inputs_hash",
        "raw_file", "original", "sha256", "data", "derived", "columns", "file_name", "owner",
        "kinetics"}  # derived again on import from the exchanged decomposition curves
SUFFIXES = ("_w_per_k", "_kg_per_mol", "_kg_per_m3", "_j_per_kg_k", "_w_per_m2_k", "_j_per_kg", "_w_per_kg", "_mol_per_kg", "_k_per_s",
            "_j_per_mol", "_m3", "_m2", "_kg", "_pa", "_k", "_s", "_w", "_m")


def portable_inputs_hash(inputs: dict) -> str:
    """`inputs_hash` with the record ids of the basis block blanked (equal across databases)."""
    basis = {k: (v if k.endswith("_chosen") else None) for k, v in inputs.get("basis", {}).items()}
    return sha256_hex(canonical_json({**inputs, "basis": basis}))


TYPE_NAMES = {str: "a string", int: "an integer", float: "a number", bool: "true or false"}


def plain_type(model_field) -> tuple[type, ...]:
    """The JSON types a plain model field is written as (dates as ISO strings)."""
    if isinstance(model_field, models.BooleanField):
        return (bool,)
    if isinstance(model_field, models.IntegerField):
        return (int,)
    if isinstance(model_field, models.FloatField):
        return (int, float)
    return (str,)


def _api_name(field: str) -> str:
    for suffix in SUFFIXES:
        if field.endswith(suffix):
            return field[: -len(suffix)]
    return field


def _spec(model) -> tuple[dict[str, str], list[str]]:
    """({model field: kind} of quantities, [plain fields]) of a model's exchanged fields."""
    kinds = kinds_for(model)
    plain = [f.name for f in model._meta.concrete_fields
             if f.name not in SKIP and not f.is_relation and f.name not in kinds]
    return kinds, plain


def _dump(obj) -> dict:
    kinds, plain = _spec(type(obj))
    out = {}
    for name in plain:
        value = getattr(obj, name)
        out[name] = value.isoformat() if isinstance(value, date) else value
    for name, kind in kinds.items():
        value = getattr(obj, name)
        out[_api_name(name)] = None if value is None else {"value": value,
                                                           "unit": SPECS[kind].si_unit}
    return out


def _series(run) -> dict | None:
    try:
        series = run.series
    except CalorimetrySeries.DoesNotExist:
        return None
    return {**_dump(series), "file_name": series.file_name, "sha256": series.sha256,
            "original_base64": base64.b64encode(bytes(series.original)).decode("ascii"),
            "columns": series.columns, "data": series.data}


def _curve(curve) -> dict:
    return {**_dump(curve), "file_name": curve.file_name, "sha256": curve.sha256,
            "original_base64": base64.b64encode(bytes(curve.original)).decode("ascii")}


def _test(test) -> dict:
    out = {**_dump(test), "peaks": [_dump(p) for p in test.peaks.all()]}
    curves = list(test.curves.all())
    if curves:
        out["curves"] = [_curve(c) for c in curves]
        out["activation_energy_from_curves"] = (
            (test.kinetics or {}).get("activation_energy_source") == "curve")
    return out


def export_process(process: Process) -> dict:
    """The exchange document of a process (reads a fixed number of queries)."""
    steps = list(
        ReactionStep.objects.filter(process=process).select_related("vessel", "solvent")
        .prefetch_related("calorimetry_runs__series", "decomposition_tests__peaks", "measures",
                          "decomposition_tests__curves", "snapshots")
        .order_by("sequence")
    )
    vessels = {s.vessel.tag: s.vessel for s in steps if s.vessel}
    solvents = {s.solvent.cas_number: s.solvent for s in steps if s.solvent}
    out_steps = []
    for step in steps:
        current = next((snap for snap in step.snapshots.all() if snap.is_current), None)
        indicators = indicators_payload(current)
        if indicators is not None:
            indicators["portable_inputs_hash"] = portable_inputs_hash(current.inputs)
        out_steps.append({
            **_dump(step),
            "vessel": step.vessel.tag if step.vessel else None,
            "solvent": step.solvent.cas_number if step.solvent else None,
            "needs_review": step.needs_review,
            "calorimetry_runs": [{**_dump(r), "series": _series(r)}
                                 for r in step.calorimetry_runs.all()],
            "decomposition_tests": [_test(t) for t in step.decomposition_tests.all()],
            "indicators": indicators,
            # protective measures (issue 17); their owner is a local person, not exchanged
            **({"measures": [_dump(m) for m in sorted(step.measures.all(), key=lambda m: m.pk)]}
               if step.measures.all() else {}),
        })
    site = process.site
    return {
        "format": FORMAT, "version": VERSION,
        "exported_at": timezone.now().isoformat().replace("+00:00", "Z"),
        "caution": CAUTION,
        "site": {"code": site.code, "name": site.name,
                 "revalidation_interval_months": site.revalidation_interval_months},
        "process": {"name": process.name, "description": process.description},
        "vessels": [_dump(v) for _, v in sorted(vessels.items())],
        "solvents": [_dump(s) for _, s in sorted(solvents.items())],
        "steps": out_steps,
    }


# --- import ------------------------------------------------------------------------------

class ExchangeRejected(Exception):
    def __init__(self, errors: list[dict]):
        self.errors = errors
        super().__init__(f"{len(errors)} problem(s) in the document")


def _err(path: str, value, rule: str, code: str = "invalid") -> dict:
    shown = value if isinstance(value, str | int | float | bool) or value is None else None
    return {"field": path, "value": shown, "rule": rule, "code": code}


class _Reader:
    def __init__(self):
        self.errors: list[dict] = []

    def fail(self, path, value, rule, code="invalid"):
        self.errors.append(_err(path, value, rule, code))

    def obj(self, doc, path: str) -> dict:
        if not isinstance(doc, dict):
            self.fail(path, None, "must be an object", "type")
            return {}
        return doc

    def items(self, doc: dict, key: str, path: str) -> list:
        value = doc.get(key, [])
        if not isinstance(value, list):
            self.fail(f"{path}{key}", None, "must be a list", "type")
            return []
        return value

    def fields(self, model, doc: dict, path: str, extra: set[str] = frozenset()) -> dict:
        """Model field values from a document object (quantities converted to SI)."""
        kinds, plain = _spec(model)
        names = {_api_name(n): n for n in kinds}
        values: dict = {}
        for key, raw in doc.items():
            where = f"{path}{key}"
            if key in extra:
                continue
            if key in names:
                if raw is None:
                    values[names[key]] = None
                    continue
                if not isinstance(raw, dict) or set(raw) != {"value", "unit"}:
                    self.fail(where, None, 'must be {"value": number, "unit": "SI unit"}',
                              "bad_shape")
                    continue
                try:
                    values[names[key]] = parse_quantity(raw, field=where, kind=kinds[names[key]])
                except QuantityError as exc:
                    self.fail(where, raw if isinstance(raw, str) else None, exc.rule, exc.code)
            elif key in plain:
                expected = plain_type(model._meta.get_field(key))
                if raw is None or (isinstance(raw, expected) and not (
                        isinstance(raw, bool) and bool not in expected)):
                    values[key] = raw
                else:
                    self.fail(where, raw if isinstance(raw, str | int | float) else None,
                              f"must be {' or '.join(TYPE_NAMES[t] for t in expected)}", "type")
            else:
                self.fail(where, None, "is not a field of this format", "unknown_field")
        return values

    def clean(self, instance, path: str, exclude=()) -> bool:
        try:
            instance.full_clean(exclude=list(exclude))
        except ValidationError as exc:
            for name, messages in exc.message_dict.items():
                where = path + ("" if name == "__all__" else _api_name(name))
                for message in messages:
                    self.fail(where.rstrip("."), None, message, "invalid")
            return False
        return True


def _reuse_or_create(reader: _Reader, model, lookup: str, doc: dict, path: str):
    values = reader.fields(model, doc, path)
    key = values.get(lookup)
    existing = model.objects.filter(**{lookup: key}).first() if key else None
    if existing is None:
        instance = model(**values)
        if reader.clean(instance, path):
            instance.save()
        return instance
    for name, value in values.items():
        if getattr(existing, name) != value and str(getattr(existing, name)) != str(value):
            reader.fail(f"{path}{_api_name(name)}", None,
                        f"{model._meta.verbose_name} {key} exists with a different value; "
                        "import refuses to change it", "conflict")
    return existing


def import_process(document, *, owner=None) -> Process:
    """Create a process from an exchange document, all or nothing (raises ExchangeRejected)."""
    reader = _Reader()
    doc = reader.obj(document, "")
    if doc.get("format") != FORMAT or doc.get("version") != VERSION:
        raise ExchangeRejected([_err("format", None, f"must be format {FORMAT!r} version "
                                     f"{VERSION}", "format")])
    with transaction.atomic():
        try:
            process = _import(reader, doc, owner)
        except CalcInputError as exc:  # inputs the model accepts but the methods refuse
            reader.fail(exc.argument, None, exc.rule, "calculation")
        if reader.errors:
            raise ExchangeRejected(reader.errors)
    return process


def _import(reader: _Reader, doc: dict, owner) -> Process | None:
    site_doc = reader.obj(doc.get("site"), "site")
    site = _reuse_or_create(reader, Site, "code", site_doc, "site.")
    vessels = {}
    for i, v in enumerate(reader.items(doc, "vessels", "")):
        vessel = _reuse_or_create(reader, Vessel, "tag", reader.obj(v, f"vessels.{i}"),
                                  f"vessels.{i}.")
        vessels[vessel.tag] = vessel
    solvents = {}
    for i, s in enumerate(reader.items(doc, "solvents", "")):
        solvent = _reuse_or_create(reader, Solvent, "cas_number", reader.obj(s, f"solvents.{i}"),
                                   f"solvents.{i}.")
        solvents[solvent.cas_number] = solvent
    if reader.errors:
        return None
    process = Process(site=site, owner=owner,
                      **reader.fields(Process, reader.obj(doc.get("process"), "process"),
                                      "process."))
    if not reader.clean(process, "process."):
        return None
    process.save()
    for i, raw in enumerate(reader.items(doc, "steps", "")):
        _import_step(reader, process, reader.obj(raw, f"steps.{i}"), f"steps.{i}.", vessels,
                     solvents, owner)
    return process


def _ref(reader, table: dict, key, path: str, what: str):
    if key is None:
        return None
    if key not in table:
        reader.fail(path, key, f"must name a {what} listed in the document", "unknown_reference")
    return table.get(key)


def _import_step(reader, process, doc, path, vessels, solvents, owner=None) -> None:
    children = {"vessel", "solvent", "calorimetry_runs", "decomposition_tests", "indicators",
                "needs_review", "measures"}
    step = ReactionStep(
        process=process,
        vessel=_ref(reader, vessels, doc.get("vessel"), f"{path}vessel", "vessel"),
        solvent=_ref(reader, solvents, doc.get("solvent"), f"{path}solvent", "solvent"),
        **reader.fields(ReactionStep, doc, path, children),
    )
    if not reader.clean(step, path, exclude=["process"]) or reader.errors:
        return
    step.save()
    for i, raw in enumerate(reader.items(doc, "calorimetry_runs", path)):
        where = f"{path}calorimetry_runs.{i}."
        run_doc = reader.obj(raw, where.rstrip("."))
        run = CalorimetryRun(step=step, **reader.fields(CalorimetryRun, run_doc, where,
                                                        {"series"}))
        if reader.clean(run, where, exclude=["step"]) and not reader.errors:
            run.save()
            if run_doc.get("series") is not None:
                _import_series(reader, run, reader.obj(run_doc["series"], f"{where}series"),
                               f"{where}series.")
    for i, raw in enumerate(reader.items(doc, "decomposition_tests", path)):
        where = f"{path}decomposition_tests.{i}."
        test_doc = reader.obj(raw, where.rstrip("."))
        test = DecompositionTest(step=step, **reader.fields(
            DecompositionTest, test_doc, where,
            {"peaks", "curves", "activation_energy_from_curves"}))
        if test_doc.get("curves") and test_doc.get("activation_energy_from_curves") is True:
            test.activation_energy_j_per_mol = None  # derived again from the runs
        if not reader.clean(test, where, exclude=["step"]) or reader.errors:
            continue
        test.save()
        for j, curve_raw in enumerate(reader.items(test_doc, "curves", where)):
            at = f"{where}curves.{j}."
            _import_curve(reader, test, reader.obj(curve_raw, at.rstrip(".")), at)
        for j, peak_raw in enumerate(reader.items(test_doc, "peaks", where)):
            at = f"{where}peaks.{j}."
            peak = DecompositionPeak(test=test, **reader.fields(
                DecompositionPeak, reader.obj(peak_raw, at.rstrip(".")), at))
            if reader.clean(peak, at, exclude=["test"]) and not reader.errors:
                peak.save()
    for i, raw in enumerate(reader.items(doc, "measures", path)):
        where = f"{path}measures.{i}."
        # the importing person owns the imported measures (owners are local people)
        measure = Measure(step=step, owner=owner, **reader.fields(
            Measure, reader.obj(raw, where.rstrip(".")), where))
        if reader.clean(measure, where, exclude=["step"]) and not reader.errors:
            measure.save()


def _import_curve(reader, test, doc, path) -> None:
    values = reader.fields(DecompositionCurve, doc, path,
                           {"file_name", "sha256", "original_base64"})
    try:
        original = base64.b64decode(doc.get("original_base64") or "", validate=True)
    except (binascii.Error, ValueError, TypeError):
        reader.fail(f"{path}original_base64", None, "must be base64", "invalid")
        return
    if hashlib.sha256(original).hexdigest() != doc.get("sha256"):
        reader.fail(f"{path}sha256", doc.get("sha256"),
                    "must be the SHA-256 of the original file", "hash_mismatch")
        return
    if values.get("sample_mass_kg") is None:
        reader.fail(f"{path}sample_mass", None, "is required", "required")
    if reader.errors:
        return
    low, high = values.get("limit_low_k"), values.get("limit_high_k")
    try:
        curve_attach(
            test=test,
            file_name=str(doc.get("file_name") or "curve.csv"),
            raw=original,
            sample_mass_kg=values["sample_mass_kg"],
            exotherm_positive=values.get("exotherm_positive", True),
            phi_factor=values.get("phi_factor"),
            free_volume_m3=values.get("free_volume_m3"),
            baseline=values.get("baseline") or "sigmoidal",
            limits_k=(low, high) if low is not None and high is not None else None,
        )
    except SeriesRejected as exc:
        for p in exc.problems:
            where = f"row {p.row}, column {p.column}: " if p.row else ""
            reader.fail(f"{path}original_base64", p.value, f"{where}{p.rule}"[:300], p.code)
    test.refresh_from_db()


def _import_series(reader, run, doc, path) -> None:
    known = {"file_name", "sha256", "original_base64", "columns", "data"}
    values = reader.fields(CalorimetrySeries, doc, path, known)
    try:
        original = base64.b64decode(doc.get("original_base64") or "", validate=True)
    except (binascii.Error, ValueError, TypeError):
        reader.fail(f"{path}original_base64", None, "must be base64", "invalid")
        return
    if hashlib.sha256(original).hexdigest() != doc.get("sha256"):
        reader.fail(f"{path}sha256", doc.get("sha256"),
                    "must be the SHA-256 of the original file", "hash_mismatch")
        return
    data = doc.get("data")
    series_keys = ("time_s", "heat_release_rate_w", "dosed_fraction")
    if not isinstance(data, dict) or not all(isinstance(data.get(k), list) for k in series_keys):
        reader.fail(f"{path}data", None, f"must hold the lists {', '.join(series_keys)}", "type")
        return
    columns = [data[k] for k in series_keys] + (
        [data["reactor_temperature_k"]] if data.get("reactor_temperature_k") is not None else [])
    if any(len(col) > MAX_ROWS or not all(isinstance(x, int | float) and not isinstance(x, bool)
                                          for x in col) for col in columns):
        reader.fail(f"{path}data", None, f"columns must be lists of at most {MAX_ROWS} numbers",
                    "type")
        return
    if not all(0.0 <= x <= 1.0 for x in data["dosed_fraction"]):
        reader.fail(f"{path}data.dosed_fraction", None, "must be fractions in 0..1",
                    "out_of_range")
        return
    series = CalorimetrySeries(run=run, file_name=str(doc.get("file_name") or "")[:255],
                               original=original, sha256=doc["sha256"],
                               columns=doc.get("columns") or {}, data=data, **values)
    try:
        analysis = analyse_series(data, step=run.step, initial_mass_kg=series.initial_mass_kg,
                                  feed_mass_kg=series.feed_mass_kg)
    except (ValueError, TypeError) as exc:  # CalcInputError is a ValueError
        reader.fail(f"{path}data", None, str(exc)[:300], "calculation")
        return
    series.derived = derived_summary(analysis)
    if reader.clean(series, path, exclude=["run"]) and not reader.errors:
        series.save()
