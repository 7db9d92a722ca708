"""The admin: every record type, with quantity inputs and writes through the services."""

from __future__ import annotations

from django.contrib import admin

from hazards import admin_users  # noqa: F401  (people: no password set by others)
from hazards import models as m
from hazards.services.indicators import flush_pending
from hazards.web.quantity_fields import quantity_formfield


class RecordAdmin(admin.ModelAdmin):
    readonly_fields = ("version", "created_at", "updated_at")

    def formfield_for_dbfield(self, db_field, request, **kwargs):
        return quantity_formfield(db_field) or super().formfield_for_dbfield(
            db_field, request, **kwargs
        )

    def delete_queryset(self, request, queryset):
        super().delete_queryset(request, queryset)
        flush_pending()


class PeakInline(admin.TabularInline):
    model = m.DecompositionPeak
    extra = 0

    def formfield_for_dbfield(self, db_field, request, **kwargs):
        return quantity_formfield(db_field) or super().formfield_for_dbfield(
            db_field, request, **kwargs
        )


@admin.register(m.Site)
class SiteAdmin(RecordAdmin):
    list_display = ("code", "name", "revalidation_interval_months")


@admin.register(m.Process)
class ProcessAdmin(RecordAdmin):
    list_display = ("name", "site", "owner")
    list_filter = ("site",)
    search_fields = ("name",)


@admin.register(m.ReactionStep)
class StepAdmin(RecordAdmin):
    list_display = ("process", "sequence", "name", "operation_mode", "system", "needs_review")
    list_filter = ("operation_mode", "system", "needs_review")
    readonly_fields = RecordAdmin.readonly_fields + ("needs_review", "approved_inputs_hash")


@admin.register(m.Solvent)
class SolventAdmin(RecordAdmin):
    list_display = ("name", "cas_number", "vapour_pressure_source")


@admin.register(m.Vessel)
class VesselAdmin(RecordAdmin):
    list_display = ("tag", "name", "volume_m3")


@admin.register(m.CalorimetryRun)
class CalorimetryRunAdmin(RecordAdmin):
    list_display = ("step", "instrument", "run_date", "is_basis")
    readonly_fields = RecordAdmin.readonly_fields + ("raw_file_sha256",)


@admin.register(m.DecompositionTest)
class DecompositionTestAdmin(RecordAdmin):
    list_display = ("step", "method", "test_date", "is_basis")
    inlines = [PeakInline]


@admin.register(m.DecompositionPeak)
class DecompositionPeakAdmin(RecordAdmin):
    list_display = ("test", "heating_rate_k_per_s", "peak_temperature_k")


@admin.register(m.CalorimetrySeries)
class CalorimetrySeriesAdmin(RecordAdmin):
    list_display = ("run", "file_name", "sha256")
    readonly_fields = RecordAdmin.readonly_fields + ("sha256", "data", "derived", "columns")


@admin.register(m.Measure)
class MeasureAdmin(RecordAdmin):
    list_display = ("step", "kind", "acts_on", "status", "owner", "due_date")
    list_filter = ("kind", "status")


@admin.register(m.MeasurePolicy)
class MeasurePolicyAdmin(admin.ModelAdmin):
    list_display = ("site", "failed_check_blocks", "reminder_days", "version")
    readonly_fields = ("version", "updated_at")


@admin.register(m.IndicatorSnapshot)
class SnapshotAdmin(admin.ModelAdmin):
    list_display = ("step", "computed_at", "criticality_class", "is_current")
    list_filter = ("is_current", "criticality_class")

    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False


@admin.register(m.ApiToken)
class ApiTokenAdmin(admin.ModelAdmin):
    list_display = ("prefix", "user", "name", "created_at", "expires_at", "revoked_at")
    readonly_fields = ("prefix", "key_hash", "created_at", "last_used_at")
