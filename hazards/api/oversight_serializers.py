"""Output shapes of the oversight API."""

from __future__ import annotations

from rest_framework import serializers

from hazards.oversight.models import (
    ChangeEntry,
    ChangeRecord,
    Kind,
    Notification,
    RevalidationSchedule,
)


class ScheduleSerializer(serializers.ModelSerializer):
    process_name = serializers.CharField(source="process.name")
    site = serializers.CharField(source="process.site.code")
    revision_number = serializers.IntegerField(source="revision.number")
    state = serializers.CharField()
    days_left = serializers.IntegerField()

    class Meta:
        model = RevalidationSchedule
        fields = ["id", "process", "process_name", "site", "revision", "revision_number",
                  "approved_on", "interval_months", "due_on", "state", "days_left"]


class RevalidationSerializer(serializers.Serializer):
    """GET /revalidation/: approved revisions (state `endorsed`) due within the window, and those overdue."""

    today = serializers.DateField()
    within_days = serializers.IntegerField()
    overdue = ScheduleSerializer(many=True)
    due = ScheduleSerializer(many=True)
    default_interval_source = serializers.CharField()
    retention = serializers.CharField()


class MarkedSerializer(serializers.Serializer):
    marked = serializers.IntegerField(help_text="How many notifications were marked read.")


class EntrySerializer(serializers.ModelSerializer):
    class Meta:
        model = ChangeEntry
        fields = ["id", "at", "user", "reason", "url", "inputs_hash_before",
                  "inputs_hash_after", "changes", "back_to_approved"]


class ChangeRecordSerializer(serializers.ModelSerializer):
    entries = EntrySerializer(many=True, read_only=True)

    class Meta:
        model = ChangeRecord
        fields = ["id", "process", "step", "step_label", "state", "review_path",
                  "approved_revision", "approved_inputs_hash", "current_inputs_hash",
                  "changes", "indicators", "class_before", "class_after", "class_changed",
                  "opened_at", "opened_by", "reason", "closed_at", "closed_by_revision",
                  "entries"]


class NotificationSerializer(serializers.ModelSerializer):
    class Meta:
        model = Notification
        fields = ["id", "kind", "subject", "body", "link", "process", "period", "created_at",
                  "read_at", "emailed_at"]


class PreferenceSerializer(serializers.Serializer):
    kind = serializers.ChoiceField(choices=Kind.choices)
    label = serializers.CharField(read_only=True)
    email = serializers.BooleanField()
    inbox = serializers.BooleanField()
