"""Forms for the register: physical inputs typed as on the data sheet ("532 nm", "5 mW").

Every quantity field reads a number in its SI unit or a string with its own unit through
hazards.units.parse_quantity, stores the SI float, and shows a stored value back in a unit
a person reads at a glance.
"""
from __future__ import annotations

import math
from typing import Any

from django import forms
from django.utils.functional import Promise
from django.utils.text import capfirst
from django.utils.translation import gettext_lazy as _

from hazards.assessment import beam_fields
from hazards.errors import InputError
from hazards.units import format_for_input, parse_quantity
from registry.models import Emission, EyewearMarking, Location

# Two readings of one value closer than this are the same value: formatting for display
# and parsing back may move the last bit or two of a float, never more.
_SAME_VALUE_RELATIVE = 1e-12


class QuantityField(forms.Field):
    """A physical quantity: a number in ``unit`` (SI) or a string with units.

    ``name`` is how the error names the input ("wavelength: unknown unit 'nmm' ...").
    The minimum and maximum are in ``unit``; ``display_unit`` fixes the unit a stored
    value is shown in (a metric prefix of ``unit`` is chosen otherwise).
    """

    widget = forms.TextInput

    def __init__(self, *, name: str | Promise, unit: str, display_unit: str | None = None, minimum: float | None = None,
                 maximum: float | None = None, inclusive_minimum: bool = True, **kwargs: Any) -> None:
        self.name = name
        self.unit = unit
        self.display_unit = display_unit
        self.minimum = minimum
        self.maximum = maximum
        self.inclusive_minimum = inclusive_minimum
        kwargs.setdefault("label", capfirst(name))
        super().__init__(**kwargs)

    def prepare_value(self, value: Any) -> Any:
        # Bound data (what the person typed) is shown back exactly as typed.
        if isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value):
            return format_for_input(float(value), self.unit, display_unit=self.display_unit)
        return value

    def to_python(self, value: Any) -> float | None:
        if value is None or (isinstance(value, str) and not value.strip()):
            return None
        try:
            return parse_quantity(value, field=str(self.name), unit=self.unit, minimum=self.minimum,
                                  maximum=self.maximum, inclusive_minimum=self.inclusive_minimum)
        except InputError as error:
            raise forms.ValidationError(str(error), code="invalid_quantity") from None

    def has_changed(self, initial: Any, data: Any) -> bool:
        try:
            typed = self.to_python(data)
        except forms.ValidationError:
            return True
        if initial is None or typed is None:
            return (initial is None) != (typed is None)
        return not math.isclose(float(initial), typed, rel_tol=_SAME_VALUE_RELATIVE, abs_tol=0.0)


def _length(name: str | Promise, help_text: str | Promise, *, required: bool = False, **limits: Any) -> QuantityField:
    return QuantityField(name=name, unit="m", required=required, help_text=help_text, **limits)


def _beam(engine_name: str, name: str | Promise, help_text: str | Promise, *, required: bool = False,
          display_unit: str | None = None) -> QuantityField:
    """A beam input with the unit and bounds the hazards engine gives it (hazards.assessment.beam_fields)."""
    spec = beam_fields()[engine_name]
    return QuantityField(name=name, unit=spec.unit, display_unit=display_unit, minimum=spec.minimum,
                         maximum=spec.maximum, inclusive_minimum=spec.inclusive_minimum, required=required,
                         help_text=help_text)


class EmissionForm(forms.ModelForm):
    """Beam parameters as on the data sheet, for the emission page and the inline on the laser.

    The rules that tie the values together run in Emission.clean(), which the form calls.
    """

    wavelength_m = _beam("wavelength", _("wavelength"), _("e.g. '532 nm' or '10.6 um'; a bare number is in metres. "
                                                           "180 nm to 1 mm."), required=True, display_unit="nm")
    wavelength_max_m = _beam("wavelength_max", _("longest wavelength"),
                             _("Only for a tunable range, e.g. '1080 nm'; a bare number is in metres."),
                             display_unit="nm")
    average_power_W = _beam("power", _("average power"), _("e.g. '5 mW'; a bare number is in watts."))
    pulse_energy_J = _beam("pulse_energy", _("pulse energy"), _("e.g. '200 mJ'; a bare number is in joules."))
    pulse_duration_s = _beam("pulse_duration", _("pulse duration"), _("e.g. '10 ns'; a bare number is in seconds."))
    prf_Hz = _beam("prf", _("pulse repetition frequency"), _("e.g. '10 Hz' or '80 MHz'; a bare number is in hertz."))
    beam_diameter_m = _beam("beam_diameter", _("beam diameter at the aperture"),
                            _("e.g. '2.3 mm'; a bare number is in metres."))
    divergence_rad = _beam("divergence", _("full-angle divergence"),
                           _("e.g. '0.5 mrad'; a bare number is in radians; 0 for collimated."), display_unit="mrad")
    source_size_rad = _beam("source_size", _("apparent source size"),
                            _("Angular subtense of an extended source, e.g. '5 mrad'; 0 for a point source."),
                            required=True, display_unit="mrad")

    class Meta:
        model = Emission
        fields = "__all__"


class LocationForm(forms.ModelForm):
    longest_dimension_m = _length(_("longest room dimension"), _("e.g. '8.5 m'; a bare number is in metres."),
                                  minimum=0.0, inclusive_minimum=False)

    class Meta:
        model = Location
        fields = "__all__"


class EyewearMarkingForm(forms.ModelForm):
    wavelength_min_m = _beam("wavelength", _("from wavelength"), _("e.g. '190 nm'; a bare number is in metres."),
                             required=True, display_unit="nm")
    wavelength_max_m = _beam("wavelength", _("to wavelength"), _("e.g. '532 nm'; a bare number is in metres."),
                             required=True, display_unit="nm")

    class Meta:
        model = EyewearMarking
        fields = "__all__"
