"""Standard operating procedures per laser, and who has read them."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord, free_text
from registry.models.laser import Laser
from registry.models.people import Person


class SOPStatus(models.TextChoices):
    DRAFT = "draft", _("draft")
    APPROVED = "approved", _("approved")
    SUPERSEDED = "superseded", _("superseded")


class SOP(ComplianceRecord):
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, related_name="sops", verbose_name=_("laser"))
    title = models.CharField(_("title"), max_length=200)
    version = models.PositiveIntegerField(_("version"))
    status = models.CharField(_("status"), max_length=20, choices=SOPStatus.choices, default=SOPStatus.DRAFT)
    summary = free_text(_("summary"), blank=True)
    document = models.FileField(_("document"), upload_to="sops/", blank=True)
    approved_on = models.DateField(_("approved on"), null=True, blank=True)
    approved_by = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True,
                                    related_name="approved_sops", verbose_name=_("approved by"))
    review_due = models.DateField(_("review due"), null=True, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["laser", "-version"]
        verbose_name = _("SOP")
        verbose_name_plural = _("SOPs")
        constraints = [
            models.UniqueConstraint(fields=["laser", "version"], name="registry_sop_unique_version"),
            models.CheckConstraint(condition=models.Q(version__gte=1), name="registry_sop_version_positive",
                violation_error_message=_("SOP versions start at 1.")),
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in SOPStatus]),
                name="registry_sop_status_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(status=SOPStatus.DRAFT)
                | (models.Q(approved_on__isnull=False) & models.Q(approved_by__isnull=False)),
                name="registry_sop_approved_has_approver",
                violation_error_message=_("An approved or superseded SOP needs its approval date and approver."),
            ),
            # Only one version of a laser's SOP is in force at a time.
            models.UniqueConstraint(fields=["laser"], condition=models.Q(status=SOPStatus.APPROVED),
                                    name="registry_sop_one_approved_per_laser"),
        ]

    def __str__(self) -> str:
        return f"{self.title} v{self.version}"


class SOPAcknowledgement(ComplianceRecord):
    """A person's statement that they have read and will follow one version of an SOP."""

    sop = models.ForeignKey(SOP, on_delete=models.PROTECT, related_name="acknowledgements", verbose_name=_("SOP"))
    person = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="sop_acknowledgements",
                               verbose_name=_("person"))
    acknowledged_at = models.DateTimeField(_("acknowledged at"))

    history = HistoricalRecords()

    class Meta:
        ordering = ["sop", "person"]
        verbose_name = _("SOP acknowledgement")
        verbose_name_plural = _("SOP acknowledgements")
        constraints = [
            models.UniqueConstraint(fields=["sop", "person"], name="registry_sopacknowledgement_once_per_person"),
        ]

    def __str__(self) -> str:
        return f"{self.person} read {self.sop}"
