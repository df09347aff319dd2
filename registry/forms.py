"""Forms for the register: physical inputs typed as on the data sheet ("532 nm", "5 mW").

Every quantity field reads a number in its SI unit or a string with its own unit through
hazards.units.parse_quantity, stores the SI float, and shows a stored value back in a unit
a person reads at a glance. Every admin form is a RegisterForm, which refuses on the form
what the database or the services would refuse.
"""
from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, TypeVar

from django import forms
from django.core.exceptions import ValidationError
from django.db import router
from django.db.models import CheckConstraint
from django.forms.models import InlineForeignKeyField
from django.utils.functional import Promise
from django.utils.text import capfirst
from django.utils.translation import gettext_lazy as _

from hazards.assessment import beam_fields
from hazards.errors import InputError
from hazards.units import format_for_input, parse_quantity
from registry.models import (
    CourseKind,
    Emission,
    EyewearMarking,
    IncidentKind,
    Laser,
    LaserClass,
    LaserStatus,
    LaserType,
    Location,
    Person,
    ResearchGroup,
    Role,
)
from registry.services import refuse_if_read_only

# Two readings of one value closer than this are the same value: formatting for display
# and parsing back may move the last bit or two of a float, never more.
_SAME_VALUE_RELATIVE = 1e-12


class RegisterForm(forms.ModelForm):
    """Base of the admin's forms: a change the register would refuse is a form error, not a 500.

    - Every named constraint is checked. Django checks only those whose fields are all on the
      form, so one involving a read-only field (a status) was left to the database, whose
      refusal is a 500; those fields have their values on the instance, so they are checked
      here. A check constraint Django has already run is not run again: each is a query.
    - A read-only record (registry.services.refuse_if_read_only: retired, or a disposed or
      transferred laser with its emissions, SOPs and authorizations) takes no change, and
      nothing new is added to a retired laser.
    """

    def _post_clean(self) -> None:
        super()._post_clean()
        reported = {message for messages in self.errors.values() for message in messages}
        in_error = {name for name in self.errors if name in self.fields}
        # The fields Django's own pass (ModelForm._post_clean) left out of the instance's check.
        left_out = self._get_validation_exclusions() | {
            name for name, field in self.fields.items() if isinstance(field, InlineForeignKeyField)}
        using = router.db_for_write(type(self.instance), instance=self.instance)
        for model, constraints in self.instance.get_constraints():
            for constraint in constraints:
                if isinstance(constraint, CheckConstraint) and not constraint.condition.referenced_base_fields & left_out:
                    continue
                try:
                    constraint.validate(model, self.instance, exclude=in_error, using=using)
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


def _beam(engine_name: str, name: str | Promise, help_text: str | Promise, *, required: bool = False,
          display_unit: str | None = None) -> QuantityField:
    """A beam input with the unit and bounds the hazards engine gives it (hazards.assessment.beam_fields)."""
    spec = beam_fields()[engine_name]
    return QuantityField(name=name, unit=spec.unit, display_unit=display_unit, minimum=spec.minimum,
                         maximum=spec.maximum, inclusive_minimum=spec.inclusive_minimum, required=required,
                         help_text=help_text)


class EmissionForm(RegisterForm):
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


class LocationForm(RegisterForm):
    longest_dimension_m = _length(_("longest room dimension"), _("e.g. '8.5 m'; a bare number is in metres."),
                                  minimum=0.0, inclusive_minimum=False)

    class Meta:
        model = Location
        fields = "__all__"


class EyewearMarkingForm(RegisterForm):
    wavelength_min_m = _beam("wavelength", _("from wavelength"), _("e.g. '190 nm'; a bare number is in metres."),
                             required=True, display_unit="nm")
    wavelength_max_m = _beam("wavelength", _("to wavelength"), _("e.g. '532 nm'; a bare number is in metres."),
                             required=True, display_unit="nm")

    class Meta:
        model = EyewearMarking
        fields = "__all__"


# --- the register's own pages ---------------------------------------------------------------

_DATE = forms.DateInput(attrs={"type": "date"})


class LaserRegistrationForm(forms.Form):
    """A new laser's identity and room. The asset tag is the register's proposal; only the LSO
    may change it, and only the LSO names an owner (a researcher registers in their own name)."""

    asset_tag = forms.CharField(label=_("Asset tag"), max_length=40)
    manufacturer = forms.CharField(label=_("Manufacturer"), max_length=200, required=False)
    model_name = forms.CharField(label=_("Model"), max_length=200, required=False)
    serial_number = forms.CharField(label=_("Serial number"), max_length=100, required=False)
    laser_type = forms.ChoiceField(label=_("Type"), choices=LaserType.choices)
    gain_medium = forms.CharField(label=_("Gain medium"), max_length=100, required=False,
                                  help_text=_("e.g. Nd:YAG, Ti:sapphire, He-Ne, InGaN."))
    labelled_class = forms.ChoiceField(label=_("Labelled class"), choices=LaserClass.choices)
    embedded_class = forms.ChoiceField(
        label=_("Embedded laser class"), choices=[("", _("none: the label is the beam's class")), *LaserClass.choices],
        required=False, help_text=_("Only when an enclosure changes the class, e.g. a class 1 cutter holding a class 4 laser."))
    location = forms.ModelChoiceField(label=_("Room"), queryset=Location.objects.all())
    owner = forms.ModelChoiceField(label=_("Owner"), queryset=Person.objects.none(), required=False)
    description = forms.CharField(label=_("Description"), widget=forms.Textarea(attrs={"rows": 2}), required=False)

    def __init__(self, *args: Any, person: Person, proposed_tag: str, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.fields["asset_tag"].initial = proposed_tag
        if person.is_lso:
            self.fields["owner"].queryset = Person.objects.select_related("user").filter(role=Role.RESEARCHER)
            self.fields["owner"].help_text = _("The researcher answerable for the laser.")
        else:
            self.fields["asset_tag"].disabled = True
            self.fields["asset_tag"].help_text = _("Proposed by the register; the LSO may change it.")
            del self.fields["owner"]


class EmissionEntryForm(EmissionForm):
    """One emission of a laser being registered, typed as on the data sheet."""

    source_size_rad = QuantityField(name=_("apparent source size"), unit="rad", display_unit="mrad", minimum=0.0,
                                    required=False, help_text=_("Only for an extended source, e.g. '5 mrad'; "
                                                                "empty for a point source."))

    class Meta(EmissionForm.Meta):
        fields = ["label", "wavelength_m", "wavelength_max_m", "temporal_mode", "average_power_W", "pulse_energy_J",
                  "pulse_duration_s", "prf_Hz", "beam_diameter_m", "diameter_definition", "divergence_rad",
                  "source_size_rad", "fibre_na"]

    def clean_source_size_rad(self) -> float:
        # Empty on a data sheet means a point source, which the register stores as 0 rad.
        value = self.cleaned_data["source_size_rad"]
        return 0.0 if value is None else value


# Twelve lines is more than any data sheet lists; a posted form count beyond it is refused, not rendered.
EmissionFormSet = forms.formset_factory(EmissionEntryForm, extra=0, min_num=1, validate_min=True, max_num=12,
                                        validate_max=True, absolute_max=13)


class ReviewForm(forms.Form):
    comments = forms.CharField(label=_("Comments for the owner"), required=False,
                               widget=forms.Textarea(attrs={"rows": 2}),
                               help_text=_("Required when returning the registration; kept with an approval as its note."))


class TrainingRecordForm(forms.Form):
    course = forms.ChoiceField(label=_("Course"), choices=CourseKind.choices)
    title = forms.CharField(label=_("Title"), max_length=200, required=False)
    laser = forms.ModelChoiceField(label=_("Laser (equipment-specific training)"), queryset=Laser.objects.all(),
                                   required=False)
    completed_on = forms.DateField(label=_("Completed on"), widget=_DATE)
    valid_until = forms.DateField(label=_("Valid until"), widget=_DATE, required=False,
                                  help_text=_("Empty when the training does not expire."))
    evidence = forms.CharField(label=_("Evidence"), max_length=300, required=False,
                               help_text=_("Certificate number, attendance list or document reference."))


class AuthorizationRequestForm(forms.Form):
    laser = forms.ModelChoiceField(label=_("Laser"), queryset=Laser.objects.filter(status=LaserStatus.ACTIVE))
    conditions = forms.CharField(label=_("Conditions of use"), required=False, widget=forms.Textarea(attrs={"rows": 2}))


class AuthorizationDecisionForm(forms.Form):
    valid_until = forms.DateField(label=_("Valid until"), widget=_DATE, required=False,
                                  help_text=_("For an approval; empty: until revoked."))
    reason = forms.CharField(label=_("Reason"), required=False, widget=forms.Textarea(attrs={"rows": 2}),
                             help_text=_("Required for a refusal; shown to the requester."))


class PersonCreateForm(forms.Form):
    username = forms.CharField(label=_("Username"), max_length=150)
    first_name = forms.CharField(label=_("First name"), max_length=150, required=False)
    last_name = forms.CharField(label=_("Last name"), max_length=150, required=False)
    email = forms.EmailField(label=_("Email"), required=False)
    role = forms.ChoiceField(label=_("Role"), choices=Role.choices)
    research_group = forms.ModelChoiceField(label=_("Research group"), queryset=ResearchGroup.objects.all(),
                                            required=False)
    supervisor = forms.ModelChoiceField(label=_("Supervisor"), queryset=Person.objects.select_related("user"),
                                        required=False)
    password = forms.CharField(label=_("Initial password"), required=False, strip=False,
                               widget=forms.PasswordInput(render_value=False),
                               help_text=_("Optional; without one the account cannot sign in until a password is set."))

    def clean_password(self) -> str | None:
        return self.cleaned_data["password"] or None


class LaserImportForm(forms.Form):
    """The import page's upload; the file's size and content are checked by the import service."""

    file = forms.FileField(label=_("Spreadsheet (.csv or .xlsx)"),
                           help_text=_("One row per emission, the first row naming the columns; "
                                       "the register's own CSV or XLSX export reads back as it is."),
                           widget=forms.ClearableFileInput(attrs={"accept": ".csv,.xlsx"}))
    create_locations = forms.BooleanField(
        label=_("Create the rooms the register does not have yet"), required=False,
        help_text=_("Otherwise a building and room the register does not know is reported as a problem."))


class IncidentReportForm(forms.Form):
    kind = forms.ChoiceField(label=_("Kind"), choices=IncidentKind.choices)
    occurred_at = forms.DateTimeField(label=_("When it happened"),
                                      widget=forms.DateTimeInput(attrs={"type": "datetime-local"}))
    laser = forms.ModelChoiceField(label=_("Laser"), queryset=Laser.objects.none())
    description = forms.CharField(label=_("What happened"), widget=forms.Textarea(attrs={"rows": 4}))

    def __init__(self, *args: Any, lasers: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.fields["laser"].queryset = lasers


T = TypeVar("T")


def submit_to_service(form: forms.BaseForm, action: Callable[[dict[str, Any]], T]) -> T | None:
    """Run a service on the form's cleaned values: its result, or None when the form is invalid
    or the service refused (the refusal then shows on the form, see ``add_service_errors``)."""
    if not form.is_valid():
        return None
    try:
        return action(form.cleaned_data)
    except ValidationError as error:
        add_service_errors(form, error)
        return None


def add_service_errors(form: forms.BaseForm, error: ValidationError) -> None:
    """Show a service's refusal on ``form``: beside the field it names, or above the form."""
    if not hasattr(error, "error_dict"):
        form.add_error(None, error)
        return
    for name, messages in error.message_dict.items():
        form.add_error(name if name in form.fields else None, messages)
