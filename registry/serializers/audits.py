"""Audits with their checklist and findings, and incidents."""
from __future__ import annotations

from rest_framework import serializers

from registry.models import (
    Audit,
    AuditChecklistItem,
    ChecklistAnswer,
    Finding,
    FindingSeverity,
    Incident,
    Laser,
    Location,
    Person,
)
from registry.permissions import visible_lasers
from registry.serializers.base import ScopedRelatedField
from registry.serializers.fields import FreeTextField, IdListField

# The most questions a checklist, and lasers an audit, may be planned with at once; the
# most people one incident report names. Each is a row or a query (common practice, no source).
MAX_CHECKLIST_QUESTIONS = 200
MAX_AUDITED_LASERS = 200
MAX_PEOPLE_INVOLVED = 50


class ChecklistItemSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    class Meta:
        model = AuditChecklistItem
        fields = ["id", "position", "question", "control", "laser", "location", "answer", "comment"]
        read_only_fields = fields


class FindingSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    owner_name = serializers.SerializerMethodField()

    class Meta:
        model = Finding
        fields = ["id", "audit", "checklist_item", "laser", "location", "severity", "description", "corrective_action", "owner",
                  "owner_name", "due_on", "status", "closed_on", "closed_by", "closure_evidence", "retired_at",
                  "retirement_reason", "created_at", "updated_at"]
        read_only_fields = fields

    def get_owner_name(self, finding: Finding) -> str:
        return str(finding.owner)


class FindingUpdateSerializer(FindingSerializer):
    """The follow-up of an open finding; the closing evidence goes through the close action."""

    class Meta(FindingSerializer.Meta):
        read_only_fields = [name for name in FindingSerializer.Meta.fields
                            if name not in {"corrective_action", "owner", "due_on"}]


class AuditSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    checklist = ChecklistItemSerializer(many=True, read_only=True)
    findings = FindingSerializer(many=True, read_only=True)
    questions = serializers.ListField(
        child=serializers.CharField(max_length=300), write_only=True, required=False,
        max_length=MAX_CHECKLIST_QUESTIONS,
        help_text="The plan's own checklist questions, in order; the control measures of the lasers in scope "
                  "join the checklist when the audit starts.",
    )
    lasers = IdListField(child_relation=serializers.PrimaryKeyRelatedField(queryset=Laser.objects.all()),
                         max_length=MAX_AUDITED_LASERS, required=False)

    class Meta:
        model = Audit
        fields = ["id", "reference", "scope", "location", "lasers", "site", "planned_on", "period_start",
                  "period_end", "conducted_on", "auditor",
                  "status", "summary", "signed_off_by", "signed_off_at", "checklist", "findings", "questions",
                  "retired_at", "retirement_reason", "created_at", "updated_at"]
        read_only_fields = ["conducted_on", "status", "summary", "signed_off_by", "signed_off_at", "retired_at",
                            "retirement_reason", "created_at", "updated_at"]


class AuditUpdateSerializer(AuditSerializer):
    """The plan of an audit; its checklist is set when planning and answered item by item."""

    questions = None

    class Meta(AuditSerializer.Meta):
        fields = [name for name in AuditSerializer.Meta.fields if name != "questions"]
        read_only_fields = [*AuditSerializer.Meta.read_only_fields, "reference"]


class AuditStartSerializer(serializers.Serializer):  # type: ignore[type-arg]
    conducted_on = serializers.DateField(required=False, allow_null=True, default=None,
                                         help_text="Date of the audit visit (default today).")


class FailureFindingSerializer(serializers.Serializer):  # type: ignore[type-arg]
    severity = serializers.ChoiceField(choices=FindingSeverity.choices)
    corrective_action = serializers.CharField()
    owner = serializers.PrimaryKeyRelatedField(queryset=Person.objects.all(),
                                               help_text="Who is responsible for the corrective action.")
    due_on = serializers.DateField()


class ChecklistAnswerSerializer(serializers.Serializer):  # type: ignore[type-arg]
    position = serializers.IntegerField(min_value=1, help_text="The checklist item's position in the audit.")
    answer = serializers.ChoiceField(choices=[choice for choice in ChecklistAnswer.choices if choice[0]])
    comment = FreeTextField(required=False, allow_blank=True, default="",
                            help_text="A note; for a failure, what failed (it describes the finding).")
    finding = FailureFindingSerializer(
        required=False, allow_null=True, default=None,
        help_text="Required with the first failure of an item: the finding it raises.")


class FindingRaiseSerializer(serializers.Serializer):  # type: ignore[type-arg]
    severity = serializers.ChoiceField(choices=FindingSeverity.choices)
    description = FreeTextField()
    owner = serializers.PrimaryKeyRelatedField(queryset=Person.objects.all(),
                                               help_text="Who is responsible for the corrective action.")
    laser = serializers.PrimaryKeyRelatedField(queryset=Laser.objects.all(), required=False, allow_null=True,
                                               default=None)
    location = serializers.PrimaryKeyRelatedField(queryset=Location.objects.all(), required=False, allow_null=True,
                                                  default=None)
    corrective_action = FreeTextField(required=False, allow_blank=True, default="")
    due_on = serializers.DateField(required=False, allow_null=True, default=None)


class AuditSignOffSerializer(serializers.Serializer):  # type: ignore[type-arg]
    summary = FreeTextField(required=False, allow_null=True, default=None,
                                    help_text="The audit's conclusion; omit to keep the current summary.")


class FindingCloseSerializer(serializers.Serializer):  # type: ignore[type-arg]
    evidence = FreeTextField(help_text="What was done and where it can be checked.")
    closed_on = serializers.DateField(required=False, allow_null=True, default=None)


class IncidentSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    laser = ScopedRelatedField(queryset=Laser.objects.all(), narrow=visible_lasers, required=False, allow_null=True,
                               help_text="The laser involved: one you can see in the register.")
    people_involved = IdListField(child_relation=serializers.PrimaryKeyRelatedField(queryset=Person.objects.all()),
                                  max_length=MAX_PEOPLE_INVOLVED, required=False)

    class Meta:
        model = Incident
        fields = ["id", "reference", "kind", "occurred_at", "laser", "location", "reported_by", "people_involved",
                  "description", "follow_up", "status", "closed_at", "retired_at", "retirement_reason",
                  "created_at", "updated_at"]
        read_only_fields = ["reported_by", "follow_up", "status", "closed_at", "retired_at", "retirement_reason",
                            "created_at", "updated_at"]


class IncidentUpdateSerializer(IncidentSerializer):
    """The account of an open incident; the reference is its identity."""

    class Meta(IncidentSerializer.Meta):
        read_only_fields = [*IncidentSerializer.Meta.read_only_fields, "reference"]


class IncidentCloseSerializer(serializers.Serializer):  # type: ignore[type-arg]
    follow_up = FreeTextField(help_text="What was done after the incident.")
