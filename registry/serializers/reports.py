"""The audit report as JSON (``/api/v1/audits/{id}/report.json``), read from the same content
as the PDF (registry.documents.content), so an inspector's script sees what the paper says.

Figures are SI numbers named with their unit, as everywhere in the API.
"""
from __future__ import annotations

from typing import Any

from rest_framework import serializers

from registry.documents.content import ChecklistRow, WarningGroup, WavelengthLine
from registry.serializers.audits import FindingSerializer
from registry.serializers.fields import QuantityField


class _ReadOnly(serializers.Serializer):  # type: ignore[type-arg]
    """Output only: every field reads an attribute of the report's dataclasses."""


class PersonRefSerializer(_ReadOnly):
    id = serializers.IntegerField(source="pk")
    name = serializers.CharField(source="__str__")


class LocationRefSerializer(_ReadOnly):
    id = serializers.IntegerField(source="pk")
    code = serializers.CharField()
    site = serializers.CharField()
    building = serializers.CharField()
    room = serializers.CharField()


def _metres(help_text: str) -> QuantityField:
    return QuantityField(unit="m", read_only=True, allow_null=True, help_text=help_text)


class ReportEmissionSerializer(_ReadOnly):
    id = serializers.IntegerField(source="pk")
    label = serializers.CharField()
    wavelength_m = _metres("Wavelength (m); the shortest of a tunable range.")
    wavelength_max_m = _metres("Longest wavelength of a tunable range (m); null for one wavelength.")
    temporal_mode = serializers.CharField()
    average_power_W = QuantityField(unit="W", read_only=True, allow_null=True, help_text="Average power (W).")
    pulse_energy_J = QuantityField(unit="J", read_only=True, allow_null=True, help_text="Pulse energy (J).")
    pulse_duration_s = QuantityField(unit="s", read_only=True, allow_null=True, help_text="Pulse duration (s).")
    prf_Hz = QuantityField(unit="Hz", read_only=True, allow_null=True,
                           help_text="Pulse repetition frequency (Hz).")


class ReportLaserSerializer(_ReadOnly):
    id = serializers.IntegerField(source="pk")
    asset_tag = serializers.CharField()
    manufacturer = serializers.CharField()
    model_name = serializers.CharField()
    labelled_class = serializers.CharField()
    embedded_class = serializers.CharField()
    effective_class = serializers.CharField()
    status = serializers.CharField()
    owner = PersonRefSerializer(allow_null=True)
    location = serializers.IntegerField(source="location_id", allow_null=True)
    emissions = ReportEmissionSerializer(source="current_emissions", many=True)


class ReportHazardSerializer(_ReadOnly):
    laser = serializers.IntegerField(source="laser.pk")
    asset_tag = serializers.CharField(source="laser.asset_tag")
    emission = serializers.IntegerField(source="emission.pk")
    wavelength_m = _metres("Wavelength (m); the shortest of a tunable range.")
    wavelength_max_m = _metres("Longest wavelength of a tunable range (m); null for one wavelength.")
    assessed = serializers.BooleanField(help_text="False: the engine could not assess it (see not_assessed_reason).")
    not_assessed_reason = serializers.CharField(source="emission.assessment_problem")
    limits = serializers.CharField(allow_null=True, help_text="The limit set of these figures.")
    exposure_s = QuantityField(unit="s", read_only=True, allow_null=True,
                               help_text="Eye exposure duration the MPE assumes (s).")
    eye_mpe_J_m2 = QuantityField(unit="J/m**2", read_only=True, allow_null=True,
                                 help_text="Eye MPE as radiant exposure (J/m²).")
    eye_mpe_W_m2 = QuantityField(unit="W/m**2", read_only=True, allow_null=True,
                                 help_text="Eye MPE as irradiance (W/m²).")
    eye_mpe_per_pulse_J_m2 = QuantityField(unit="J/m**2", read_only=True, allow_null=True,
                                           help_text="Pulsed: the eye limit per pulse (J/m²).")
    nohd_m = _metres("Nominal ocular hazard distance (m); null with nohd_unbounded when unbounded.")
    nohd_unbounded = serializers.BooleanField(allow_null=True)
    od_required = serializers.FloatField(allow_null=True,
                                         help_text="Required optical density of eyewear (dimensionless, log10).")
    en207_marking = serializers.CharField(allow_null=True)
    warnings = serializers.ListField(child=serializers.CharField())

    def to_representation(self, row: Any) -> dict[str, Any]:
        result = row.result
        figures = {name: getattr(result, name, None) for name in (
            "limits", "exposure_s", "eye_mpe_J_m2", "eye_mpe_W_m2", "eye_mpe_per_pulse_J_m2", "nohd_m",
            "nohd_unbounded", "od_required", "en207_marking")}
        return {
            "laser": row.laser.pk, "asset_tag": row.laser.asset_tag, "emission": row.emission.pk,
            "wavelength_m": row.emission.wavelength_m, "wavelength_max_m": row.emission.wavelength_max_m,
            "assessed": result is not None, "not_assessed_reason": row.emission.assessment_problem,
            **figures, "warnings": list(result.warnings) if result is not None else [],
        }


class ReportPersonSerializer(_ReadOnly):
    person = PersonRefSerializer()
    laser = serializers.IntegerField(source="laser.pk")
    asset_tag = serializers.CharField(source="laser.asset_tag")
    authorization = serializers.IntegerField(source="authorization.pk")
    authorization_status = serializers.CharField(source="authorization.status")
    authorization_valid_until = serializers.DateField(source="authorization.valid_until", allow_null=True)
    has_training = serializers.BooleanField(help_text="Any general or refresher laser safety training on record.")
    training_valid_until = serializers.DateField(
        allow_null=True, help_text="Latest validity of that training; null: it does not expire, or there is none.")
    flags = serializers.ListField(child=serializers.CharField(), help_text="What is expired or missing.")


class ReportEyewearItemSerializer(_ReadOnly):
    id = serializers.IntegerField(source="pk")
    inventory_tag = serializers.CharField()
    condition = serializers.CharField()
    quantity = serializers.IntegerField()


class ReportWavelengthLineSerializer(_ReadOnly):
    wavelength_m = _metres("Wavelength (m); the shortest of a tunable range.")
    wavelength_max_m = _metres("Longest wavelength of a tunable range (m); null for one wavelength.")
    classes = serializers.ListField(child=serializers.CharField())
    max_power_W = QuantityField(unit="W", read_only=True, allow_null=True,
                                help_text="Largest average power at this wavelength (W).")
    max_pulse_energy_J = QuantityField(unit="J", read_only=True, allow_null=True,
                                       help_text="Largest pulse energy at this wavelength (J).")
    pulse_duration_s = QuantityField(unit="s", read_only=True, allow_null=True,
                                     help_text="Duration of that most energetic pulse (s).")
    od_required = serializers.FloatField(allow_null=True,
                                         help_text="Highest OD needed here (dimensionless, log10).")
    en207_markings = serializers.ListField(child=serializers.CharField())
    adequate_eyewear = serializers.SerializerMethodField(
        help_text="Inventory tags of the items kept in the room, not damaged, adequate for every emission here.")
    assessed = serializers.BooleanField()
    unprotected = serializers.BooleanField(help_text="Eyewear is needed (or unknown) and none here is adequate.")

    def get_adequate_eyewear(self, line: WavelengthLine) -> list[str]:
        return [item.inventory_tag for item in line.eyewear]


class ReportRoomSerializer(_ReadOnly):
    location = LocationRefSerializer()
    eyewear = ReportEyewearItemSerializer(many=True)
    lines = ReportWavelengthLineSerializer(many=True)


class ReportChecklistSerializer(_ReadOnly):
    position = serializers.IntegerField(allow_null=True, help_text="Null in a pre-audit pack (not yet an audit).")
    question = serializers.CharField()
    control = serializers.SerializerMethodField(help_text="The control measure checked; empty for the plan's own.")
    source = serializers.SerializerMethodField(help_text="Where the control measure comes from.")
    laser = serializers.IntegerField(source="laser.pk", allow_null=True)
    location = serializers.IntegerField(source="location.pk", allow_null=True)
    answer = serializers.CharField(help_text="pass, fail, n/a, or empty when not answered yet.")
    comment = serializers.CharField()

    def get_control(self, row: ChecklistRow) -> str:
        return row.control.code if row.control is not None else ""

    def get_source(self, row: ChecklistRow) -> str:
        return row.control.source if row.control is not None else ""


class ReportWarningSerializer(_ReadOnly):
    text = serializers.CharField()
    emissions = serializers.SerializerMethodField(help_text="Ids of the emissions it concerns.")

    def get_emissions(self, group: WarningGroup) -> list[int]:
        return [row.emission.pk for row in group.emissions]


class AuditReportSerializer(_ReadOnly):
    """Every section of the printed report, for processing."""

    title = serializers.CharField()
    audit = serializers.IntegerField(source="audit.pk", allow_null=True)
    reference = serializers.CharField()
    scope = serializers.CharField()
    site = serializers.CharField()
    location = LocationRefSerializer(allow_null=True)
    period_start = serializers.DateField(allow_null=True)
    period_end = serializers.DateField(allow_null=True)
    auditor = PersonRefSerializer(allow_null=True)
    planned_on = serializers.DateField(allow_null=True)
    conducted_on = serializers.DateField(allow_null=True)
    status = serializers.CharField()
    summary = serializers.CharField()
    signed_off_by = PersonRefSerializer(allow_null=True)
    signed_off_at = serializers.DateTimeField(allow_null=True)
    as_of = serializers.DateField(help_text="The day the register was read for this report.")
    limits = serializers.CharField(help_text="The limit set the hazard figures are under.")
    lso_contacts = PersonRefSerializer(source="contacts", many=True)
    lasers = ReportLaserSerializer(many=True)
    hazards = ReportHazardSerializer(many=True)
    people = ReportPersonSerializer(many=True)
    rooms = ReportRoomSerializer(many=True, help_text="Eyewear adequacy per room.")
    checklist = ReportChecklistSerializer(many=True)
    findings = FindingSerializer(many=True)
    warnings = ReportWarningSerializer(many=True, help_text="Each warning of the engine once, with its emissions.")
    caution = serializers.CharField()
