"""`/api/v1/calorimetry-runs/<id>/series/`: upload a calorimeter series, read it back."""

from __future__ import annotations

import os

import numpy as np
from rest_framework import permissions, serializers, status
from rest_framework.response import Response

from calcs.units import Q_, ureg
from hazards.api.concurrency import expected_version, stale
from hazards.api.errors import ProblemError, flatten_errors, summarise
from hazards.api.fields import QuantityField
from hazards.api.idempotency import idempotent
from hazards.models import CalorimetrySeries
from hazards.quantities import SPECS, display_unit, from_si, size_text
from hazards.services import series as parser
from hazards.services.records import StaleRecord
from hazards.services.series_store import (
    SeriesExists,
    SeriesRejected,
    analyse_series,
    series_attach,
)

POST_DOC = f"""Attach the calorimeter's time series to the run (multipart form, field `file`).

The file is CSV with a header naming each column and its unit in square brackets (UTF-8,
UTF-16 or Windows-1252/Latin-1; comma, semicolon or tab separated; in a semicolon- or
tab-separated file a decimal comma is read, and a file mixing decimal commas and points is
refused at the cell; problems quote values and limits in the file's own units):
`time [min]`, `heat_release_rate [W]`, and `dosed_fraction [-]` or `dosed_mass [g]`,
optionally `reactor_temperature [degC]`; any unit of the right dimension is accepted. Form
fields `initial_mass` and `feed_mass` are the lab-scale masses (e.g. `"400 g"`). A
`dosed_fraction` above 1 (up to 3) is a feed beyond the stoichiometric amount: it is accepted
and capped at 1 for the accumulation (METHODS.md §1.2 step 4).

The original bytes are stored with their SHA-256; the run's `specific_reaction_heat`
(Q′ = Q_tot / (m_0 + m_feed)) and `max_accumulation` are derived from the series by
`calcs.accumulation.analyse_accumulation`, the step's indicators are recomputed, and the
answer gives the derived values and the MTSR(t) curve (with the step's c_p and T_p).

A bad file is refused as a whole (`series_rejected`, 400) with one `errors` item per
problem, giving `row` (header = 1) and `column`: wrong encoding, missing or unknown column,
unknown unit, empty, non-numeric (including formulas such as `=SUM(A1:A3)`) or non-finite
(`nan`, `inf`, `1e309`) cells, time not increasing. Limits: {size_text(parser.MAX_BYTES)} per file (413
above), {parser.MAX_ROWS} data rows, {parser.MAX_PROBLEMS} problems listed. A run keeps one
series: a second upload gets 409. Optional `If-Match` with the run's ETag guards against
uploading onto a run that changed."""

GET_DOC = ("The run's series: file, SHA-256, columns, the derived values and the MTSR(t) "
           "curve computed with the step's current c_p and T_p. 404 when none is attached.")


class FormQuantityField(QuantityField):
    """A quantity sent as a form field: a string such as `"400 g"`."""

    form_only = True


class UploadSerializer(serializers.Serializer):
    file = serializers.FileField(help_text="The CSV file (see the operation's description).")
    initial_mass = FormQuantityField("mass", help_text="Lab-scale mass before dosing, e.g. "
                                     "`\"400 g\"`.")
    feed_mass = FormQuantityField("mass", help_text="Lab-scale mass of the whole feed, e.g. "
                                  "`\"100 g\"`: the mass at dosed fraction 1, or all that was "
                                  "dosed when the feed goes beyond the stoichiometric amount. A "
                                  "record that stops earlier holds only the part dosed.")


class CurveColumnSerializer(serializers.Serializer):
    unit = serializers.CharField()
    values = serializers.ListField(child=serializers.FloatField())


class CurveSerializer(serializers.Serializer):
    time = CurveColumnSerializer()
    mtsr = CurveColumnSerializer()
    accumulation = CurveColumnSerializer()


class DerivedSerializer(serializers.Serializer):
    specific_reaction_heat = QuantityField("specific_energy", read_only=True)
    max_accumulation = QuantityField("fraction", read_only=True)
    max_mtsr = QuantityField("temperature", read_only=True)
    max_mtsr_time = QuantityField("time", read_only=True)
    accumulation_at_max_mtsr = QuantityField("fraction", read_only=True)
    max_heat_release_rate = QuantityField("specific_power", read_only=True)
    end_of_reaction_time = QuantityField("time", read_only=True, allow_null=True)
    end_criterion = serializers.CharField()
    warnings = serializers.ListField(child=serializers.CharField())
    method = serializers.CharField()
    calcs_version = serializers.CharField()


class SeriesSerializer(serializers.Serializer):
    run = serializers.IntegerField()
    run_version = serializers.IntegerField(help_text="The run's version after the upload.")
    file_name = serializers.CharField()
    sha256 = serializers.CharField()
    rows = serializers.IntegerField()
    columns = serializers.DictField(child=serializers.CharField(),
                                    help_text="Column -> unit as written in the file.")
    initial_mass = QuantityField("mass", read_only=True)
    feed_mass = QuantityField("mass", read_only=True)
    derived = DerivedSerializer()
    mtsr_curve = CurveSerializer()


class SeriesPermission(permissions.BasePermission):
    allows_every_read = True
    perms = ("hazards.add_calorimetryseries", "hazards.change_calorimetryrun")

    def has_permission(self, request, view):
        return request.method in permissions.SAFE_METHODS or request.user.has_perms(self.perms)

    def describe(self, view, method):
        if method in permissions.SAFE_METHODS:
            return ""
        return "the permissions " + ", ".join(f"`{p}`" for p in self.perms)


def _column(values, kind: str) -> dict:
    spec = SPECS[kind]
    converted = Q_(np.asarray(values, dtype=float), ureg.Unit(spec.si_unit)).to(
        ureg.Unit(spec.canonical_unit)).magnitude
    return {"unit": display_unit(kind), "values": np.asarray(converted).tolist()}


def _q(value, kind):
    return None if value is None else {"value": from_si(value, kind=kind),
                                       "unit": display_unit(kind)}


def payload(run, series, analysis) -> dict:
    return {
        "run": run.pk,
        "run_version": run.version,
        "file_name": series.file_name,
        "sha256": series.sha256,
        "rows": len(series.data["time_s"]),
        "columns": dict(series.columns),
        "initial_mass": _q(series.initial_mass_kg, "mass"),
        "feed_mass": _q(series.feed_mass_kg, "mass"),
        "derived": {
            "specific_reaction_heat": _q(analysis.specific_heat_j_per_kg, "specific_energy"),
            "max_accumulation": _q(analysis.max_accumulation, "fraction"),
            "max_mtsr": _q(analysis.max_mtsr_k, "temperature"),
            "max_mtsr_time": _q(analysis.max_mtsr_time_s, "time"),
            "accumulation_at_max_mtsr": _q(analysis.accumulation_at_max_mtsr, "fraction"),
            "max_heat_release_rate": _q(analysis.max_heat_release_rate_w_per_kg,
                                        "specific_power"),
            "end_of_reaction_time": _q(analysis.end_time_s, "time"),
            "end_criterion": analysis.end_criterion,
            "warnings": list(analysis.warnings),
            "method": "calcs.accumulation.analyse_accumulation",
            "calcs_version": series.derived.get("calcs_version", ""),
        },
        "mtsr_curve": {
            "time": _column(analysis.time_s, "time"),
            "mtsr": _column(analysis.mtsr_k, "temperature"),
            "accumulation": _column(analysis.accumulation, "fraction"),
        },
    }


def series_view(view, request):
    run = view.get_object()
    if request.method == "GET":
        series = CalorimetrySeries.objects.filter(run=run).first()
        if series is None:
            raise ProblemError("not_found", "This run has no calorimeter series.")
        analysis = analyse_series(series.data, step=run.step,
                                  initial_mass_kg=series.initial_mass_kg,
                                  feed_mass_kg=series.feed_mass_kg)
        return Response(payload(run, series, analysis))
    return idempotent(request, lambda: _upload(request, run))


def _upload(request, run):
    upload = request.FILES.get("file")
    if upload is not None and upload.size > parser.MAX_BYTES:
        limit = size_text(parser.MAX_BYTES)
        raise ProblemError("payload_too_large", f"The file is larger than the limit of {limit}.",
                           errors=[{"field": "file", "value": upload.name, "code": "too_large",
                                    "rule": f"is larger than the limit of {limit}"}])
    form = UploadSerializer(data=request.data)
    if not form.is_valid():
        errors = flatten_errors(form.errors, request.data)
        if upload is not None:  # report the file's own problems in the same answer
            upload.seek(0)
            preview = parser.parse_series(upload.read())
            errors += [p.as_dict() for p in preview.problems if p.code != "needs_feed_mass"]
        raise ProblemError("validation_error", summarise(errors), errors=errors)
    data = form.validated_data
    expected = expected_version(request, run) if request.headers.get("If-Match") else None
    data["file"].seek(0)
    try:
        series, analysis = series_attach(
            run=run, file_name=os.path.basename(data["file"].name or "series.csv"),
            raw=data["file"].read(), initial_mass_kg=data["initial_mass"],
            feed_mass_kg=data["feed_mass"], expected_run_version=expected,
        )
    except SeriesRejected as exc:
        errors = [p.as_dict() for p in exc.problems]
        raise ProblemError("series_rejected", summarise(errors), errors=errors) from None
    except SeriesExists as exc:
        raise ProblemError("conflict", str(exc), errors=[{
            "field": "file", "value": exc.series.file_name, "code": "series_exists",
            "rule": "a run keeps one series; this run already has one"}]) from None
    except StaleRecord as exc:
        raise stale(run, exc) from None
    run.refresh_from_db()
    return Response(payload(run, series, analysis), status=status.HTTP_201_CREATED)
