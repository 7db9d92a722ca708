"""Filters of every list (django-filter); ordering is `?ordering=` (see each operation)."""

from __future__ import annotations

import django_filters as df
from django import forms
from django.db import models
from django.db.models import Exists, OuterRef
from django.utils import timezone
from django_filters.filterset import FILTER_FOR_DBFIELD_DEFAULTS

from hazards.models import (
    ApiToken,
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionTest,
    IndicatorSnapshot,
    Process,
    ReactionStep,
    Site,
    Solvent,
    Vessel,
)


class StrictBooleanField(forms.Field):
    """`true` or `false` (also `True`/`False`/`1`/`0`); anything else is refused, not ignored."""

    def to_python(self, value):
        if value is None:
            return None
        if value in ("true", "True", "1"):
            return True
        if value in ("false", "False", "0"):
            return False
        raise forms.ValidationError("must be true or false", code="invalid")


class StrictBooleanFilter(df.BooleanFilter):
    field_class = StrictBooleanField


class StrictFilterSet(df.FilterSet):
    FILTER_DEFAULTS = {**FILTER_FOR_DBFIELD_DEFAULTS,
                       models.BooleanField: {"filter_class": StrictBooleanFilter}}


class SiteFilter(StrictFilterSet):
    code = df.CharFilter(help_text="Exact site code.")
    name = df.CharFilter(lookup_expr="icontains", help_text="Part of the name.")

    class Meta:
        model = Site
        fields = ["code", "name"]


class ProcessFilter(StrictFilterSet):
    site = df.CharFilter(field_name="site__code", help_text="Site code.")
    name = df.CharFilter(lookup_expr="icontains", help_text="Part of the name.")

    class Meta:
        model = Process
        fields = ["site", "name"]


class SolventFilter(StrictFilterSet):
    name = df.CharFilter(lookup_expr="icontains", help_text="Part of the name.")

    class Meta:
        model = Solvent
        fields = ["cas_number", "name", "vapour_pressure_source"]


class VesselFilter(StrictFilterSet):
    name = df.CharFilter(lookup_expr="icontains", help_text="Part of the name.")

    class Meta:
        model = Vessel
        fields = ["tag", "name"]


def _current_class(queryset, *, exact=None, gte=None, lte=None):
    snapshots = IndicatorSnapshot.objects.filter(step=OuterRef("pk"), is_current=True)
    if exact is not None:
        snapshots = snapshots.filter(criticality_class=exact)
    if gte is not None:
        snapshots = snapshots.filter(criticality_class__gte=gte)
    if lte is not None:
        snapshots = snapshots.filter(criticality_class__lte=lte)
    return queryset.filter(Exists(snapshots))


CLASSES = [(str(i), str(i)) for i in range(1, 6)]


class StepFilter(StrictFilterSet):
    site = df.CharFilter(field_name="process__site__code", help_text="Site code.")
    name = df.CharFilter(lookup_expr="icontains", help_text="Part of the name.")
    criticality_class = df.ChoiceFilter(
        method="filter_class", choices=CLASSES,
        help_text="Criticality class (1-5) of the current indicators.",
    )
    criticality_class_min = df.ChoiceFilter(
        method="filter_class_min", choices=CLASSES,
        help_text="Current criticality class at least this.",
    )
    criticality_class_max = df.ChoiceFilter(
        method="filter_class_max", choices=CLASSES,
        help_text="Current criticality class at most this.",
    )

    class Meta:
        model = ReactionStep
        fields = ["process", "needs_review", "operation_mode", "system", "vessel", "solvent",
                  "site", "name"]

    def filter_class(self, queryset, name, value):
        return _current_class(queryset, exact=int(value))

    def filter_class_min(self, queryset, name, value):
        return _current_class(queryset, gte=int(value))

    def filter_class_max(self, queryset, name, value):
        return _current_class(queryset, lte=int(value))


class CalorimetryRunFilter(StrictFilterSet):
    process = df.ModelChoiceFilter(field_name="step__process", queryset=Process.objects.all(),
                                   help_text="Process id.")
    has_series = StrictBooleanFilter(method="filter_series",
                                  help_text="Whether a calorimeter series is attached.")

    class Meta:
        model = CalorimetryRun
        fields = ["step", "process", "is_basis", "has_series"]

    def filter_series(self, queryset, name, value):
        has = Exists(CalorimetrySeries.objects.filter(run=OuterRef("pk")))
        return queryset.filter(has if value else ~has)


class DecompositionTestFilter(StrictFilterSet):
    process = df.ModelChoiceFilter(field_name="step__process", queryset=Process.objects.all(),
                                   help_text="Process id.")

    class Meta:
        model = DecompositionTest
        fields = ["step", "process", "method", "is_basis"]


class TokenFilter(StrictFilterSet):
    user = df.CharFilter(field_name="user__username", help_text="User name.")
    state = df.ChoiceFilter(
        method="filter_state",
        choices=[("active", "active"), ("expired", "expired"), ("revoked", "revoked")],  # TOKEN_STATES
        help_text="active, expired or revoked.",
    )
    service_account = StrictBooleanFilter(method="filter_service_account",
                                       help_text="Only tokens of service accounts (true) or of "
                                                 "people (false).")

    class Meta:
        model = ApiToken
        fields = ["user", "state", "service_account"]

    def filter_service_account(self, queryset, name, value):
        return queryset.filter(user__service_account__isnull=not value)

    def filter_state(self, queryset, name, value):
        now = timezone.now()
        if value == "revoked":
            return queryset.filter(revoked_at__isnull=False)
        if value == "expired":
            return queryset.filter(revoked_at__isnull=True, expires_at__lte=now)
        return queryset.filter(revoked_at__isnull=True, expires_at__gt=now)
