"""Serializers of the review resources. Signing fields are write-only; everything the
database decides (states, times, hashes, seals, signers) is read-only."""

from __future__ import annotations

from django.contrib.auth import get_user_model
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from hazards.models import Process
from hazards.review.models import (
    Finding,
    FindingNote,
    Meaning,
    ProcessRevision,
    ProcessRole,
    ReviewState,
    Signature,
    Transition,
)
from hazards.review.selectors import credentials_changed_at
from hazards.review.signing import iso, seal_verifies


class UtcDateTimeField(serializers.DateTimeField):
    def to_representation(self, value):
        return iso(value) if value is not None else None


class SignatureSerializer(serializers.ModelSerializer):
    signer = serializers.SlugRelatedField(slug_field="username", read_only=True)
    signed_at = UtcDateTimeField(read_only=True)
    meaning_text = serializers.CharField(source="get_meaning_display", read_only=True)
    seal_verifies = serializers.SerializerMethodField()
    credentials_changed_at = serializers.SerializerMethodField(
        help_text="When the signer's password changed, if within "
                  "EXOLEDGER_CREDENTIAL_CHANGE_HOURS before this signature; else null.")

    class Meta:
        model = Signature
        fields = ["id", "revision", "signer", "printed_name", "meaning", "meaning_text",
                  "signed_at", "content_sha256", "seal", "seal_verifies",
                  "credentials_changed_at"]
        read_only_fields = fields

    def get_seal_verifies(self, signature) -> bool:
        return seal_verifies(signature)

    @extend_schema_field(serializers.DateTimeField(allow_null=True))
    def get_credentials_changed_at(self, signature):
        at = credentials_changed_at([signature]).get(signature.pk)
        return None if at is None else UtcDateTimeField().to_representation(at)


class InitialStateField(serializers.ChoiceField):
    """A state, or null where there was none (the move that opened the revision)."""

    def to_representation(self, value):
        return value or None


# The state values are a contract of the API and keep their names; the words for them are the
# pages' (DEVELOPERS.md, "Words"): `endorsed` is the approved revision in force.
STATE_HELP = ("The review state, a fixed wire value: "
              + "; ".join(f"`{value}` = {label}" for value, label in ReviewState.choices) + ".")


class TransitionSerializer(serializers.ModelSerializer):
    from_state = InitialStateField(
        choices=ReviewState.choices, allow_null=True, read_only=True,
        help_text="The state before; null on the first transition, which opened the revision.")
    actor = serializers.SlugRelatedField(
        slug_field="username", read_only=True, allow_null=True,
        help_text="Who moved it; null when the application did (its content changed).")
    at = UtcDateTimeField(read_only=True)

    class Meta:
        model = Transition
        fields = ["id", "from_state", "to_state", "actor", "reason", "at", "signature"]
        read_only_fields = fields


class RevisionSerializer(serializers.ModelSerializer):
    signatures = SignatureSerializer(many=True, read_only=True)
    transitions = TransitionSerializer(many=True, read_only=True)
    created_at = UtcDateTimeField(read_only=True)
    created_by = serializers.SlugRelatedField(
        slug_field="username", read_only=True, allow_null=True,
        help_text="Who opened it; null when the application did (e.g. on import).")
    state_text = serializers.CharField(source="get_state_display", read_only=True,
                                       help_text="The state in the words the pages use.")

    class Meta:
        model = ProcessRevision
        fields = ["id", "process", "number", "state", "state_text", "content_sha256",
                  "created_at", "created_by", "signatures", "transitions"]
        read_only_fields = fields
        extra_kwargs = {"state": {"help_text": STATE_HELP}}


class RevisionDetailSerializer(RevisionSerializer):
    class Meta(RevisionSerializer.Meta):
        fields = [*RevisionSerializer.Meta.fields, "content"]
        read_only_fields = fields


class OpenRevisionSerializer(serializers.Serializer):
    process = serializers.PrimaryKeyRelatedField(queryset=Process.objects.all())
    reason = serializers.CharField(required=False, allow_blank=True, default="")


class SignSerializer(serializers.Serializer):
    password = serializers.CharField(write_only=True, required=False, allow_blank=True,
                                     trim_whitespace=False, style={"input_type": "password"})
    reason = serializers.CharField(required=False, allow_blank=True, default="")


class SignWithMeaningSerializer(SignSerializer):
    meaning = serializers.ChoiceField(choices=Meaning.choices)


class SendBackSerializer(serializers.Serializer):
    reason = serializers.CharField()


class DiffQuerySerializer(serializers.Serializer):
    against = serializers.IntegerField(help_text="Id of the other revision of the same process.")


class FindingNoteSerializer(serializers.ModelSerializer):
    author = serializers.SlugRelatedField(slug_field="username", read_only=True)
    created_at = UtcDateTimeField(read_only=True)

    class Meta:
        model = FindingNote
        fields = ["id", "finding", "author", "text", "created_at"]
        read_only_fields = ["id", "finding", "author", "created_at"]


class FindingSerializer(serializers.ModelSerializer):
    owner = serializers.SlugRelatedField(slug_field="username",
                                         queryset=get_user_model().objects.all())
    raised_by = serializers.SlugRelatedField(slug_field="username", read_only=True)
    created_at = UtcDateTimeField(read_only=True)
    reason = serializers.CharField(write_only=True, required=False, allow_blank=True)
    notes = FindingNoteSerializer(many=True, read_only=True,
                                  help_text="Progress notes, oldest first (never edited).")

    class Meta:
        model = Finding
        fields = ["id", "process", "revision", "title", "description", "kind", "owner",
                  "due_date", "status", "raised_by", "created_at", "reason", "notes"]
        # A finding starts open; its status moves only through the rules of the service.
        read_only_fields = ["status", "raised_by", "created_at"]


class FindingUpdateSerializer(FindingSerializer):
    """Owners may only move `status` to `ready_for_check` (the reason becomes their note);
    the raiser, or a reviewer or approver who does not own it, settles and reshapes it."""

    reason = serializers.CharField(write_only=True)

    class Meta(FindingSerializer.Meta):
        read_only_fields = ["process", "revision", "raised_by", "created_at"]


class ProcessRoleSerializer(serializers.ModelSerializer):
    user = serializers.SlugRelatedField(slug_field="username",
                                        queryset=get_user_model().objects.all())
    granted_by = serializers.SlugRelatedField(
        slug_field="username", read_only=True, allow_null=True,
        help_text="The administrator who granted it; null for grants made by set-up commands "
                  "(e.g. the demo data).")
    granted_at = UtcDateTimeField(read_only=True)
    reason = serializers.CharField(write_only=True)

    class Meta:
        model = ProcessRole
        fields = ["id", "process", "user", "role", "granted_by", "granted_at", "reason"]
        read_only_fields = ["granted_by", "granted_at"]


HISTORY_ACTIONS = [("insert", "the record was created"), ("update", "the record was changed"),
                   ("delete", "the record was deleted")]


class FieldChangeSerializer(serializers.Serializer):
    def get_fields(self):
        # "from" is a Python keyword; values are any JSON (as stored, SI units).
        return {"from": serializers.JSONField(allow_null=True),
                "to": serializers.JSONField(allow_null=True)}


class HistoryRowSerializer(serializers.Serializer):
    event_id = serializers.CharField()
    at = serializers.DateTimeField()
    model = serializers.CharField(help_text="The record's type, e.g. `hazards.ReactionStep`.")
    object_id = serializers.IntegerField(help_text="The record's id.")
    action = serializers.ChoiceField(choices=HISTORY_ACTIONS)
    user = serializers.CharField(allow_null=True, help_text="Who; null for the application.")
    url = serializers.CharField(allow_null=True, help_text="The request that made the change.")
    reason = serializers.CharField(allow_blank=True)
    changes = serializers.DictField(
        child=FieldChangeSerializer(),
        help_text="Stored field name (SI unit in the name) -> `{from, to}`.")


class HistoryPageSerializer(serializers.Serializer):
    """One page of a history, newest first (the page shape of every list)."""

    count = serializers.IntegerField(
        allow_null=True, help_text="Exact number of events up to 1000; null when there are more.")
    next = serializers.URLField(allow_null=True, help_text="The page of older events.")
    previous = serializers.URLField(allow_null=True, help_text="The page of newer events.")
    results = HistoryRowSerializer(many=True)


class DiffRowSerializer(serializers.Serializer):
    path = serializers.CharField()
    change = serializers.ChoiceField(choices=["added", "removed", "changed"])

    def get_fields(self):
        fields = super().get_fields()
        # "from" is a Python keyword; values are any JSON.
        fields["from"] = serializers.JSONField(allow_null=True)
        fields["to"] = serializers.JSONField(allow_null=True)
        return fields


class RevisionDiffSerializer(serializers.Serializer):
    process = serializers.IntegerField()
    from_revision = serializers.IntegerField()
    to_revision = serializers.IntegerField()
    from_sha256 = serializers.CharField()
    to_sha256 = serializers.CharField()
    changes = DiffRowSerializer(many=True)


class RevisionRefSerializer(serializers.Serializer):
    id = serializers.IntegerField()
    number = serializers.IntegerField()


class PendingRevisionSerializer(RevisionRefSerializer):
    state = serializers.ChoiceField(choices=["drafting", "lodged", "checked"])


class IndicatorChangeSerializer(serializers.Serializer):
    approved = serializers.JSONField(allow_null=True, help_text="SI value in the approval")
    current = serializers.JSONField(allow_null=True, help_text="SI value now")


class StepDifferenceSerializer(serializers.Serializer):
    step_id = serializers.IntegerField()
    step = serializers.CharField(help_text="The step as the pages name it.")
    change = serializers.ChoiceField(choices=["changed", "added", "removed"])
    indicators = serializers.DictField(child=IndicatorChangeSerializer(),
                                       help_text="Indicator key (SI suffix) -> values.")
    # `class` is a keyword: declared through the fields mapping below.


StepDifferenceSerializer._declared_fields["class"] = IndicatorChangeSerializer(required=False)


class ApprovalStatusSerializer(serializers.Serializer):
    in_force = RevisionRefSerializer(allow_null=True,
                                     help_text="The approved revision the plant runs on.")
    pending = PendingRevisionSerializer(allow_null=True,
                                        help_text="The revision collecting changes, if any.")
    indicators_differ = serializers.BooleanField()
    steps = StepDifferenceSerializer(many=True)
    statement = serializers.CharField(help_text="The same in one sentence, as the pages say it.")
