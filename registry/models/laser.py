"""Lasers and their emissions (several lines or modes per laser), in SI units."""
from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from hazards.assessment import Mode, check_beam_values
from hazards.errors import InputError

from registry.models.base import RetainedModel, TimestampedModel, free_text
from registry.models.location import Location
from registry.models.people import Person

# The optical radiation range the limit sets cover: 180 nm to 1 mm.
MIN_WAVELENGTH_M = 180e-9
MAX_WAVELENGTH_M = 1e-3


class LaserClass(models.TextChoices):
    CLASS_1 = "1", _("class 1")
    CLASS_1C = "1C", _("class 1C")
    CLASS_1M = "1M", _("class 1M")
    CLASS_2 = "2", _("class 2")
    CLASS_2M = "2M", _("class 2M")
    CLASS_3R = "3R", _("class 3R")
    CLASS_3B = "3B", _("class 3B")
    CLASS_4 = "4", _("class 4")


HAZARDOUS_CLASSES = (LaserClass.CLASS_3B, LaserClass.CLASS_4)


def class_rank(label: str) -> int:
    """A class's place in LaserClass, lowest hazard first; -1 for none (an empty embedded class)."""
    return LaserClass.values.index(label) if label else -1


def effective_class(labelled_class: str, embedded_class: str) -> str:
    """The class that governs the hazard of the beam itself: the embedded class when given."""
    return embedded_class or labelled_class


class LaserStatus(models.TextChoices):
    PENDING_REVIEW = "pending_review", _("pending review")
    RETURNED = "returned", _("returned to owner for changes")
    ACTIVE = "active", _("active")
    IN_STORAGE = "in_storage", _("in storage")
    OUT_OF_SERVICE = "out_of_service", _("out of service")
    DISPOSED = "disposed", _("disposed")
    TRANSFERRED = "transferred", _("transferred")


# Statuses in which the laser has left the register's care: no owner or room is required.
RETIRED_STATUSES = (LaserStatus.DISPOSED, LaserStatus.TRANSFERRED)


class LaserType(models.TextChoices):
    GAS = "gas", _("gas")
    SOLID_STATE = "solid_state", _("solid state")
    DIODE = "diode", _("diode (semiconductor)")
    FIBRE = "fibre", _("fibre")
    EXCIMER = "excimer", _("excimer")
    DYE = "dye", _("dye")
    OTHER = "other", _("other")


class Laser(RetainedModel):
    asset_tag = models.CharField(_("asset tag"), max_length=40, unique=True)
    manufacturer = models.CharField(_("manufacturer"), max_length=200, blank=True)
    model_name = models.CharField(_("model"), max_length=200, blank=True)
    serial_number = models.CharField(_("serial number"), max_length=100, blank=True)
    laser_type = models.CharField(_("type"), max_length=20, choices=LaserType.choices)
    gain_medium = models.CharField(_("gain medium"), max_length=100, blank=True,
                                   help_text=_("e.g. Nd:YAG, Ti:sapphire, He-Ne, KrF, InGaN."))
    labelled_class = models.CharField(_("labelled class"), max_length=2, choices=LaserClass.choices)
    embedded_class = models.CharField(
        _("embedded laser class"), max_length=2, choices=LaserClass.choices, blank=True,
        help_text=_("Class of the laser inside an enclosure, when the enclosure changes the labelled class."),
    )
    status = models.CharField(_("status"), max_length=20, choices=LaserStatus.choices,
                              default=LaserStatus.PENDING_REVIEW)
    owner = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True, related_name="lasers",
                              verbose_name=_("owner"))
    location = models.ForeignKey(Location, on_delete=models.PROTECT, null=True, blank=True,
                                 related_name="lasers", verbose_name=_("location"))
    description = free_text(_("description"), blank=True)
    received_on = models.DateField(_("received on"), null=True, blank=True)
    commissioned_on = models.DateField(_("commissioned on"), null=True, blank=True)
    retired_on = models.DateField(_("retired on"), null=True, blank=True)
    review_comments = free_text(_("review comments"), blank=True,
                                       help_text=_("The LSO's comments when the registration was returned."))
    status_note = free_text(_("status note"), blank=True,
                                   help_text=_("Why the last status change was made (e.g. where it was transferred)."))

    history = HistoricalRecords()

    class Meta:
        ordering = ["asset_tag"]
        verbose_name = _("laser")
        verbose_name_plural = _("lasers")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(labelled_class__in=[choice.value for choice in LaserClass]),
                name="registry_laser_class_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(embedded_class="")
                | models.Q(embedded_class__in=[choice.value for choice in LaserClass]),
                name="registry_laser_embedded_class_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in LaserStatus]),
                name="registry_laser_status_valid",
            ),
            # A class 3B or 4 beam in the register's care always has someone answerable and a
            # room, also inside an enclosure (servicing opens it).
            models.CheckConstraint(
                condition=(~models.Q(labelled_class__in=HAZARDOUS_CLASSES)
                           & ~models.Q(embedded_class__in=HAZARDOUS_CLASSES))
                | models.Q(status__in=RETIRED_STATUSES)
                | (models.Q(owner__isnull=False) & models.Q(location__isnull=False)),
                name="registry_laser_hazardous_has_owner_and_location",
                violation_error_message=_("A class 3B or 4 laser (or one embedding such a laser) needs an owner "
                                          "and a location until it is disposed of or transferred."),
            ),
            models.CheckConstraint(
                condition=models.Q(retired_on__isnull=True) | models.Q(status__in=RETIRED_STATUSES),
                name="registry_laser_retired_on_only_when_retired",
                violation_error_message=_("Only a disposed or transferred laser has a retirement date."),
            ),
        ]

    def __str__(self) -> str:
        label = " ".join(part for part in (self.manufacturer, self.model_name) if part)
        return f"{self.asset_tag} {label}".strip()

    @property
    def effective_class(self) -> str:
        """The class that governs the hazard of the beam itself (the embedded class when given)."""
        return effective_class(self.labelled_class, self.embedded_class)

    @property
    def is_hazardous(self) -> bool:
        """Class 3B or 4, labelled or embedded: the lasers the register holds to its strictest rules."""
        return self.labelled_class in HAZARDOUS_CLASSES or self.embedded_class in HAZARDOUS_CLASSES


class TemporalMode(models.TextChoices):
    CONTINUOUS = "cw", _("continuous wave")
    SINGLE_PULSE = "single_pulse", _("single pulse")
    REPETITIVE = "repetitive", _("repetitively pulsed")
    Q_SWITCHED = "q_switched", _("Q-switched")
    MODE_LOCKED = "mode_locked", _("mode-locked")


PULSED_MODES = (TemporalMode.SINGLE_PULSE, TemporalMode.REPETITIVE, TemporalMode.Q_SWITCHED,
                TemporalMode.MODE_LOCKED)

# The hazards engine's name of each physical input -> the emission field that holds it (SI units).
EMISSION_BEAM_FIELDS: dict[str, str] = {
    "wavelength": "wavelength_m", "wavelength_max": "wavelength_max_m", "power": "average_power_W",
    "pulse_energy": "pulse_energy_J", "pulse_duration": "pulse_duration_s", "prf": "prf_Hz",
    "beam_diameter": "beam_diameter_m", "divergence": "divergence_rad", "source_size": "source_size_rad",
    "fibre_na": "fibre_na",
}


class DiameterDefinition(models.TextChoices):
    """Where on the Gaussian profile a beam diameter or divergence is measured."""

    ONE_OVER_E = "1/e", _("1/e of peak irradiance")
    ONE_OVER_E_SQUARED = "1/e2", _("1/e\u00b2 of peak irradiance")


def _positive_or_null(field: str) -> models.Q:
    return models.Q(**{f"{field}__isnull": True}) | models.Q(**{f"{field}__gt": 0})


class Emission(TimestampedModel):
    """One line or mode of a laser, in SI base units (m, s, W, J, Hz, rad).

    Quantities a data sheet does not give stay empty (null) rather than zero. A tunable
    source gives its range as wavelength_m (shortest) to wavelength_max_m (longest).
    """

    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, related_name="emissions", verbose_name=_("laser"))
    label = models.CharField(_("label"), max_length=100, blank=True,
                             help_text=_("e.g. 'fundamental', 'second harmonic', 'aiming beam'."))
    wavelength_m = models.FloatField(_("wavelength (m)"), help_text=_("In metres; the shortest for a range."))
    wavelength_max_m = models.FloatField(_("longest wavelength (m)"), null=True, blank=True,
                                         help_text=_("In metres; only for a tunable or broadband range."))
    temporal_mode = models.CharField(_("temporal mode"), max_length=20, choices=TemporalMode.choices)
    average_power_W = models.FloatField(_("average power (W)"), null=True, blank=True)
    pulse_energy_J = models.FloatField(_("pulse energy (J)"), null=True, blank=True)
    pulse_duration_s = models.FloatField(_("pulse duration (s)"), null=True, blank=True)
    prf_Hz = models.FloatField(_("pulse repetition frequency (Hz)"), null=True, blank=True)
    beam_diameter_m = models.FloatField(_("beam diameter at the aperture (m)"), null=True, blank=True)
    diameter_definition = models.CharField(
        _("diameter and divergence defined at"), max_length=4, choices=DiameterDefinition.choices,
        default=DiameterDefinition.ONE_OVER_E_SQUARED,
    )
    divergence_rad = models.FloatField(_("full-angle divergence (rad)"), null=True, blank=True)
    source_size_rad = models.FloatField(
        _("apparent source size (rad)"), default=0.0,
        help_text=_("Angular subtense of an extended source in radians; 0 for a point source."),
    )
    fibre_na = models.FloatField(_("fibre numerical aperture"), null=True, blank=True,
                                 help_text=_("Only for fibre-delivered beams."))
    notes = free_text(_("notes"), blank=True)
    assessment_problem = models.TextField(
        _("why the hazard is not assessed"), blank=True,
        help_text=_("Set by the register when the hazards engine cannot assess this emission (a missing beam "
                    "diameter, say); empty when its results are stored."))

    history = HistoricalRecords()

    class Meta:
        ordering = ["laser", "wavelength_m", "id"]
        verbose_name = _("emission")
        verbose_name_plural = _("emissions")
        # The LSO's home counts and lists the emissions the engine could not assess: a few among thousands.
        indexes = [models.Index(fields=["laser"], condition=~models.Q(assessment_problem=""),
                                name="registry_emission_not_assessed")]
        constraints = [
            models.CheckConstraint(
                condition=models.Q(wavelength_m__gte=MIN_WAVELENGTH_M, wavelength_m__lte=MAX_WAVELENGTH_M),
                name="registry_emission_wavelength_in_range",
                violation_error_message=_("Wavelength must be from 180 nm to 1 mm."),
            ),
            models.CheckConstraint(
                condition=models.Q(wavelength_max_m__isnull=True)
                | models.Q(wavelength_max_m__gt=models.F("wavelength_m"), wavelength_max_m__lte=MAX_WAVELENGTH_M),
                name="registry_emission_wavelength_max_in_range",
                violation_error_message=_("The longest wavelength must be above the wavelength and at most 1 mm."),
            ),
            models.CheckConstraint(
                condition=models.Q(temporal_mode__in=[choice.value for choice in TemporalMode]),
                name="registry_emission_temporal_mode_valid",
            ),
            models.CheckConstraint(condition=_positive_or_null("average_power_W"),
                                   name="registry_emission_power_positive",
                violation_error_message=_("Average power must be greater than 0 W.")),
            models.CheckConstraint(condition=_positive_or_null("pulse_energy_J"),
                                   name="registry_emission_energy_positive",
                violation_error_message=_("Pulse energy must be greater than 0 J.")),
            models.CheckConstraint(condition=_positive_or_null("pulse_duration_s"),
                                   name="registry_emission_duration_positive",
                violation_error_message=_("Pulse duration must be greater than 0 s.")),
            models.CheckConstraint(condition=_positive_or_null("prf_Hz"),
                                   name="registry_emission_prf_positive",
                violation_error_message=_("Pulse repetition frequency must be greater than 0 Hz.")),
            models.CheckConstraint(condition=_positive_or_null("beam_diameter_m"),
                                   name="registry_emission_diameter_positive",
                violation_error_message=_("Beam diameter must be greater than 0 m.")),
            # Zero divergence is a collimated beam, which hazard code reports as unbounded.
            models.CheckConstraint(
                condition=models.Q(divergence_rad__isnull=True) | models.Q(divergence_rad__gte=0),
                name="registry_emission_divergence_not_negative",
                violation_error_message=_("Divergence cannot be negative (0 means collimated)."),
            ),
            models.CheckConstraint(condition=models.Q(source_size_rad__gte=0),
                                   name="registry_emission_source_size_not_negative",
                violation_error_message=_("Apparent source size cannot be negative (0 means a point source).")),
            models.CheckConstraint(
                condition=models.Q(fibre_na__isnull=True) | models.Q(fibre_na__gt=0, fibre_na__lte=1),
                name="registry_emission_fibre_na_in_range",
                violation_error_message=_("Fibre numerical aperture must be greater than 0 and at most 1."),
            ),
            # A pulse cannot last longer than the time between pulses: tau <= 1 / PRF.
            models.CheckConstraint(
                condition=models.Q(pulse_duration_s__isnull=True)
                | models.Q(prf_Hz__isnull=True)
                | models.Q(pulse_duration_s__lte=models.Value(1.0) / models.F("prf_Hz")),
                name="registry_emission_pulse_within_period",
                violation_error_message=_("Pulse duration must not be longer than the pulse period 1/PRF."),
            ),
            models.CheckConstraint(
                condition=models.Q(average_power_W__isnull=False) | models.Q(pulse_energy_J__isnull=False),
                name="registry_emission_has_power_or_energy",
                violation_error_message=_("Give the average power or the pulse energy."),
            ),
            models.CheckConstraint(
                condition=~models.Q(temporal_mode=TemporalMode.CONTINUOUS) | models.Q(average_power_W__isnull=False),
                name="registry_emission_cw_has_power",
                violation_error_message=_("A continuous-wave emission needs its average power."),
            ),
            models.CheckConstraint(
                condition=~models.Q(temporal_mode__in=PULSED_MODES) | models.Q(pulse_duration_s__isnull=False),
                name="registry_emission_pulsed_has_duration",
                violation_error_message=_("A pulsed emission needs its pulse duration."),
            ),
        ]

    def __str__(self) -> str:
        nanometres = f"{self.wavelength_m * 1e9:.6g}"
        if self.wavelength_max_m is not None:
            nanometres += f"-{self.wavelength_max_m * 1e9:.6g}"
        return f"{self.laser.asset_tag} {nanometres} nm {self.get_temporal_mode_display()}"

    @property
    def beam_mode(self) -> Mode:
        """The hazards engine's temporal mode: every pulsed mode but a single pulse is a pulse train."""
        if self.temporal_mode == TemporalMode.CONTINUOUS:
            return "continuous"
        return "single_pulse" if self.temporal_mode == TemporalMode.SINGLE_PULSE else "pulse_train"

    def beam_values(self) -> dict[str, float | None]:
        """The physical inputs by the engine's names (hazards.assessment.check_beam_values takes them)."""
        return {name: getattr(self, field) for name, field in EMISSION_BEAM_FIELDS.items()}

    def clean(self) -> None:
        """Every beam rule of the hazards engine (hazards.assessment.inputs is their one home), keyed by field."""
        super().clean()
        try:
            check_beam_values(self.beam_values(), mode=self.beam_mode)
        except InputError as error:
            raise ValidationError({EMISSION_BEAM_FIELDS.get(error.field, error.field): error.message}) from None
