"""`/api/v1/decomposition-tests/<id>/curves/`: upload a measured curve, list the curves."""

from __future__ import annotations

import os

from rest_framework import permissions, serializers, status
from rest_framework.response import Response

from hazards.api.concurrency import expected_version, stale
from hazards.api.errors import ProblemError, flatten_errors, summarise
from hazards.api.fields import QuantityField
from hazards.api.idempotency import idempotent
from hazards.api.series_api import FormQuantityField, _q
from hazards.models import BaselineMethod
from hazards.services import series as parser
from hazards.services.curves import parse_curve
from hazards.services.curves_store import curve_attach
from hazards.services.records import StaleRecord
from hazards.services.series_store import SeriesRejected

POST_DOC = f"""Attach one measured curve to the test (multipart form, field `file`).

DSC test: one file per heating rate, CSV (as for calorimeter series: UTF-8, UTF-16 or
Latin-1; comma, semicolon or tab separated; a decimal comma in semicolon- or tab-separated
files) with the header `time [min]`,
`temperature [degC]`, `heat_flow [mW]` (any unit of the right dimension; exotherm positive,
or send `exotherm_positive=false`) and the form field `sample_mass` (e.g. `"2.0 mg"`).
Adiabatic test: `time`, `temperature` and optionally `pressure`, with the cell's
`phi_factor` and, for the non-condensable gas after cooling, its `free_volume` (e.g.
`"10 mL"`). Optional `baseline` (`sigmoidal` default, or `linear`) and integration limits
`limit_low`/`limit_high` (temperatures; default: where the exotherm leaves and rejoins the
baseline).

The answer (201) gives the curve's derived extrapolated onset (ASTM E537 tangent), first
detectable deviation, peak temperature, energy by integration over the baseline and the
heating rate from the temperature column, each with its method. For an adiabatic run: the
onset at the detection sensitivity (0.02 K/min), the measured TMR, the φ-corrected onset and
TMR there (Fisher et al. 1992, ASTM E1981; E typed on the test or, first order, from the
run), maximum pressure and pressure rate, and the non-condensable gas when the file goes on
until the cell has cooled back to its start temperature. The test's onset and energy
and, with scans at 3 or more heating rates, its kinetics (nth-order and autocatalytic fits,
the chosen model, E(α), the autocatalysis screen) are derived from all its curves, and the
step's TD24 and TMRad come from the chosen model by adiabatic simulation, in the same
transaction. A bad file is refused whole (`series_rejected`, 400) with `row` and `column` of
every problem; nothing is stored. Limits: {parser.MAX_BYTES} bytes, {parser.MAX_ROWS} rows.
This tool supports and does not replace a qualified assessment; local codes prevail."""

GET_DOC = "The test's curves with what each yields (no data columns)."


class DecompositionCurveUploadSerializer(serializers.Serializer):
    file = serializers.FileField(help_text="The CSV file (see the operation's description).")
    sample_mass = FormQuantityField("mass", help_text='Sample mass, e.g. `"2.0 mg"`.')
    exotherm_positive = serializers.BooleanField(
        default=True, help_text="False when the instrument writes exotherms as negative."
    )
    phi_factor = serializers.FloatField(
        required=False, allow_null=True, min_value=1.0, help_text="φ of an adiabatic test cell."
    )
    free_volume = FormQuantityField(
        "volume",
        required=False,
        allow_null=True,
        help_text='Gas volume of an adiabatic cell, e.g. `"10 mL"`.',
    )
    baseline = serializers.ChoiceField(
        choices=BaselineMethod.choices, default=BaselineMethod.SIGMOIDAL
    )
    limit_low = FormQuantityField("temperature", required=False, allow_null=True)
    limit_high = FormQuantityField("temperature", required=False, allow_null=True)


class DecompositionCurveSerializer(serializers.Serializer):
    id = serializers.IntegerField()
    test = serializers.IntegerField()
    test_version = serializers.IntegerField()
    file_name = serializers.CharField()
    sha256 = serializers.CharField()
    rows = serializers.IntegerField()
    columns = serializers.DictField(child=serializers.CharField())
    sample_mass = QuantityField("mass", read_only=True)
    baseline = serializers.CharField()
    heating_rate = QuantityField("heating_rate", read_only=True, allow_null=True)
    onset_temperature = QuantityField("temperature", read_only=True, allow_null=True)
    first_deviation_temperature = QuantityField("temperature", read_only=True, allow_null=True)
    peak_temperature = QuantityField("temperature", read_only=True, allow_null=True)
    decomposition_energy = QuantityField("specific_energy", read_only=True, allow_null=True)
    measured_tmr = QuantityField("time", read_only=True, allow_null=True)
    corrected_onset_temperature = QuantityField("temperature", read_only=True, allow_null=True)
    tmr_at_corrected_onset = QuantityField("time", read_only=True, allow_null=True)
    max_pressure = QuantityField("pressure", read_only=True, allow_null=True)
    max_pressure_rate = QuantityField("pressure_rate", read_only=True, allow_null=True)
    non_condensable_gas = QuantityField("specific_amount", read_only=True, allow_null=True)
    methods = serializers.DictField(child=serializers.CharField())
    warnings = serializers.ListField(child=serializers.CharField())


class CurvePermission(permissions.BasePermission):
    perms = ("hazards.add_decompositioncurve", "hazards.change_decompositiontest")
    allows_every_read = True  # reads are limited by visible() (404), never refused

    def has_permission(self, request, view):
        return request.method in permissions.SAFE_METHODS or request.user.has_perms(self.perms)

    def describe(self, view, method):
        if method in permissions.SAFE_METHODS:
            return ""
        return "the permissions " + ", ".join(f"`{p}`" for p in self.perms)


def payload(test, curve) -> dict:
    d = curve.derived
    corrected, gas = d.get("corrected") or {}, d.get("gas") or {}
    return {
        "id": curve.pk,
        "test": test.pk,
        "test_version": test.version,
        "file_name": curve.file_name,
        "sha256": curve.sha256,
        "rows": len(curve.data["time_s"]),
        "columns": dict(curve.columns),
        "sample_mass": _q(curve.sample_mass_kg, "mass"),
        "baseline": curve.baseline,
        "heating_rate": _q(d.get("heating_rate_k_per_s"), "heating_rate"),
        "onset_temperature": _q(d.get("onset_k"), "temperature"),
        "first_deviation_temperature": _q(d.get("first_deviation_k"), "temperature"),
        "peak_temperature": _q(
            d.get("peak_k") or d.get("temperature_at_max_rate_k"), "temperature"
        ),
        "decomposition_energy": _q(d.get("energy_j_per_kg"), "specific_energy"),
        "measured_tmr": _q(d.get("measured_tmr_s"), "time"),
        "corrected_onset_temperature": _q(corrected.get("onset_k"), "temperature"),
        "tmr_at_corrected_onset": _q(corrected.get("tmr_at_onset_s"), "time"),
        "max_pressure": _q(d.get("max_pressure_pa"), "pressure"),
        "max_pressure_rate": _q(d.get("max_pressure_rate_pa_per_s"), "pressure_rate"),
        "non_condensable_gas": _q(gas.get("mol_per_kg"), "specific_amount"),
        "methods": dict(d.get("methods") or {}),
        "warnings": list(d.get("warnings") or []),
    }


def curves_view(view, request):
    test = view.get_object()
    if request.method == "GET":
        return Response([payload(test, c) for c in test.curves.order_by("id")])
    return idempotent(request, lambda: _upload(request, test))


def _upload(request, test):
    upload = request.FILES.get("file")
    if upload is not None and upload.size > parser.MAX_BYTES:
        raise ProblemError(
            "payload_too_large",
            f"The file is larger than the limit of {parser.MAX_BYTES} bytes.",
            errors=[
                {
                    "field": "file",
                    "value": upload.name,
                    "code": "too_large",
                    "rule": f"is larger than the limit of {parser.MAX_BYTES} bytes",
                }
            ],
        )
    form = DecompositionCurveUploadSerializer(data=request.data)
    if not form.is_valid():
        errors = flatten_errors(form.errors, request.data)
        if upload is not None:
            upload.seek(0)
            errors += [p.as_dict() for p in parse_curve(upload.read(), kind=test.method).problems]
        raise ProblemError("validation_error", summarise(errors), errors=errors)
    data = form.validated_data
    low, high = data.get("limit_low"), data.get("limit_high")
    expected = expected_version(request, test) if request.headers.get("If-Match") else None
    data["file"].seek(0)
    try:
        curve = curve_attach(
            test=test,
            file_name=os.path.basename(data["file"].name or "curve.csv"),
            raw=data["file"].read(),
            sample_mass_kg=data["sample_mass"],
            exotherm_positive=data["exotherm_positive"],
            phi_factor=data.get("phi_factor"),
            free_volume_m3=data.get("free_volume"),
            baseline=data["baseline"],
            limits_k=(low, high) if low and high else None,
            expected_test_version=expected,
        )
    except SeriesRejected as exc:
        errors = [p.as_dict() for p in exc.problems]
        raise ProblemError("series_rejected", summarise(errors), errors=errors) from None
    except StaleRecord as exc:
        raise stale(test, exc) from None
    test.refresh_from_db()
    return Response(payload(test, curve), status=status.HTTP_201_CREATED)
