"""Laser protective eyewear kept in a room, with its marking per wavelength band."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord, TimestampedModel
from registry.models.laser import MAX_WAVELENGTH_M, MIN_WAVELENGTH_M
from registry.models.location import Location


class EyewearCondition(models.TextChoices):
    GOOD = "good", _("good")
    WORN = "worn", _("worn, still usable")
    DAMAGED = "damaged", _("damaged, do not use")


class Eyewear(ComplianceRecord):
    inventory_tag = models.CharField(_("inventory tag"), max_length=40, unique=True)
    manufacturer = models.CharField(_("manufacturer"), max_length=200, blank=True)
    model_name = models.CharField(_("model"), max_length=200, blank=True)
    description = models.CharField(_("description"), max_length=200, blank=True,
                                   help_text=_("e.g. 'green-tinted goggles over prescription glasses'."))
    location = models.ForeignKey(Location, on_delete=models.PROTECT, related_name="eyewear",
                                 verbose_name=_("kept in"))
    quantity = models.PositiveIntegerField(_("quantity"), default=1)
    condition = models.CharField(_("condition"), max_length=20, choices=EyewearCondition.choices,
                                 default=EyewearCondition.GOOD)
    last_inspected_on = models.DateField(_("last inspected on"), null=True, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["inventory_tag"]
        verbose_name = _("eyewear")
        verbose_name_plural = _("eyewear")
        constraints = [
            models.CheckConstraint(condition=models.Q(quantity__gte=1), name="registry_eyewear_quantity_positive",
                violation_error_message=_("Quantity must be at least 1.")),
            models.CheckConstraint(
                condition=models.Q(condition__in=[choice.value for choice in EyewearCondition]),
                name="registry_eyewear_condition_valid",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.inventory_tag} {self.description}".strip()


class EyewearMarking(TimestampedModel):
    """The protection an item is marked with over one wavelength band.

    Either an optical density, an EN 207 marking (test conditions and LB scale number),
    or both, as printed on the frame or filter.
    """

    eyewear = models.ForeignKey(Eyewear, on_delete=models.CASCADE, related_name="markings",
                                verbose_name=_("eyewear"))
    wavelength_min_m = models.FloatField(_("from wavelength (m)"))
    wavelength_max_m = models.FloatField(_("to wavelength (m)"))
    optical_density = models.FloatField(_("optical density"), null=True, blank=True)
    en207_conditions = models.CharField(
        _("EN 207 test conditions"), max_length=4, blank=True,
        help_text=_("Letters as marked: D (continuous), I (pulsed), R (Q-switched), M (mode-locked)."),
    )
    en207_scale = models.PositiveSmallIntegerField(_("EN 207 scale number (LB)"), null=True, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["eyewear", "wavelength_min_m"]
        verbose_name = _("eyewear marking")
        verbose_name_plural = _("eyewear markings")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(wavelength_min_m__gte=MIN_WAVELENGTH_M)
                & models.Q(wavelength_max_m__lte=MAX_WAVELENGTH_M)
                & models.Q(wavelength_max_m__gte=models.F("wavelength_min_m")),
                name="registry_eyewearmarking_band_in_range",
                violation_error_message=_("The band must run from 180 nm to 1 mm with 'to wavelength' not below 'from wavelength'."),
            ),
            models.CheckConstraint(
                condition=models.Q(optical_density__isnull=False) | models.Q(en207_scale__isnull=False),
                name="registry_eyewearmarking_has_od_or_lb",
                violation_error_message=_("A marking needs an optical density, an EN 207 scale number, or both."),
            ),
            models.CheckConstraint(
                condition=models.Q(optical_density__isnull=True) | models.Q(optical_density__gt=0),
                name="registry_eyewearmarking_od_positive",
                violation_error_message=_("Optical density must be greater than 0."),
            ),
            models.CheckConstraint(
                condition=models.Q(en207_scale__isnull=True) | models.Q(en207_scale__gte=1, en207_scale__lte=10),
                name="registry_eyewearmarking_lb_scale_in_range",
                violation_error_message=_("The EN 207 scale number runs from LB1 to LB10."),
            ),
            models.CheckConstraint(
                condition=models.Q(en207_scale__isnull=True) | ~models.Q(en207_conditions=""),
                name="registry_eyewearmarking_lb_has_conditions",
                violation_error_message=_("An EN 207 scale number needs its test conditions (D, I, R or M)."),
            ),
        ]

    def __str__(self) -> str:
        band = f"{self.wavelength_min_m * 1e9:.6g}-{self.wavelength_max_m * 1e9:.6g} nm"
        parts = [band]
        if self.optical_density is not None:
            parts.append(f"OD {self.optical_density:g}")
        if self.en207_scale is not None:
            parts.append(f"{self.en207_conditions} LB{self.en207_scale}")
        return " ".join(parts)
