"""Lasers, their emissions and the stored hazard results embedded in both."""
from __future__ import annotations

from typing import Any

from rest_framework import serializers

from hazards.caution import CAUTION
from hazards.units import format_si
from registry.models import (
    MAX_WAVELENGTH_M,
    MIN_WAVELENGTH_M,
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
from registry.serializers.fields import FreeTextField, QuantityField, QuantitySerializerMixin

# How far pulse energy x repetition rate may stray from the stated average power before the
# set is refused: data sheets round both figures. The same tolerance as hazards.assessment
# (common practice, no source).
POWER_CONSISTENCY = 0.2

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
    wavelength = QuantityField(source="wavelength_m", unit="m", minimum=MIN_WAVELENGTH_M, maximum=MAX_WAVELENGTH_M,
                               example="532 nm", help_text="Wavelength in m (the shortest, for a range).")
    wavelength_max = QuantityField(source="wavelength_max_m", unit="m", minimum=MIN_WAVELENGTH_M,
                                   maximum=MAX_WAVELENGTH_M, required=False, allow_null=True, example="1080 nm",
                                   help_text="Longest wavelength in m, only for a tunable or broadband range.")
    average_power = QuantityField(source="average_power_W", unit="W", minimum=0, inclusive_minimum=False,
                                  required=False, allow_null=True, example="5 mW", help_text="Average power in W.")
    pulse_energy = QuantityField(source="pulse_energy_J", unit="J", minimum=0, inclusive_minimum=False,
                                 required=False, allow_null=True, example="0.5 J", help_text="Energy per pulse in J.")
    pulse_duration = QuantityField(source="pulse_duration_s", unit="s", minimum=0, inclusive_minimum=False,
                                   required=False, allow_null=True, example="10 ns", help_text="Pulse duration in s.")
    prf = QuantityField(source="prf_Hz", unit="Hz", minimum=0, inclusive_minimum=False, required=False,
                        allow_null=True, example="10 Hz", help_text="Pulse repetition frequency in Hz.")
    beam_diameter = QuantityField(source="beam_diameter_m", unit="m", minimum=0, inclusive_minimum=False,
                                  required=False, allow_null=True, example="2 mm",
                                  help_text="Beam diameter at the aperture in m (see diameter_at).")
    diameter_at = serializers.ChoiceField(source="diameter_definition",
                                          choices=Emission._meta.get_field("diameter_definition").choices,
                                          required=False,
                                          help_text="Where diameter and divergence are measured: 1/e or 1/e2.")
    divergence = QuantityField(source="divergence_rad", unit="rad", minimum=0, required=False, allow_null=True,
                               example="1.2 mrad", help_text="Full-angle divergence in rad.")
    source_size = QuantityField(source="source_size_rad", unit="rad", minimum=0, required=False,
                                example="0 rad", help_text="Apparent source size in rad; 0 for a point source.")
    fibre_na = serializers.FloatField(min_value=0, max_value=1, required=False, allow_null=True,
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

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        merged = {**self._current_values(), **attrs}
        duration, prf = merged.get("pulse_duration_s"), merged.get("prf_Hz")
        if duration is not None and prf is not None and duration > 1.0 / prf:
            raise serializers.ValidationError(
                {"pulse_duration": f"a {duration:g} s pulse is longer than the period 1/prf = {1.0 / prf:g} s."})
        energy, power = merged.get("pulse_energy_J"), merged.get("average_power_W")
        if energy is not None and prf is not None and power is not None:
            implied = energy * prf
            if abs(implied - power) > POWER_CONSISTENCY * max(implied, power):
                raise serializers.ValidationError({"average_power": (
                    f"{format_si(power, 'W')} disagrees with pulse_energy x prf = {format_si(implied, 'W')} "
                    f"by more than {POWER_CONSISTENCY:.0%}; check all three.")})
        low, high = merged.get("wavelength_m"), merged.get("wavelength_max_m")
        if low is not None and high is not None and high <= low:
            raise serializers.ValidationError({"wavelength_max": "must be longer than wavelength."})
        return attrs

    def _current_values(self) -> dict[str, Any]:
        if self.instance is None:
            return {}
        names = ("pulse_duration_s", "prf_Hz", "pulse_energy_J", "average_power_W", "wavelength_m", "wavelength_max_m")
        return {name: getattr(self.instance, name) for name in names}


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
