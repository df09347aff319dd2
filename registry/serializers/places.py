"""Locations and the eyewear kept in them."""
from __future__ import annotations

from typing import Any

from rest_framework import serializers

from registry.models import MAX_WAVELENGTH_M, MIN_WAVELENGTH_M, Eyewear, EyewearCondition, EyewearMarking, Location
from registry.serializers.fields import QuantityField, QuantitySerializerMixin


class LocationSerializer(QuantitySerializerMixin, serializers.ModelSerializer):  # type: ignore[type-arg]
    longest_dimension = QuantityField(
        source="longest_dimension_m", unit="m", minimum=0, inclusive_minimum=False, required=False,
        allow_null=True, example="8.5 m",
        help_text="Longest room dimension in m, compared with the NOHD to see whether the hazard zone fits.",
    )

    class Meta:
        model = Location
        fields = ["id", "code", "site", "building", "room", "name", "is_controlled_area", "interlock",
                  "has_warning_light", "sign_posted_on", "longest_dimension", "created_at", "updated_at"]
        read_only_fields = ["created_at", "updated_at"]


class LocationUpdateSerializer(LocationSerializer):
    """The code is the room's identity in other systems: fixed once created."""

    class Meta(LocationSerializer.Meta):
        read_only_fields = [*LocationSerializer.Meta.read_only_fields, "code"]


# The most wavelength bands one eyewear item is marked with (common practice, no source:
# a filter is marked for a handful).
MAX_MARKED_BANDS = 20


class EyewearMarkingSerializer(QuantitySerializerMixin, serializers.ModelSerializer):  # type: ignore[type-arg]
    wavelength_min = QuantityField(source="wavelength_min_m", unit="m", minimum=MIN_WAVELENGTH_M,
                                   maximum=MAX_WAVELENGTH_M, example="190 nm",
                                   help_text="Shortest wavelength of the band, in m.")
    wavelength_max = QuantityField(source="wavelength_max_m", unit="m", minimum=MIN_WAVELENGTH_M,
                                   maximum=MAX_WAVELENGTH_M, example="534 nm",
                                   help_text="Longest wavelength of the band, in m.")
    optical_density = serializers.FloatField(min_value=0, required=False, allow_null=True,
                                             help_text="Marked optical density over the band (dimensionless, log10).")
    en207_scale = serializers.IntegerField(min_value=1, max_value=10, required=False, allow_null=True,
                                           help_text="EN 207 scale number (LB1 to LB10).")

    class Meta:
        model = EyewearMarking
        fields = ["wavelength_min", "wavelength_max", "optical_density", "en207_conditions", "en207_scale"]

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        if attrs["wavelength_max_m"] < attrs["wavelength_min_m"]:
            raise serializers.ValidationError({"wavelength_max": "must not be shorter than wavelength_min."})
        if attrs.get("optical_density") is None and attrs.get("en207_scale") is None:
            raise serializers.ValidationError({"optical_density": "give an optical density, an LB number or both."})
        return attrs


class EyewearSerializer(serializers.ModelSerializer):  # type: ignore[type-arg]
    markings = EyewearMarkingSerializer(many=True, max_length=MAX_MARKED_BANDS,
                                        help_text="Protection marked on the item, per band.")
    location_label = serializers.SerializerMethodField()

    class Meta:
        model = Eyewear
        fields = ["id", "inventory_tag", "manufacturer", "model_name", "description", "location", "location_label",
                  "quantity", "condition", "last_inspected_on", "markings", "retired_at", "retirement_reason",
                  "created_at", "updated_at"]
        read_only_fields = ["retired_at", "retirement_reason", "created_at", "updated_at"]

    def get_location_label(self, eyewear: Eyewear) -> str:
        return str(eyewear.location)


class EyewearUpdateSerializer(EyewearSerializer):
    """Markings change through their own action, condition through inspections; the
    inventory tag is the item's identity on its label."""

    markings = EyewearMarkingSerializer(many=True, read_only=True)

    class Meta(EyewearSerializer.Meta):
        read_only_fields = [*EyewearSerializer.Meta.read_only_fields, "inventory_tag", "condition",
                            "last_inspected_on"]


class EyewearMarkingsSerializer(serializers.Serializer):  # type: ignore[type-arg]
    markings = EyewearMarkingSerializer(many=True, max_length=MAX_MARKED_BANDS)


class EyewearInspectionSerializer(serializers.Serializer):  # type: ignore[type-arg]
    condition = serializers.ChoiceField(choices=EyewearCondition.choices)
    inspected_on = serializers.DateField(required=False, allow_null=True, default=None,
                                         help_text="Date of the inspection (default today).")
