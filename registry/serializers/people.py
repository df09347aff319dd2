"""People, their training, their authorizations, and the SOPs they acknowledge."""
from __future__ import annotations

from typing import Any

from django.urls import reverse
from rest_framework import serializers

from registry.models import SOP, Authorization, CourseKind, Laser, Person, ResearchGroup, Role, TrainingRecord
from registry.permissions import editable_lasers, requestable_people
from registry.serializers.base import ScopedRelatedField
from registry.serializers.fields import FreeTextField


class PersonSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    username = serializers.CharField(source="user.username", read_only=True)
    name = serializers.SerializerMethodField()
    email = serializers.CharField(source="user.email", read_only=True, help_text="Empty when not on record.")
    research_group_name = serializers.SerializerMethodField()

    class Meta:
        model = Person
        fields = ["id", "username", "name", "email", "role", "research_group", "research_group_name", "supervisor",
                  "phone", "created_at", "updated_at"]
        read_only_fields = fields

    def get_name(self, person: Person) -> str:
        return str(person)

    def get_research_group_name(self, person: Person) -> str | None:
        return None if person.research_group is None else person.research_group.name


class PersonCreateSerializer(serializers.Serializer):  # type: ignore[type-arg]
    """A new person and their account (person_create); the LSO gives the role."""

    username = serializers.CharField(max_length=150, help_text="The sign-in name; unique.")
    first_name = serializers.CharField(max_length=150, required=False, allow_blank=True, default="")
    last_name = serializers.CharField(max_length=150, required=False, allow_blank=True, default="")
    email = serializers.EmailField(required=False, allow_blank=True, default="")
    password = serializers.CharField(write_only=True, required=False, default=None, style={"input_type": "password"},
                                     help_text="An initial password; without one the account cannot sign in "
                                               "until a password is set.")
    role = serializers.ChoiceField(choices=Role.choices)
    research_group = serializers.PrimaryKeyRelatedField(queryset=ResearchGroup.objects.all(), required=False,
                                                        allow_null=True, default=None)
    supervisor = serializers.PrimaryKeyRelatedField(queryset=Person.objects.all(), required=False, allow_null=True,
                                                    default=None)
    phone = serializers.CharField(max_length=40, required=False, allow_blank=True, default="")


class PersonUpdateSerializer(PersonSerializer):
    """The LSO changes a person's role, research group and supervisor; the account's
    name and email belong to the sign-in system."""

    class Meta(PersonSerializer.Meta):
        read_only_fields = [name for name in PersonSerializer.Meta.fields
                            if name not in {"role", "research_group", "supervisor"}]


class TrainingRecordSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    person_name = serializers.SerializerMethodField()
    course = serializers.ChoiceField(choices=CourseKind.choices)

    class Meta:
        model = TrainingRecord
        fields = ["id", "person", "person_name", "course", "laser", "title", "completed_on", "valid_until",
                  "evidence", "verified_by", "retired_at", "retirement_reason", "created_at", "updated_at"]
        read_only_fields = ["retired_at", "retirement_reason", "created_at", "updated_at"]

    def get_person_name(self, record: TrainingRecord) -> str:
        return str(record.person)

    def validate(self, attrs: dict[str, object]) -> dict[str, object]:
        completed_on, valid_until = attrs.get("completed_on"), attrs.get("valid_until")
        if valid_until is not None and completed_on is not None and valid_until < completed_on:  # type: ignore[operator]
            raise serializers.ValidationError({"valid_until": "must not be before completed_on."})
        if attrs.get("course") == CourseKind.EQUIPMENT and attrs.get("laser") is None:
            raise serializers.ValidationError({"laser": "equipment-specific training names its laser."})
        return attrs


class TrainingRecordUpdateSerializer(TrainingRecordSerializer):
    """What a training portal corrects; whose training it is stays as recorded."""

    class Meta(TrainingRecordSerializer.Meta):
        read_only_fields = [*TrainingRecordSerializer.Meta.read_only_fields, "person", "laser", "title",
                            "verified_by"]

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        # A PATCH of one date is checked against the other one as stored.
        record: TrainingRecord = self.instance  # type: ignore[assignment]
        stored = {"course": record.course, "laser": record.laser, "completed_on": record.completed_on,
                  "valid_until": record.valid_until}
        super().validate({**stored, **attrs})
        return attrs


class AuthorizationSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    person = ScopedRelatedField(queryset=Person.objects.all(), narrow=requestable_people,
                                help_text="Who is to be authorized (for a researcher: someone in their group).")
    laser = serializers.PrimaryKeyRelatedField(queryset=Laser.objects.all(), help_text="An active laser.")
    person_name = serializers.SerializerMethodField()
    laser_asset_tag = serializers.SerializerMethodField()

    class Meta:
        model = Authorization
        fields = ["id", "person", "person_name", "laser", "laser_asset_tag", "status", "conditions",
                  "requested_by", "requested_at", "decided_by", "decided_at", "decision_reason", "valid_until",
                  "retired_at", "retirement_reason", "created_at", "updated_at"]
        read_only_fields = ["status", "requested_by", "requested_at", "decided_by", "decided_at", "decision_reason",
                            "valid_until", "retired_at", "retirement_reason", "created_at", "updated_at"]

    def get_person_name(self, authorization: Authorization) -> str:
        return str(authorization.person)

    def get_laser_asset_tag(self, authorization: Authorization) -> str:
        return authorization.laser.asset_tag


class AuthorizationApprovalSerializer(serializers.Serializer):  # type: ignore[type-arg]
    valid_until = serializers.DateField(required=False, allow_null=True, default=None,
                                        help_text="Last day the authorization holds (none: until revoked).")
    conditions = FreeTextField(required=False, allow_null=True, default=None,
                                       help_text="Conditions of use; omit to keep those of the request.")
    reason = FreeTextField(required=False, allow_blank=True, default="")


class AuthorizationRefusalSerializer(serializers.Serializer):  # type: ignore[type-arg]
    reason = FreeTextField(help_text="Why the request is refused (shown to the requester).")


class PrerequisitesSerializer(serializers.Serializer):  # type: ignore[type-arg]
    missing = serializers.ListField(child=serializers.CharField(),
                                    help_text="What still stands between the person and approval; empty when ready.")


class SOPDocumentField(serializers.FileField):
    """Takes an upload; answers with the SOP's document route, which serves the file under the
    SOP's own permissions (never a MEDIA_URL address, which nothing serves)."""

    def to_representation(self, value: Any) -> str | None:
        if not value:
            return None
        path = reverse("api:sop-document", args=[value.instance.pk])
        request = self.context.get("request")
        return request.build_absolute_uri(path) if request is not None else path


_DOCUMENT_HELP = ("A PDF, Word (.docx) or OpenDocument (.odt) text, judged by its content, at most "
                  "BEAMKEEPER_SOP_MAX_MB (20 MB unless set); upload as multipart/form-data. Answered as the "
                  "URL that serves it, /api/v1/sops/{id}/document/.")


class SOPSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    laser = ScopedRelatedField(queryset=Laser.objects.all(), narrow=editable_lasers,
                               help_text="The laser the SOP is for (one you may edit).")
    document = SOPDocumentField(required=False, allow_null=True, help_text="The procedure document. " + _DOCUMENT_HELP)

    class Meta:
        model = SOP
        fields = ["id", "laser", "title", "version", "status", "summary", "document", "approved_on", "approved_by",
                  "review_due", "retired_at", "retirement_reason", "created_at", "updated_at"]
        read_only_fields = ["version", "status", "approved_on", "approved_by", "review_due", "retired_at",
                            "retirement_reason", "created_at", "updated_at"]


class SOPUpdateSerializer(SOPSerializer):
    """A draft's metadata; the laser stays, the summary and status change with a new version."""

    laser = serializers.PrimaryKeyRelatedField(read_only=True)
    # A replacement document, not none: the draft's record of its text is kept.
    document = SOPDocumentField(required=False, help_text="A replacement document. " + _DOCUMENT_HELP)
    version = serializers.IntegerField(min_value=1, required=False,
                                       help_text="The draft's version number (unique per laser).")

    class Meta(SOPSerializer.Meta):
        read_only_fields = ["status", "summary", "approved_on", "approved_by", "retired_at", "retirement_reason",
                            "created_at", "updated_at"]


class SOPApprovalSerializer(serializers.Serializer):  # type: ignore[type-arg]
    review_due = serializers.DateField(required=False, allow_null=True, default=None,
                                       help_text="When the procedure is next to be reviewed.")


class SOPAcknowledgementSerializer(serializers.Serializer):  # type: ignore[type-arg]
    sop = serializers.IntegerField(source="sop_id", read_only=True)
    person = serializers.IntegerField(source="person_id", read_only=True)
    acknowledged_at = serializers.DateTimeField(read_only=True)
