"""Lasers, their emissions and the stored hazard results embedded in both."""
from __future__ import annotations

from rest_framework import serializers

from hazards.caution import CAUTION
from registry.models import (
    RETIRED_STATUSES,
    Emission,
    HazardResult,
    Laser,
    LaserStatus,
    Location,
    Person,
)
from registry.permissions import editable_lasers, person_of
from registry.serializers.base import ColumnReadMixin, ScopedRelatedField, SelectorListSerializer, record_url
from registry.serializers.fields import BeamQuantityField, FreeTextField, QuantityField, QuantitySerializerMixin

class HazardResultSerializer(QuantitySerializerMixin, ColumnReadMixin, serializers.ModelSerializer):  # type: ignore[type-arg]
    """The engine's figures for one emission under one limit set, as stored at ``computed_at``."""

    exposure_s = QuantityField(unit="s", read_only=True, help_text="Eye exposure duration the MPE assumes (s).")
    eye_mpe_J_m2 = QuantityField(unit="J/m**2", read_only=True, help_text="Eye MPE as radiant exposure (J/m²).")
    eye_mpe_W_m2 = QuantityField(unit="W/m**2", read_only=True, help_text="Eye MPE as irradiance (W/m²).")
    eye_mpe_per_pulse_J_m2 = QuantityField(
        unit="J/m**2", read_only=True, allow_null=True,
        help_text="Pulsed emissions: the eye limit one pulse is compared with, from the governing pulse rule "
                  "(J/m²); null for continuous wave.")
    skin_exposure_s = QuantityField(unit="s", read_only=True, allow_null=True,
                                    help_text="Skin exposure duration the skin MPE assumes (s).")
    skin_mpe_J_m2 = QuantityField(unit="J/m**2", read_only=True, allow_null=True,
                                  help_text="Skin MPE as radiant exposure (J/m²).")
    skin_mpe_W_m2 = QuantityField(unit="W/m**2", read_only=True, allow_null=True,
                                  help_text="Skin MPE as irradiance (W/m²).")
    nohd_m = QuantityField(unit="m", read_only=True, allow_null=True,
                           help_text="Nominal ocular hazard distance (m); null with nohd_unbounded when unbounded.")
    diffuse_hazard_distance_m = QuantityField(unit="m", read_only=True, allow_null=True,
                                              help_text="Diffuse-reflection hazard distance (m).")
    skin_hazard_distance_m = QuantityField(unit="m", read_only=True, allow_null=True,
                                           help_text="Skin hazard distance (m).")
    od_required = serializers.FloatField(read_only=True, allow_null=True,
                                         help_text="Required optical density of eyewear (dimensionless, log10).")
    od_exact = serializers.FloatField(read_only=True, allow_null=True,
                                      help_text="Optical density before rounding up (dimensionless, log10).")
    en207_marking = serializers.CharField(read_only=True,
                                          help_text="EN 207-style marking (test condition letters and LB number).")
    working_url = serializers.SerializerMethodField(help_text="The steps, inputs and sources behind these figures.")
    caution = serializers.SerializerMethodField()

    class Meta:
        model = HazardResult
        fields = [
            "id", "emission", "limits", "exposure_s", "eye_mpe_J_m2", "eye_mpe_W_m2", "eye_mpe_per_pulse_J_m2",
            "pulse_rule", "skin_exposure_s",
            "skin_mpe_J_m2", "skin_mpe_W_m2", "nohd_m", "nohd_unbounded", "diffuse_hazard_distance_m",
            "skin_hazard_distance_m", "od_required", "od_exact", "en207_marking", "warnings", "engine_version", "computed_at",
            "working_url", "caution",
        ]
        read_only_fields = fields

    def get_working_url(self, result: HazardResult) -> str:
        return record_url(self, "api:hazard-result-working", result.pk)

    def get_caution(self, result: HazardResult) -> str:
        return CAUTION


class HazardWorkingSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    """The steps behind a hazard result: formulas, inputs, values and the table each cites."""

    working = serializers.JSONField(read_only=True, help_text="The engine's steps, in order, as it stored them.")
    caution = serializers.SerializerMethodField()

    class Meta:
        model = HazardResult
        fields = ["id", "emission", "limits", "engine_version", "computed_at", "working", "warnings", "caution"]
        read_only_fields = fields

    def get_caution(self, result: HazardResult) -> str:
        return CAUTION


class EmissionSerializer(QuantitySerializerMixin, ColumnReadMixin, serializers.ModelSerializer):  # type: ignore[type-arg]
    """One line or mode of a laser. Physical fields: SI numbers or strings with units."""

    laser = ScopedRelatedField(queryset=Laser.objects.all(), narrow=editable_lasers,
                               help_text="The laser this emission belongs to (one you may edit).")
    # Units and bounds come from the engine (hazards.assessment.beam_fields); the rules tying the values
    # together run in Emission.clean(), which the emission services call.
    wavelength = BeamQuantityField("wavelength", source="wavelength_m", example="532 nm",
                                   help_text="Wavelength in m (the shortest, for a range).")
    wavelength_max = BeamQuantityField("wavelength_max", source="wavelength_max_m", required=False, allow_null=True,
                                       example="1080 nm",
                                       help_text="Longest wavelength in m, only for a tunable or broadband range.")
    average_power = BeamQuantityField("power", source="average_power_W", required=False, allow_null=True,
                                      example="5 mW", help_text="Average power in W.")
    pulse_energy = BeamQuantityField("pulse_energy", source="pulse_energy_J", required=False, allow_null=True,
                                     example="0.5 J", help_text="Energy per pulse in J.")
    pulse_duration = BeamQuantityField("pulse_duration", source="pulse_duration_s", required=False, allow_null=True,
                                       example="10 ns", help_text="Pulse duration in s (below 100 fs: assessed at "
                                       "100 fs, where the limit tables start, with a warning).")
    prf = BeamQuantityField("prf", source="prf_Hz", required=False, allow_null=True, example="10 Hz",
                            help_text="Pulse repetition frequency in Hz.")
    beam_diameter = BeamQuantityField("beam_diameter", source="beam_diameter_m", required=False, allow_null=True,
                                      example="2 mm", help_text="Beam diameter at the aperture in m (see diameter_at).")
    diameter_at = serializers.ChoiceField(source="diameter_definition",
                                          choices=Emission._meta.get_field("diameter_definition").choices,
                                          required=False,
                                          help_text="Where diameter and divergence are measured: 1/e or 1/e2.")
    divergence = BeamQuantityField("divergence", source="divergence_rad", required=False, allow_null=True,
                                   example="1.2 mrad", help_text="Full-angle divergence in rad.")
    source_size = BeamQuantityField("source_size", source="source_size_rad", required=False,
                                    example="0 rad", help_text="Apparent source size in rad; 0 for a point source.")
    fibre_na = BeamQuantityField("fibre_na", required=False, allow_null=True, example="0.22",
                                 help_text="Numerical aperture of a fibre delivery (dimensionless).")
    hazard_results = SelectorListSerializer(child=HazardResultSerializer(), read_only=True, source="current_results",
                                            help_text="Current hazard results, one per limit set.")
    assessment_problem = serializers.CharField(
        read_only=True, help_text="Why the hazards engine could not assess this emission (then hazard_results is "
                                  "empty); empty when it was assessed.")

    class Meta:
        model = Emission
        fields = [
            "id", "laser", "label", "wavelength", "wavelength_max", "temporal_mode", "average_power",
            "pulse_energy", "pulse_duration", "prf", "beam_diameter", "diameter_at", "divergence", "source_size",
            "fibre_na", "notes", "assessment_problem", "hazard_results", "created_at", "updated_at",
        ]
        read_only_fields = ["assessment_problem", "created_at", "updated_at"]


class EmissionUpdateSerializer(EmissionSerializer):
    """An emission stays with its laser; moving it would rewrite another laser's record."""

    laser = serializers.PrimaryKeyRelatedField(read_only=True)


class LaserSerializer(ColumnReadMixin, serializers.ModelSerializer):  # type: ignore[type-arg]
    """A laser with its emissions and their current hazard results."""

    owner = serializers.PrimaryKeyRelatedField(queryset=Person.objects.all(), required=False, allow_null=True,
                                               help_text="The responsible researcher (a person id).")
    owner_name = serializers.SerializerMethodField()
    location = serializers.PrimaryKeyRelatedField(queryset=Location.objects.all(), required=False, allow_null=True)
    location_label = serializers.SerializerMethodField()
    effective_class = serializers.CharField(read_only=True,
                                            help_text="The embedded class where given, else the labelled class.")
    emissions = SelectorListSerializer(child=EmissionSerializer(), read_only=True, source="current_emissions")
    history_url = serializers.SerializerMethodField()

    class Meta:
        model = Laser
        fields = [
            "id", "asset_tag", "manufacturer", "model_name", "serial_number", "laser_type", "gain_medium",
            "labelled_class", "embedded_class", "effective_class", "status", "owner", "owner_name", "location",
            "location_label", "description", "received_on", "commissioned_on", "retired_on", "review_comments",
            "status_note", "emissions", "history_url", "created_at", "updated_at",
        ]
        read_only_fields = ["status", "retired_on", "review_comments", "status_note", "created_at", "updated_at"]

    def get_owner_name(self, laser: Laser) -> str | None:
        return None if laser.owner is None else str(laser.owner)

    def get_location_label(self, laser: Laser) -> str | None:
        return None if laser.location is None else str(laser.location)

    def get_history_url(self, laser: Laser) -> str:
        return record_url(self, "api:laser-history", laser.pk)

    def validate_owner(self, owner: Person | None) -> Person | None:
        # A researcher registers and keeps lasers in their own name; the LSO assigns anyone.
        person = person_of(self.context["request"].user)
        if person is not None and not person.is_lso and owner is not None and owner.pk != person.pk:
            raise serializers.ValidationError("You can only name yourself as the owner; ask the LSO to reassign.")
        return owner


class LaserUpdateSerializer(LaserSerializer):
    """The asset tag is the laser's identity on labels and in other systems: fixed once registered."""

    class Meta(LaserSerializer.Meta):
        read_only_fields = [*LaserSerializer.Meta.read_only_fields, "asset_tag"]


class LaserReviewSerializer(serializers.Serializer):  # type: ignore[type-arg]
    note = FreeTextField(required=False, allow_blank=True, default="", help_text="A note kept with the status change.")


class LaserSendBackSerializer(serializers.Serializer):  # type: ignore[type-arg]
    comments = FreeTextField(help_text="What the owner must change before resubmitting.")


class LaserStatusSerializer(serializers.Serializer):  # type: ignore[type-arg]
    status = serializers.ChoiceField(choices=[
        LaserStatus.ACTIVE, LaserStatus.IN_STORAGE, LaserStatus.OUT_OF_SERVICE, *RETIRED_STATUSES])
    note = FreeTextField(required=False, allow_blank=True, default="",
                         help_text="Why; required when disposing of or transferring the laser.")
    retired_on = serializers.DateField(required=False, allow_null=True, default=None,
                                       help_text="For disposed or transferred: the date (default today).")
