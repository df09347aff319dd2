"""Stored results of the hazards engine, one per emission and limit set."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import TimestampedModel
from registry.models.laser import Emission


class HazardResult(TimestampedModel):
    """The engine's figures for one emission under one limit set, kept beside the emission
    so the register can be filtered and sorted by NOHD or OD.

    A result is derived data: it is recomputed (and its history kept) whenever the
    emission or the engine changes, so it follows its emission (CASCADE). ``nohd_m`` is
    null with ``nohd_unbounded`` set when a collimated beam stays above the MPE at any
    distance; a null without the flag means the figure was not computed.
    """

    emission = models.ForeignKey(Emission, on_delete=models.CASCADE, related_name="hazard_results",
                                 verbose_name=_("emission"))
    limits = models.CharField(_("limit set"), max_length=40, help_text=_("e.g. 'icnirp2013', 'eu2006'."))
    exposure_s = models.FloatField(_("eye exposure duration (s)"),
                                   help_text=_("The exposure duration the eye MPE assumes."))
    eye_mpe_J_m2 = models.FloatField(_("eye MPE, radiant exposure (J/m\u00b2)"))
    eye_mpe_W_m2 = models.FloatField(_("eye MPE, irradiance (W/m\u00b2)"))
    eye_mpe_per_pulse_J_m2 = models.FloatField(
        _("eye MPE per pulse (J/m\u00b2)"), null=True, blank=True,
        help_text=_("For pulsed emissions: the limit one pulse is compared with (the governing pulse rule). "
                    "Empty for continuous wave."))
    pulse_rule = models.CharField(
        _("governing pulse rule"), max_length=40, blank=True,
        help_text=_("Which rule gives the eye limit: e.g. 'continuous wave', 'single_pulse', 'average_power', "
                    "'reduced_single_pulse'."))
    skin_exposure_s = models.FloatField(_("skin exposure duration (s)"), null=True, blank=True)
    skin_mpe_J_m2 = models.FloatField(_("skin MPE, radiant exposure (J/m\u00b2)"), null=True, blank=True)
    skin_mpe_W_m2 = models.FloatField(_("skin MPE, irradiance (W/m\u00b2)"), null=True, blank=True)
    nohd_m = models.FloatField(_("NOHD (m)"), null=True, blank=True)
    nohd_unbounded = models.BooleanField(_("NOHD unbounded"), default=False)
    diffuse_hazard_distance_m = models.FloatField(_("diffuse-reflection hazard distance (m)"), null=True, blank=True)
    skin_hazard_distance_m = models.FloatField(_("skin hazard distance (m)"), null=True, blank=True)
    od_required = models.FloatField(_("required optical density"), null=True, blank=True)
    od_exact = models.FloatField(
        _("optical density, exact"), null=True, blank=True,
        help_text=_("log10(exposure at the limiting aperture / MPE) before rounding up; may be negative."))
    en207_marking = models.CharField(_("EN 207 marking"), max_length=100, blank=True,
                                     help_text=_("e.g. 'D LB5'; empty when no rating applies."))
    en207_requirements = models.JSONField(
        _("EN 207 requirements"), default=list, blank=True,
        help_text=_("Each required rating (test condition, wavelength, scale number), as the engine gives them; "
                    "eyewear in a room is checked against these."))
    working = models.JSONField(_("working"), default=list, blank=True)
    warnings = models.JSONField(_("warnings"), default=list, blank=True)
    engine_version = models.CharField(_("engine version"), max_length=40)
    computed_at = models.DateTimeField(_("computed at"))

    history = HistoricalRecords()

    class Meta:
        ordering = ["emission", "limits"]
        verbose_name = _("hazard result")
        verbose_name_plural = _("hazard results")
        constraints = [
            models.UniqueConstraint(fields=["emission", "limits"], name="registry_hazardresult_one_per_limit_set"),
            models.CheckConstraint(condition=models.Q(exposure_s__gt=0), name="registry_hazardresult_exposure_positive",
                violation_error_message=_("The exposure duration must be greater than 0 s.")),
            models.CheckConstraint(condition=models.Q(eye_mpe_J_m2__gt=0, eye_mpe_W_m2__gt=0),
                                   name="registry_hazardresult_eye_mpe_positive",
                violation_error_message=_("The eye MPE must be greater than 0.")),
            models.CheckConstraint(
                condition=models.Q(eye_mpe_per_pulse_J_m2__isnull=True) | models.Q(eye_mpe_per_pulse_J_m2__gt=0),
                name="registry_hazardresult_per_pulse_mpe_positive",
                violation_error_message=_("The per-pulse eye MPE must be greater than 0."),
            ),
            models.CheckConstraint(
                condition=models.Q(nohd_m__isnull=True) | models.Q(nohd_m__gte=0),
                name="registry_hazardresult_nohd_not_negative",
                violation_error_message=_("The NOHD cannot be negative."),
            ),
            models.CheckConstraint(
                condition=~models.Q(nohd_unbounded=True) | models.Q(nohd_m__isnull=True),
                name="registry_hazardresult_unbounded_has_no_nohd",
                violation_error_message=_("An unbounded NOHD has no value in metres."),
            ),
            models.CheckConstraint(
                condition=models.Q(od_required__isnull=True) | models.Q(od_required__gte=0),
                name="registry_hazardresult_od_not_negative",
                violation_error_message=_("The required optical density cannot be negative."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.emission} [{self.limits}]"
