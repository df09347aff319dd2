"""Laser safety training each person has completed."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord
from registry.models.laser import Laser
from registry.models.people import Person


class CourseKind(models.TextChoices):
    GENERAL = "general", _("general laser safety")
    EQUIPMENT = "equipment", _("equipment-specific")
    REFRESHER = "refresher", _("refresher")


# Courses that count as current general laser safety training.
GENERAL_COURSES = (CourseKind.GENERAL, CourseKind.REFRESHER)


class TrainingRecord(ComplianceRecord):
    person = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="training_records",
                               verbose_name=_("person"))
    course = models.CharField(_("course"), max_length=20, choices=CourseKind.choices)
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, null=True, blank=True,
                              related_name="training_records", verbose_name=_("laser"),
                              help_text=_("Only for equipment-specific training."))
    title = models.CharField(_("title"), max_length=200, blank=True)
    completed_on = models.DateField(_("completed on"))
    valid_until = models.DateField(_("valid until"), null=True, blank=True,
                                   help_text=_("Empty when the training does not expire."))
    evidence = models.CharField(_("evidence"), max_length=300, blank=True,
                                help_text=_("Certificate number, attendance list or document reference."))
    verified_by = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True,
                                    related_name="verified_training_records", verbose_name=_("verified by"))

    history = HistoricalRecords()

    class Meta:
        ordering = ["person", "-completed_on"]
        verbose_name = _("training record")
        verbose_name_plural = _("training records")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(course__in=[choice.value for choice in CourseKind]),
                name="registry_trainingrecord_course_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(valid_until__isnull=True) | models.Q(valid_until__gte=models.F("completed_on")),
                name="registry_trainingrecord_valid_after_completion",
                violation_error_message=_("'Valid until' cannot be before 'completed on'."),
            ),
            models.CheckConstraint(
                condition=~models.Q(course=CourseKind.EQUIPMENT) | models.Q(laser__isnull=False),
                name="registry_trainingrecord_equipment_names_laser",
                violation_error_message=_("Equipment-specific training must name its laser."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.person}: {self.get_course_display()} ({self.completed_on:%Y-%m-%d})"
