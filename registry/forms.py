"""Forms for the register: physical inputs typed as on the data sheet ("532 nm", "5 mW").

Every quantity field reads a number in its SI unit or a string with its own unit through
hazards.units.parse_quantity, stores the SI float, and shows a stored value back in a unit
a person reads at a glance. Every admin form is a RegisterForm, which refuses on the form
what the database or the services would refuse.
"""
from __future__ import annotations

import math
from typing import Any

from django import forms
from django.core.exceptions import ValidationError
from django.utils.functional import Promise
from django.utils.text import capfirst
from django.utils.translation import gettext_lazy as _

from hazards.errors import InputError
from hazards.units import format_for_input, parse_quantity
from registry.models import MAX_WAVELENGTH_M, MIN_WAVELENGTH_M, Emission, EyewearMarking, Location
from registry.services import refuse_if_read_only

# Two readings of one value closer than this are the same value: formatting for display
# and parsing back may move the last bit or two of a float, never more.
_SAME_VALUE_RELATIVE = 1e-12


class RegisterForm(forms.ModelForm):
    """Base of the admin's forms: a change the register would refuse is a form error, not a 500.

    - Every named constraint is checked. Django checks only those whose fields are all on the
      form, so one involving a read-only field (a status) was left to the database, whose
      refusal is a 500; those fields have their values on the instance, so they are checked.
    - A read-only record (registry.services.refuse_if_read_only: retired, or a disposed or
      transferred laser with its emissions, SOPs and authorizations) takes no change, and
      nothing new is added to a retired laser.
    """

    def _post_clean(self) -> None:
        super()._post_clean()
        reported = {message for messages in self.errors.values() for message in messages}
        try:
            self.instance.validate_constraints(exclude={name for name in self.errors if name in self.fields})
        except ValidationError as error:
            for message in error.messages:
                if message not in reported:
                    self.add_error(None, message)
        try:
            refuse_if_read_only(self.instance)
        except ValidationError as error:
            self.add_error(None, error.messages)


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


def _wavelength(name: str | Promise, *, required: bool) -> QuantityField:
    return QuantityField(name=name, unit="m", display_unit="nm", minimum=MIN_WAVELENGTH_M, maximum=MAX_WAVELENGTH_M,
                         required=required,
                         help_text=_("e.g. '532 nm' or '10.6 um'; a bare number is in metres. 180 nm to 1 mm."))


class EmissionForm(RegisterForm):
    """Beam parameters as on the data sheet, for the emission page and the inline on the laser."""

    wavelength_m = _wavelength(_("wavelength"), required=True)
    wavelength_max_m = _wavelength(_("longest wavelength"), required=False)
    average_power_W = QuantityField(name=_("average power"), unit="W", minimum=0.0, inclusive_minimum=False,
                                    required=False, help_text=_("e.g. '5 mW'; a bare number is in watts."))
    pulse_energy_J = QuantityField(name=_("pulse energy"), unit="J", minimum=0.0, inclusive_minimum=False,
                                   required=False, help_text=_("e.g. '200 mJ'; a bare number is in joules."))
    pulse_duration_s = QuantityField(name=_("pulse duration"), unit="s", minimum=0.0, inclusive_minimum=False,
                                     required=False, help_text=_("e.g. '10 ns'; a bare number is in seconds."))
    prf_Hz = QuantityField(name=_("pulse repetition frequency"), unit="Hz", minimum=0.0, inclusive_minimum=False,
                           required=False, help_text=_("e.g. '10 Hz' or '80 MHz'; a bare number is in hertz."))
    beam_diameter_m = _length(_("beam diameter at the aperture"),
                              _("e.g. '2.3 mm'; a bare number is in metres."), minimum=0.0, inclusive_minimum=False)
    divergence_rad = QuantityField(name=_("full-angle divergence"), unit="rad", display_unit="mrad", minimum=0.0,
                                   required=False,
                                   help_text=_("e.g. '0.5 mrad'; a bare number is in radians; 0 for collimated."))
    source_size_rad = QuantityField(name=_("apparent source size"), unit="rad", display_unit="mrad", minimum=0.0,
                                    help_text=_("Angular subtense of an extended source, e.g. '5 mrad'; "
                                                "0 for a point source."))

    class Meta:
        model = Emission
        fields = "__all__"


class LocationForm(RegisterForm):
    longest_dimension_m = _length(_("longest room dimension"), _("e.g. '8.5 m'; a bare number is in metres."),
                                  minimum=0.0, inclusive_minimum=False)

    class Meta:
        model = Location
        fields = "__all__"


class EyewearMarkingForm(RegisterForm):
    wavelength_min_m = _wavelength(_("from wavelength"), required=True)
    wavelength_max_m = _wavelength(_("to wavelength"), required=True)

    class Meta:
        model = EyewearMarking
        fields = "__all__"
