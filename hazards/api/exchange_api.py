"""`/api/v1/processes/<id>/export/` and `/api/v1/processes/import/` (the exchange document)."""

from __future__ import annotations

from django.db import models
from drf_spectacular.extensions import OpenApiSerializerFieldExtension
from rest_framework import permissions, serializers, status
from rest_framework.response import Response

from hazards.api import exchange
from hazards.api.errors import ProblemError, summarise
from hazards.api.idempotency import idempotent
from hazards.api.serializers import IndicatorsSerializer
from hazards.models import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionCurve,
    DecompositionPeak,
    DecompositionTest,
    Measure,
    ReactionStep,
    Site,
    Solvent,
    Vessel,
)
from hazards.quantities import SPECS

EXPORT_DOC = f"""The whole process as one JSON document (format `{exchange.FORMAT}`, version
{exchange.VERSION}): site, process, steps with their calorimetry runs (and series, the
original file as base64 with its SHA-256), decomposition tests (and DSC peaks, and their
measured curves: original file as base64 with its SHA-256, analysed again on import), the
vessels and solvents the steps use, and each step's current indicators. Quantities are
`{{"value": v, "unit": u}}` with `u` the SI unit of the quantity's kind, so a round trip is
exact. `indicators.portable_inputs_hash` is the inputs hash with record ids blanked: an
import of this document gives the same value."""

IMPORT_DOC = f"""Create a process from an exchange document (format `{exchange.FORMAT}`,
version {exchange.VERSION}), all or nothing. Vessels (by tag), solvents (by CAS number) and
the site (by code) that exist already are reused when identical and refused (400, code
`conflict` in `errors`) when any field differs; others are created. The process name must be
new at its site. Indicators are recomputed, not imported. Every problem is listed with its
path in the document (`steps.0.calorimetry_runs.1.max_accumulation`)."""


class ExchangeQuantity(serializers.Field):
    def __init__(self, kind: str, **kwargs):
        self.kind = kind
        super().__init__(**kwargs)


def exchange_quantity_schema(kind: str, direction: str) -> dict:
    """A quantity of the exchange document, stated as the records' quantities are (`unit`
    named, `x-canonical-unit`), in the SI unit of its kind (so a round trip is exact)."""
    si = SPECS[kind].si_unit
    unit = ({"type": "string", "enum": [si]} if direction == "response" else
            {"type": "string", "description": f"Any unit compatible with {si}."})
    return {"type": "object", "nullable": True, "additionalProperties": False,
            "properties": {"value": {"type": "number"}, "unit": unit},
            "required": ["value", "unit"], "x-canonical-unit": si,
            "description": f"In the SI unit `{si}` (the records' own fields use display "
                           "units); on import any compatible unit."}


class ExchangeQuantityExtension(OpenApiSerializerFieldExtension):
    target_class = "hazards.api.exchange_api.ExchangeQuantity"
    match_subclasses = True

    def map_serializer_field(self, auto_schema, direction):
        return exchange_quantity_schema(self.target.kind, direction)


def _doc_serializer(model, name: str, extra: dict | None = None, required=()):
    kinds, plain = exchange._spec(model)
    attrs = {}
    for field_name in plain:
        field = model._meta.get_field(field_name)
        kw = {"required": field_name in required, "allow_null": field.null}
        if field.choices:  # closed sets (operation mode, system, method...) as enums
            attrs[field_name] = serializers.ChoiceField(choices=field.choices,
                                                        allow_blank=field.blank, **kw)
        elif isinstance(field, models.BooleanField):
            attrs[field_name] = serializers.BooleanField(**kw)
        elif isinstance(field, models.IntegerField):
            attrs[field_name] = serializers.IntegerField(min_value=0, **kw)
        elif isinstance(field, models.FloatField):
            attrs[field_name] = serializers.FloatField(**kw)
        elif isinstance(field, models.DateField):
            attrs[field_name] = serializers.DateField(**kw)
        else:
            attrs[field_name] = serializers.CharField(allow_blank=True, **kw)
    for field_name, kind in kinds.items():
        api = exchange._api_name(field_name)
        attrs[api] = ExchangeQuantity(kind, required=api in required, allow_null=True)
    attrs.update(extra or {})
    return type(name, (serializers.Serializer,), attrs)


ExchangeSeries = _doc_serializer(CalorimetrySeries, "ExchangeSeries", {
    "file_name": serializers.CharField(),
    "sha256": serializers.CharField(),
    "original_base64": serializers.CharField(),
    "columns": serializers.DictField(child=serializers.CharField(), required=False),
    "data": serializers.DictField(child=serializers.ListField(
        child=serializers.FloatField(), allow_null=True)),
}, required=("initial_mass", "feed_mass"))
ExchangeRun = _doc_serializer(CalorimetryRun, "ExchangeCalorimetryRun", {
    "series": ExchangeSeries(allow_null=True, required=False),
})
ExchangePeak = _doc_serializer(DecompositionPeak, "ExchangePeak")
ExchangeCurve = _doc_serializer(DecompositionCurve, "ExchangeDecompositionCurve", {
    "file_name": serializers.CharField(),
    "sha256": serializers.CharField(),
    "original_base64": serializers.CharField(help_text="The curve file's bytes; on import "
                                             "checked against sha256 and analysed again."),
}, required=("sample_mass",))
ExchangeTest = _doc_serializer(DecompositionTest, "ExchangeDecompositionTest", {
    "peaks": ExchangePeak(many=True, required=False),
    "curves": ExchangeCurve(many=True, required=False),
    "activation_energy_from_curves": serializers.BooleanField(
        required=False, help_text="True when the test's E was derived from its adiabatic "
        "runs (derived again on import), not typed."),
})
ExchangeMeasure = _doc_serializer(Measure, "ExchangeMeasure", required=("kind", "acts_on",
                                                                       "due_date"))
ExchangeStep = _doc_serializer(ReactionStep, "ExchangeStep", {
    "measures": ExchangeMeasure(many=True, required=False, help_text="Protective measures; "
                                "on import the importing person owns them."),
    "vessel": serializers.CharField(allow_null=True, required=False, help_text="Vessel tag."),
    "solvent": serializers.CharField(allow_null=True, required=False, help_text="CAS number."),
    "needs_review": serializers.BooleanField(required=False, help_text="Informative; not "
                                             "imported."),
    "calorimetry_runs": ExchangeRun(many=True, required=False),
    "decomposition_tests": ExchangeTest(many=True, required=False),
    "indicators": IndicatorsSerializer(allow_null=True, required=False, help_text="Informative "
                                       "(recomputed on import), with portable_inputs_hash."),
})
ExchangeVessel = _doc_serializer(Vessel, "ExchangeVessel")
ExchangeSolvent = _doc_serializer(Solvent, "ExchangeSolvent")
ExchangeSite = _doc_serializer(Site, "ExchangeSite", required=("code",))


class ExchangeProcess(serializers.Serializer):
    name = serializers.CharField()
    description = serializers.CharField(allow_blank=True, required=False)


class ExchangeDocumentSerializer(serializers.Serializer):
    format = serializers.ChoiceField(choices=[exchange.FORMAT])
    version = serializers.ChoiceField(choices=[exchange.VERSION])
    exported_at = serializers.DateTimeField(required=False)
    caution = serializers.CharField(required=False)
    site = ExchangeSite()
    process = ExchangeProcess()
    vessels = ExchangeVessel(many=True, required=False)
    solvents = ExchangeSolvent(many=True, required=False)
    steps = ExchangeStep(many=True, required=False)


class ImportResultSerializer(serializers.Serializer):
    process = serializers.IntegerField(help_text="Id of the new process.")
    steps = serializers.ListField(child=serializers.IntegerField())
    created_vessels = serializers.ListField(child=serializers.CharField())
    created_solvents = serializers.ListField(child=serializers.CharField())


class ImportPermission(permissions.BasePermission):
    perms = ("hazards.add_process", "hazards.add_reactionstep", "hazards.add_calorimetryrun",
             "hazards.add_calorimetryseries", "hazards.add_decompositiontest",
             "hazards.add_decompositionpeak")

    def has_permission(self, request, view):
        return request.user.has_perms(self.perms)

    def describe(self, view, method):
        return ("the permissions " + ", ".join(f"`{p}`" for p in self.perms)
                + " (and `hazards.add_vessel` / `hazards.add_solvent` / `hazards.add_site` "
                "for records it creates)")


def export_view(view, request):
    return Response(exchange.export_process(view.get_object()))


def import_view(view, request):
    def run():
        before_vessels = set(Vessel.objects.values_list("tag", flat=True))
        before_solvents = set(Solvent.objects.values_list("cas_number", flat=True))
        document = request.data
        _check_creation_rights(request, document)
        try:
            process = exchange.import_process(document, owner=request.user)
        except exchange.ExchangeRejected as exc:
            raise ProblemError("validation_error", summarise(exc.errors),
                               errors=exc.errors) from None
        return Response({
            "process": process.pk,
            "steps": list(process.steps.order_by("sequence").values_list("pk", flat=True)),
            "created_vessels": sorted(set(Vessel.objects.values_list("tag", flat=True))
                                      - before_vessels),
            "created_solvents": sorted(set(Solvent.objects.values_list("cas_number", flat=True))
                                       - before_solvents),
        }, status=status.HTTP_201_CREATED)

    return idempotent(request, run)


def _check_creation_rights(request, document) -> None:
    """Creating reference records (vessels, solvents, sites) needs their add permission."""
    if not isinstance(document, dict):
        return
    needs = []
    for key, model, lookup in (("vessels", Vessel, "tag"), ("solvents", Solvent, "cas_number")):
        items = document.get(key)
        keys = [i.get(lookup) for i in items if isinstance(i, dict)] if isinstance(items,
                                                                                   list) else []
        keys = [k for k in keys if isinstance(k, str)]
        if keys and model.objects.filter(**{f"{lookup}__in": keys}).count() < len(set(keys)):
            needs.append(f"hazards.add_{model._meta.model_name}")
    site = document.get("site")
    if isinstance(site, dict) and isinstance(site.get("code"), str) and not \
            Site.objects.filter(code=site["code"]).exists():
        needs.append("hazards.add_site")
    if needs and not request.user.has_perms(needs):
        raise ProblemError("permission_denied", "The document creates records you may not "
                           f"create ({', '.join(needs)}).")
