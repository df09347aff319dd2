"""Exposures and near misses, with the follow-up they led to."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord, free_text
from registry.models.laser import Laser
from registry.models.location import Location
from registry.models.people import Person


class IncidentKind(models.TextChoices):
    EXPOSURE = "exposure", _("exposure")
    NEAR_MISS = "near_miss", _("near miss")


class IncidentStatus(models.TextChoices):
    REPORTED = "reported", _("reported")
    INVESTIGATING = "investigating", _("under investigation")
    CLOSED = "closed", _("closed")


class Incident(ComplianceRecord):
    reference = models.CharField(_("reference"), max_length=40, unique=True)
    kind = models.CharField(_("kind"), max_length=20, choices=IncidentKind.choices)
    occurred_at = models.DateTimeField(_("occurred at"))
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, null=True, blank=True, related_name="incidents",
                              verbose_name=_("laser"))
    location = models.ForeignKey(Location, on_delete=models.PROTECT, null=True, blank=True,
                                 related_name="incidents", verbose_name=_("location"))
    reported_by = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="reported_incidents",
                                    verbose_name=_("reported by"))
    people_involved = models.ManyToManyField(Person, blank=True, related_name="incidents",
                                             verbose_name=_("people involved"))
    description = free_text(_("what happened"))
    follow_up = free_text(_("follow-up"), blank=True)
    status = models.CharField(_("status"), max_length=20, choices=IncidentStatus.choices,
                              default=IncidentStatus.REPORTED)
    closed_at = models.DateTimeField(_("closed at"), null=True, blank=True)

    history = HistoricalRecords(m2m_fields=[people_involved])

    class Meta:
        ordering = ["-occurred_at"]
        verbose_name = _("incident")
        verbose_name_plural = _("incidents")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(kind__in=[choice.value for choice in IncidentKind]),
                name="registry_incident_kind_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in IncidentStatus]),
                name="registry_incident_status_valid",
            ),
            models.CheckConstraint(
                condition=~models.Q(status=IncidentStatus.CLOSED)
                | (models.Q(closed_at__isnull=False) & ~models.Q(follow_up="")),
                name="registry_incident_closed_has_follow_up",
                violation_error_message=_("A closed incident needs its follow-up and the time it was closed."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.reference} {self.get_kind_display()} ({self.occurred_at:%Y-%m-%d})"
