"""API of protective measures and of each site's measure policy (issue 17 item 4).

`/api/v1/measures/` (filter `?step=`, `?process=`, `?kind=`, `?status=`, `?overdue=`) and
`/api/v1/measure-policies/` (one per site; filter `?site=`) follow the conventions of every
record: quantities as `{"value", "unit"}`, `ETag`/`If-Match`, `Idempotency-Key` on POST,
problem details. A measure's barrier checks are in its step's `indicators`
(`values.barrier_checks`); the relief screening always says a relief specialist confirms it.
"""

from __future__ import annotations

import django_filters as df
from django.contrib.auth import get_user_model
from django.utils import timezone
from rest_framework import permissions, serializers, viewsets

from hazards.api.concurrency import ETagMixin, stale
from hazards.api.fields import QuantityField
from hazards.api.filters import StrictBooleanFilter, StrictFilterSet
from hazards.api.idempotency import IdempotentPostMixin
from hazards.api.pagination import SingleQueryValuesMixin, StrictLimitOffsetPagination
from hazards.api.parsers import LimitedJSONParser
from hazards.api.serializers import RecordSerializer
from hazards.api.views import ModelPermissions, RecordViewSet
from hazards.models import (
    Measure,
    MeasureKind,
    MeasurePolicy,
    MeasureStatus,
    Process,
    ReactionStep,
    Site,
)
from hazards.models.measures import DEFAULT_REQUIREMENTS
from hazards.review.access import visible
from hazards.services import measures as svc
from hazards.services.records import StaleRecord

_DESIGN = {
    "trip_temperature": (
        "temperature",
        "trip_temperature_k",
        "Temperature at which the measure is triggered; above T_p.",
    ),
    "response_time": (
        "response_time",
        "response_time_s",
        "From the demand to the measure being effective.",
    ),
    "capacity": ("capacity", "capacity_w", "Heat an emergency cooling removes."),
    "set_pressure": ("pressure", "set_pressure_pa", "Relief set pressure (absolute)."),
    "vent_area": ("area", "vent_area_m2", "Installed relief area."),
    "discharge_coefficient": (
        "discharge_coefficient",
        "discharge_coefficient",
        "K_d of the relief device.",
    ),
    "vessel_volume": ("volume", "vessel_volume_m3", "Vessel volume for relief screening."),
    "condenser_ua": ("thermal_conductance", "condenser_ua_w_per_k", "Condenser U·A."),
    "coolant_inlet_temperature": ("temperature", "coolant_inlet_temperature_k", ""),
    "coolant_outlet_temperature": ("temperature", "coolant_outlet_temperature_k", ""),
    "vapour_line_diameter": ("length", "vapour_line_diameter_m", "Inner diameter."),
    "latent_heat": ("specific_energy", "latent_heat_j_per_kg", "Of the solvent at MTT."),
    "vapour_molar_mass": ("molar_mass", "vapour_molar_mass_kg_per_mol", ""),
    "liquid_density": ("density", "liquid_density_kg_per_m3", "Of the condensate."),
    "synthesis_activation_energy": (
        "activation_energy",
        "synthesis_activation_energy_j_per_mol",
        "Moves the measured heat-release rate to MTT.",
    ),
}


def _design_fields() -> dict:
    out = {}
    for name, (kind, source, text) in _DESIGN.items():
        extra = {"source": source} if source != name else {}
        field = QuantityField(kind, required=False, allow_null=True, **extra)
        if text:
            field.help_text = f"{text} {field.help_text}"
        out[name] = field
    return out


class MeasureSerializer(RecordSerializer):
    step = serializers.PrimaryKeyRelatedField(queryset=ReactionStep.objects.all())
    owner = serializers.SlugRelatedField(
        slug_field="username", queryset=get_user_model().objects.all()
    )
    overdue = serializers.SerializerMethodField(
        help_text="Due date passed and the measure not yet proven."
    )

    locals().update(_design_fields())

    class Meta:
        model = Measure
        fields = [
            "id",
            "step",
            "kind",
            "acts_on",
            "description",
            "status",
            "owner",
            "due_date",
            "evidence_reference",
            "test_date",
            *_DESIGN,
            "relief_system",
            "overdue",
        ]

    def get_overdue(self, obj) -> bool:
        return obj.status != MeasureStatus.PROVEN and obj.due_date < timezone.localdate()

    def create(self, validated_data):
        step = validated_data.pop("step")
        return self._run(svc.measure_create, step=step, data=validated_data)

    def update(self, instance, validated_data):
        return self._run(
            svc.measure_update,
            measure=instance,
            data=validated_data,
            expected_version=self.context.get("expected_version"),
        )


class MeasureFilter(StrictFilterSet):
    process = df.ModelChoiceFilter(
        field_name="step__process", queryset=Process.objects.all(), help_text="Process id."
    )
    overdue = StrictBooleanFilter(
        method="filter_overdue", help_text="Due date passed and not yet proven."
    )

    class Meta:
        model = Measure
        fields = ["step", "process", "kind", "status", "overdue"]

    def filter_overdue(self, queryset, name, value):
        late = queryset.filter(due_date__lt=timezone.localdate()).exclude(
            status=MeasureStatus.PROVEN
        )
        return late if value else queryset.exclude(pk__in=late.values("pk"))


class MeasureViewSet(RecordViewSet):
    """Protective measures of a step's cooling-failure scenario (issue 17)."""

    queryset = Measure.objects.select_related("owner").all()
    serializer_class = MeasureSerializer
    filterset_class = MeasureFilter
    ordering_fields = ["due_date", "id"]

    def perform_destroy(self, instance):
        try:
            svc.measure_delete(
                measure=instance, expected_version=getattr(self, "expected_version", None)
            )
        except StaleRecord as exc:
            raise stale(instance, exc) from None


class RequirementSerializer(serializers.Serializer):
    any_of = serializers.ListField(child=serializers.ChoiceField(MeasureKind.choices), min_length=1)
    status = serializers.ChoiceField(MeasureStatus.choices)


class MeasurePolicySerializer(RecordSerializer):
    site = serializers.SlugRelatedField(slug_field="code", queryset=Site.objects.all())
    requirements = serializers.DictField(
        child=RequirementSerializer(many=True),
        required=False,
        help_text="Per class ('1' to '5'): requirements, each met by one measure of `any_of` "
        "in `status` or better. A class left out follows the default: "
        f"{DEFAULT_REQUIREMENTS}.",
    )
    effective_requirements = serializers.SerializerMethodField(
        help_text="Every class's requirements with the defaults filled in."
    )

    class Meta:
        model = MeasurePolicy
        fields = [
            "id",
            "site",
            "requirements",
            "failed_check_blocks",
            "reminder_days",
            "effective_requirements",
        ]

    def validate_requirements(self, value):
        bad = [k for k in value if k not in DEFAULT_REQUIREMENTS]
        if bad:
            raise serializers.ValidationError(f"{bad[0]!r}: the classes are '1' to '5'")
        return value

    def get_effective_requirements(self, obj) -> dict:
        return {c: obj.requirements_for(int(c)) for c in DEFAULT_REQUIREMENTS}

    def create(self, validated_data):
        site = validated_data.pop("site")
        return self._run(svc.measure_policy_set, site=site, data=validated_data)

    def update(self, instance, validated_data):
        validated_data.pop("site", None)
        return self._run(
            svc.measure_policy_set,
            site=instance.site,
            data=validated_data,
            expected_version=self.context.get("expected_version"),
        )


class MeasurePolicyFilter(StrictFilterSet):
    site = df.ModelChoiceFilter(queryset=Site.objects.all(), help_text="Site id.")

    class Meta:
        model = MeasurePolicy
        fields = ["site"]


class MeasurePolicyViewSet(
    SingleQueryValuesMixin, IdempotentPostMixin, ETagMixin, viewsets.ModelViewSet
):
    """Which measures each class requires before the approval, per site (administrators
    change it: the model permissions of `MeasurePolicy`)."""

    queryset = MeasurePolicy.objects.select_related("site").all()
    serializer_class = MeasurePolicySerializer
    filterset_class = MeasurePolicyFilter
    permission_classes = [permissions.IsAuthenticated, ModelPermissions]
    parser_classes = [LimitedJSONParser]
    pagination_class = StrictLimitOffsetPagination
    ordering_fields = ["id"]
    lookup_value_regex = "[^/]+"
    http_method_names = ["get", "post", "put", "patch", "head", "options"]

    def get_queryset(self):
        return visible(self.request.user, self.queryset.all())
