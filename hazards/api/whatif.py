"""`POST /api/v1/steps/{id}/what-if/` and `GET /api/v1/steps/{id}/operating-window/`.

Both read only: nothing is saved, whatever is asked. The step is visible exactly as in
`/api/v1/steps/{id}/` (`hazards.review.access.visible`); others answer 404.
"""

from __future__ import annotations

import math

from django.shortcuts import get_object_or_404
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import permissions, serializers
from rest_framework.response import Response
from rest_framework.views import APIView

from hazards.api.errors import ProblemError
from hazards.api.fields import QuantityField
from hazards.api.idempotency import IdempotentPostMixin
from hazards.api.parsers import LimitedJSONParser
from hazards.models import ReactionStep
from hazards.quantities import QuantityError, parse_quantity
from hazards.review.access import visible
from hazards.whatif import services


class StepVisible(permissions.IsAuthenticated):
    def describe(self, view, method: str) -> str:
        return ("signed in, with any role on the step's process (administrators: any step); "
                "nothing is saved")


# --- shapes ------------------------------------------------------------------------------

class RateConstantSerializer(serializers.Serializer):
    value = serializers.FloatField()
    unit = serializers.CharField(help_text="Always 1/min.")


class FitQualitySerializer(serializers.Serializer):
    r_squared = serializers.FloatField()
    n_points = serializers.IntegerField(help_text="Post-dosing points fitted.")
    residual_rms = QuantityField("power")
    residuals = serializers.ListField(child=serializers.FloatField(),
                                      help_text="q_measured − q_model of each tail point [W].")
    dosing_time = QuantityField("time", help_text="Dosing time of the measured run.")
    temperature = QuantityField("temperature", help_text="Mean reactor temperature of the tail.")
    k_td = serializers.FloatField(help_text="k·t_d of the measured run (sensible: 1-100).")
    log_linear_rate_constant = RateConstantSerializer()
    model_accumulation_at_end_of_dosing = serializers.FloatField()
    measured_accumulation_at_end_of_dosing = serializers.FloatField()


class ModelSerializer(serializers.Serializer):
    name = serializers.CharField(help_text="pseudo_first_order.series_fit or "
                                 "pseudo_first_order.from_entered_accumulation")
    rate_constant = RateConstantSerializer(help_text="k at the reference temperature.")
    rate_constant_at_point = RateConstantSerializer(required=False)
    reference_temperature = QuantityField("temperature")
    activation_energy = QuantityField("molar_energy", allow_null=True)
    activation_energy_source = serializers.CharField(allow_null=True)
    initial_mass_fraction = serializers.FloatField()
    peak_scale = serializers.FloatField(help_text="Factor ≥ 1 on the model peak: measured/model "
                                        "peak at the measured condition.")
    fit = FitQualitySerializer(allow_null=True)
    arrhenius_r_squared = serializers.FloatField(allow_null=True)
    warnings = serializers.ListField(child=serializers.CharField())
    assumptions = serializers.ListField(child=serializers.CharField())
    references = serializers.ListField(child=serializers.CharField())


class WhatIfRequestSerializer(serializers.Serializer):
    dosing_time = QuantityField("time")
    process_temperature = QuantityField("temperature", required=False,
                                        help_text="Default: the step's process temperature.")
    activation_energy = QuantityField("molar_energy", required=False, help_text="E_a of the "
                                      "desired reaction; default: fitted from series at two or "
                                      "more temperatures, else none (then only the measured "
                                      "temperature is evaluated).")


class ProfileSerializer(serializers.Serializer):
    time_unit = serializers.CharField(help_text="Always min.")
    time = serializers.ListField(child=serializers.FloatField())
    accumulation = serializers.ListField(child=serializers.FloatField())
    mtsr_unit = serializers.CharField(help_text="Always degC.")
    mtsr = serializers.ListField(child=serializers.FloatField())


class OperatingPointSerializer(serializers.Serializer):
    mode = serializers.CharField(allow_null=True, help_text=(
        "series: the lab run as measured (lab and plant agree within 5 % dosing time, 0.5 K, "
        "0.05 final/initial mass); model: the dosing model at this point; no_credit: no model, "
        "no credit for reaction during dosing; lab_accumulation: an entered accumulation, no "
        "series. The same rule as the step's indicators."))
    basis = serializers.CharField(allow_null=True, help_text="Where the numbers come from.")


class WhatIfResponseSerializer(serializers.Serializer):
    dosing_time = QuantityField("time")
    process_temperature = QuantityField("temperature")
    max_accumulation = serializers.FloatField(help_text="a(t_d), thermal accumulation [-].")
    effective_accumulation = serializers.FloatField(help_text="max a(t)·m_final/m(t): gives "
                                                    "the maximum MTSR [-].")
    mtsr = QuantityField("temperature", allow_null=True)
    mtsr_time = QuantityField("time")
    peak_heat_release = QuantityField("power", allow_null=True, help_text="Plant scale.")
    cooling_capacity = QuantityField("power", allow_null=True)
    cooling_margin = serializers.FloatField(allow_null=True)
    minimum_cooling_margin = serializers.FloatField()
    tmr_ad_at_mtsr = QuantityField("duration_h", allow_null=True)
    mtt = QuantityField("temperature", allow_null=True)
    td24 = QuantityField("temperature", allow_null=True)
    criticality_class = serializers.IntegerField(allow_null=True)
    acceptable = serializers.BooleanField()
    warnings = serializers.ListField(child=serializers.CharField())
    operating_point = OperatingPointSerializer()
    model = ModelSerializer()
    profile = ProfileSerializer()
    saved = serializers.BooleanField(help_text="Always false: a what-if saves nothing.")


class WindowSerializer(serializers.Serializer):
    dosing_time_unit = serializers.CharField(help_text="Always min.")
    dosing_times = serializers.ListField(child=serializers.FloatField())
    temperature_unit = serializers.CharField(help_text="Always degC.")
    process_temperatures = serializers.ListField(child=serializers.FloatField())
    rows = serializers.CharField(help_text="Matrices are indexed [temperature][dosing time].")
    max_accumulation = serializers.ListField(child=serializers.ListField(
        child=serializers.FloatField()))
    mtsr = serializers.ListField(child=serializers.ListField(child=serializers.FloatField()),
                                 help_text="degC")
    peak_heat_release = serializers.ListField(child=serializers.ListField(
        child=serializers.FloatField()), help_text="W, plant scale")
    cooling_margin = serializers.ListField(child=serializers.ListField(
        child=serializers.FloatField(allow_null=True)))
    criticality_class = serializers.ListField(child=serializers.ListField(
        child=serializers.IntegerField(allow_null=True)))
    acceptable = serializers.ListField(child=serializers.ListField(
        child=serializers.BooleanField()))
    fastest_acceptable_dosing_time = serializers.ListField(
        child=serializers.FloatField(allow_null=True), help_text="min, per temperature; null "
        "where no grid dosing time is acceptable")
    cooling_limited_dosing_time = serializers.ListField(
        child=serializers.FloatField(allow_null=True), help_text="min, per temperature: exact "
        "shortest dosing time meeting the cooling margin (class not considered)")
    minimum_cooling_margin = serializers.FloatField()
    acceptable_classes = serializers.ListField(child=serializers.IntegerField())
    current = WhatIfResponseSerializer()
    model = ModelSerializer()
    warnings = serializers.ListField(child=serializers.CharField())


# --- conversion of the service results ---------------------------------------------------

def _f(value):
    return None if value is None or not math.isfinite(float(value)) else float(value)


def model_data(model: services.ReactionModel, k_point: float | None = None) -> dict:
    fit = model.fit
    fit_data = None
    if fit is not None:
        rms = float((fit.residuals_w ** 2).mean() ** 0.5)
        fit_data = {
            "r_squared": fit.r_squared, "n_points": fit.n_points, "residual_rms": rms,
            "residuals": [float(r) for r in fit.residuals_w[:500]],
            "dosing_time": fit.dosing_time_s, "temperature": fit.temperature_k,
            "k_td": fit.k_td,
            "log_linear_rate_constant": {"value": fit.log_linear_rate_constant_per_s * 60,
                                         "unit": "1/min"},
            "model_accumulation_at_end_of_dosing": fit.model_accumulation_at_end_of_dosing,
            "measured_accumulation_at_end_of_dosing": fit.measured_accumulation_at_end_of_dosing,
        }
    data = {
        "name": model.name,
        "rate_constant": {"value": model.rate_constant_per_s * 60, "unit": "1/min"},
        "reference_temperature": model.reference_temperature_k,
        "activation_energy": model.activation_energy_j_per_mol,
        "activation_energy_source": model.activation_energy_source,
        "initial_mass_fraction": model.initial_mass_fraction,
        "peak_scale": model.peak_scale, "fit": fit_data,
        "arrhenius_r_squared": model.arrhenius.r_squared if model.arrhenius else None,
        "warnings": list(model.warnings), "assumptions": list(model.assumptions),
        "references": list(model.references),
    }
    if k_point is not None:
        data["rate_constant_at_point"] = {"value": k_point * 60, "unit": "1/min"}
    return data


def point_data(p: services.WhatIf) -> dict:
    t, a, mtsr = p.profile
    return {
        "dosing_time": p.dosing_time_s, "process_temperature": p.process_temperature_k,
        "max_accumulation": p.max_accumulation, "effective_accumulation": p.effective_accumulation,
        "mtsr": p.mtsr_k, "mtsr_time": p.mtsr_time_s, "peak_heat_release": p.peak_heat_release_w,
        "cooling_capacity": p.cooling_capacity_w, "cooling_margin": _f(p.cooling_margin),
        "minimum_cooling_margin": p.minimum_cooling_margin, "tmr_ad_at_mtsr": p.tmr_ad_at_mtsr_s,
        "mtt": p.mtt_k, "td24": p.td24_k, "criticality_class": p.criticality_class,
        "acceptable": p.acceptable, "warnings": list(p.warnings),
        # where the numbers come from, as the step's indicators record it (calcs.operating_point)
        "operating_point": {"mode": p.operating_point.get("operating_point_mode"),
                            "basis": p.operating_point.get("operating_point_basis")},
        "model": model_data(p.model, p.rate_constant_per_s),
        "profile": {"time_unit": "min", "time": (t / 60).tolist(), "accumulation": a.tolist(),
                    "mtsr_unit": "degC", "mtsr": (mtsr - 273.15).tolist()},
        "saved": False,
    }


def _matrix(arr, convert=float):
    return [[None if (isinstance(v, float) and not math.isfinite(v)) else convert(v)
             for v in row] for row in arr.tolist()]


def window_data(w: services.Window) -> dict:
    g = w.grid
    return {
        "dosing_time_unit": "min", "dosing_times": (g.dosing_times_s / 60).tolist(),
        "temperature_unit": "degC",
        "process_temperatures": (g.temperatures_k - 273.15).tolist(),
        "rows": "[temperature][dosing time]",
        "max_accumulation": _matrix(g.accumulation), "mtsr": _matrix(g.mtsr_k - 273.15),
        "peak_heat_release": _matrix(g.peak_heat_release_w),
        "cooling_margin": _matrix(g.cooling_margin),
        "criticality_class": [[int(c) or None for c in row] for row in g.criticality_class],
        "acceptable": [[bool(v) for v in row] for row in g.safe],
        "fastest_acceptable_dosing_time": [_f(v / 60) for v in g.fastest_safe_dosing_time_s],
        "cooling_limited_dosing_time": [_f(v / 60) for v in g.cooling_limited_dosing_time_s],
        "minimum_cooling_margin": w.minimum_cooling_margin,
        "acceptable_classes": list(w.acceptable_classes),
        "current": point_data(w.current), "model": model_data(w.model),
        "warnings": list(w.warnings),
    }


def refused(exc: services.WhatIfRefused, data=None) -> ProblemError:
    value = data.get(exc.field) if (exc.field and hasattr(data, "get")) else None
    errors = [{"field": exc.field, "value": value, "rule": exc.rule, "code": "what_if"}]
    detail = f"{exc.field}: {exc.rule}" if exc.field else exc.rule
    return ProblemError("validation_error", detail, errors=errors)


def _step(request, pk):
    return get_object_or_404(visible(request.user, ReactionStep.objects.all()), pk=pk)


def _model(step, activation_energy, data):
    try:
        case, rows = services.load(step.pk)
        return case, services.build_model(case, rows,
                                          activation_energy_j_per_mol=activation_energy)
    except services.WhatIfRefused as exc:
        raise refused(exc, data) from None


ID = OpenApiParameter("id", OpenApiTypes.INT, OpenApiParameter.PATH,
                      description="The reaction step.")


class WhatIfView(IdempotentPostMixin, APIView):
    """Evaluate one dosing time and process temperature of a semi-batch step, saving nothing.

    The accumulation comes from the pseudo-first-order model of the desired reaction (k fitted
    to the decay of the step's calorimetry series after dosing, or inferred from the entered
    maximum accumulation — `model.name` and `model.warnings` say which); MTSR with the mass
    present, plant peak heat release against the vessel's cooling, TMRad at MTSR and the
    criticality class come from the same scenario as the recorded indicators: at the step's own
    point the answer is the step's indicators (`operating_point` says where they come from).
    """

    permission_classes = [StepVisible]
    parser_classes = [LimitedJSONParser]

    @extend_schema(request=WhatIfRequestSerializer, responses={200: WhatIfResponseSerializer},
                   parameters=[ID], operation_id="steps_what_if")
    def post(self, request, id: int):
        step = _step(request, id)
        body = WhatIfRequestSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        v = body.validated_data
        case, model = _model(step, v.get("activation_energy"), request.data)
        try:
            point = services.evaluate(case, model, dosing_time_s=v["dosing_time"],
                                      process_temperature_k=v.get("process_temperature"))
        except services.WhatIfRefused as exc:
            raise refused(exc, request.data) from None
        return Response(WhatIfResponseSerializer(point_data(point)).data)


WINDOW_PARAMS = [
    ID,
    *(OpenApiParameter(name, OpenApiTypes.STR, OpenApiParameter.QUERY, description=text)
      for name, text in (
          ("dosing_time_min", 'Shortest dosing time, e.g. "30 min" or a number in min '
           "(default: a quarter of the step's)."),
          ("dosing_time_max", "Longest dosing time (default: three times the step's)."),
          ("temperature_min", 'Lowest process temperature, e.g. "20 degC" or a number in degC '
           "(default: the step's − 20 K)."),
          ("temperature_max", "Highest process temperature (default: the step's + 20 K)."),
          ("activation_energy", 'E_a of the desired reaction, e.g. "70 kJ/mol".'))),
    OpenApiParameter("dosing_time_steps", OpenApiTypes.INT, OpenApiParameter.QUERY,
                     description=f"Columns, 2-{services.MAX_GRID} (default 30)."),
    OpenApiParameter("temperature_steps", OpenApiTypes.INT, OpenApiParameter.QUERY,
                     description=f"Rows, 1-{services.MAX_GRID} (default 30; 1 without E_a)."),
]
_KINDS = {"dosing_time_min": "time", "dosing_time_max": "time", "temperature_min": "temperature",
          "temperature_max": "temperature", "activation_energy": "molar_energy"}
_KEYS = {"dosing_time_min": "dosing_time_min_s", "dosing_time_max": "dosing_time_max_s",
         "temperature_min": "temperature_min_k", "temperature_max": "temperature_max_k",
         "dosing_time_steps": "dosing_steps", "temperature_steps": "temperature_steps"}


def window_arguments(params) -> tuple[dict, float | None]:
    """(window keyword arguments given, activation energy) from query parameters; raises
    ProblemError naming every refused parameter."""
    out, errors, ea = {}, [], None
    for name, kind in _KINDS.items():
        raw = params.get(name)
        if raw in (None, ""):
            continue
        try:
            value = parse_quantity(raw, field=name, kind=kind)
        except QuantityError as exc:
            errors.append({"field": name, "value": raw, "rule": exc.rule, "code": exc.code})
            continue
        if name == "activation_energy":
            ea = value
        else:
            out[_KEYS[name]] = value
    for name in ("dosing_time_steps", "temperature_steps"):
        raw = params.get(name)
        if raw in (None, ""):
            continue
        try:
            n = int(raw)
        except (TypeError, ValueError):
            errors.append({"field": name, "value": raw, "rule": "must be a whole number",
                           "code": "invalid"})
            continue
        low = 2 if name == "dosing_time_steps" else 1
        if not low <= n <= services.MAX_GRID:
            errors.append({"field": name, "value": raw, "rule": f"must be between {low} and "
                           f"{services.MAX_GRID}", "code": "out_of_range"})
            continue
        out[_KEYS[name]] = n
    if errors:
        first = errors[0]
        raise ProblemError("validation_error", f"{first['field']}: {first['rule']}",
                           errors=errors)
    return out, ea


class OperatingWindowView(APIView):
    """The safe operating window of a semi-batch step over dosing time × process temperature.

    A cell is acceptable when the cooling margin is at least the site minimum
    (`minimum_cooling_margin`) and the criticality class is 1 or 2. The grid is bounded to
    60 × 60. Nothing is saved.
    """

    permission_classes = [StepVisible]

    @extend_schema(responses={200: WindowSerializer}, parameters=WINDOW_PARAMS,
                   operation_id="steps_operating_window")
    def get(self, request, id: int):
        step = _step(request, id)
        given, ea = window_arguments(request.query_params)
        case, model = _model(step, ea, request.query_params)
        args = {**services.default_ranges(case, model), **given}
        try:
            w = services.window(case, model, **args)
        except services.WhatIfRefused as exc:
            raise refused(exc, request.query_params) from None
        return Response(WindowSerializer(window_data(w)).data)
