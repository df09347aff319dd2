"""The body of POST /api/v1/evaluate/: the `python -m hazards assess` options with underscores.

The fields describe the request for the schema and check each value's JSON type; the
values themselves go unchanged to hazards.assessment.parse_assessment_request, the same
reader the command uses, so the endpoint and the command accept and refuse exactly the
same input.
"""
from __future__ import annotations

from typing import Any

from rest_framework import serializers

from hazards.limits import DEFAULT_LIMITS, LIMIT_SETS
from hazards.units import MAX_TEXT_LENGTH
from registry.models import DiameterDefinition
from registry.serializers.fields import QuantityField


class PassThroughQuantityField(QuantityField):
    """Documented like a QuantityField; the value is checked for type only and passed on."""

    def to_internal_value(self, data: object) -> object:
        if isinstance(data, bool) or not isinstance(data, (int, float, str)):
            raise serializers.ValidationError(f"expected a number in {self.unit} or a string with units.")
        return data


def _quantity(unit: str, help_text: str, example: str, *, required: bool = False) -> PassThroughQuantityField:
    return PassThroughQuantityField(unit=unit, required=required, allow_null=not required, example=example,
                                    help_text=help_text)


class EvaluationRequestSerializer(serializers.Serializer):  # type: ignore[type-arg]
    wavelength = _quantity("m", "Wavelength in m (180 nm to 1 mm).", "532 nm", required=True)
    power = _quantity("W", "Average power in W (may be left out for a pulse train with pulse_energy and prf).",
                      "5 mW")
    beam_diameter = _quantity("m", "Beam diameter at the exit in m, at diameter_at.", "2 mm", required=True)
    divergence = _quantity("rad", "Full-angle divergence in rad, at diameter_at (0 for a collimated beam).",
                           "1.2 mrad", required=True)
    # The register's choices carry labels; their values are the engine's DIAMETER_DEFINITIONS.
    diameter_at = serializers.ChoiceField(choices=DiameterDefinition.choices, required=False, default="1/e2",
                                          help_text="The level at which diameter and divergence are given.")
    pulse_energy = _quantity("J", "Energy per pulse in J.", "0.5 J")
    pulse_duration = _quantity("s", "Pulse duration in s.", "10 ns")
    prf = _quantity("Hz", "Pulse repetition frequency in Hz (leave out for a single pulse).", "10 Hz")
    exposure = _quantity("s", "Exposure duration in s (default: common practice for the wavelength, reported).",
                         "0.25 s")
    limits = serializers.ChoiceField(choices=list(LIMIT_SETS), required=False, default=DEFAULT_LIMITS,
                                     help_text="Exposure-limit set.")
    source_size = _quantity("rad", "Apparent source size in rad (0 for a point source).", "1.5 mrad")
    laser_class = serializers.CharField(required=False, allow_null=True, max_length=MAX_TEXT_LENGTH,
                                        help_text="Labelled class, checked for plausibility (e.g. '3B').")
    deliberate = serializers.BooleanField(required=False, default=False,
                                          help_text="Assume deliberate long viewing for the default exposure.")
    reflectance = _quantity("", "Diffuse reflectance of the surface, 0 to 1 (dimensionless, default 1).", "0.9")
    viewing_angle = _quantity("rad", "Viewing angle from the surface normal for the diffuse case, in rad.", "30 deg")
    skin_exposure = _quantity("s", "Exposure duration for the skin in s.", "10 s")
    objective_diameter = _quantity("m", "Objective diameter of viewing optics in m (default 50 mm).", "50 mm")
    optics_transmission = _quantity("", "Transmission of viewing optics, 0 to 1 (dimensionless, default 1).", "0.9")
    focal_length = _quantity("m", "Focal length of a lens on the laser, in m.", "100 mm")
    lens_beam_diameter = _quantity("m", "Beam diameter at that lens in m (default: the exit diameter).", "5 mm")
    fibre_na = _quantity("", "Numerical aperture of a fibre end (dimensionless).", "0.22")
    fibre_core = _quantity("m", "Core diameter of that fibre, in m.", "200 um")
    # Each marking is read and checked against the beam; a handful is what a room keeps.
    eyewear = serializers.ListField(child=serializers.CharField(), required=False, max_length=20,
                                    help_text="Eyewear markings to check, e.g. ['D 1064 LB6'].")

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        unknown = sorted(set(self.initial_data) - set(self.fields))
        if unknown:
            raise serializers.ValidationError({name: "unknown key." for name in unknown})
        return attrs
