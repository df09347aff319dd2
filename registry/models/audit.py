"""Audits of a room, a set of lasers or the whole site, their checklist and findings."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord, free_text
from registry.models.laser import Laser
from registry.models.location import Location
from registry.models.people import Person


class AuditScope(models.TextChoices):
    LOCATION = "location", _("one location")
    LASERS = "lasers", _("selected lasers")
    SITE = "site", _("whole site")


class AuditStatus(models.TextChoices):
    PLANNED = "planned", _("planned")
    IN_PROGRESS = "in_progress", _("in progress")
    SIGNED_OFF = "signed_off", _("signed off")


class Audit(ComplianceRecord):
    reference = models.CharField(_("reference"), max_length=40, unique=True)
    scope = models.CharField(_("scope"), max_length=20, choices=AuditScope.choices)
    location = models.ForeignKey(Location, on_delete=models.PROTECT, null=True, blank=True,
                                 related_name="audits", verbose_name=_("location"))
    lasers = models.ManyToManyField(Laser, blank=True, related_name="audits", verbose_name=_("lasers"))
    site = models.CharField(_("site"), max_length=120, blank=True)
    planned_on = models.DateField(_("planned on"))
    period_start = models.DateField(_("period from"), null=True, blank=True,
                                    help_text=_("First day of the period the audit looks back over."))
    period_end = models.DateField(_("period to"), null=True, blank=True,
                                  help_text=_("Last day of the period the audit looks back over."))
    conducted_on = models.DateField(_("conducted on"), null=True, blank=True)
    auditor = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="audits", verbose_name=_("auditor"))
    status = models.CharField(_("status"), max_length=20, choices=AuditStatus.choices, default=AuditStatus.PLANNED)
    summary = free_text(_("summary"), blank=True)
    signed_off_by = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True,
                                      related_name="signed_off_audits", verbose_name=_("signed off by"))
    signed_off_at = models.DateTimeField(_("signed off at"), null=True, blank=True)

    history = HistoricalRecords(m2m_fields=[lasers])

    class Meta:
        ordering = ["-planned_on", "reference"]
        verbose_name = _("audit")
        verbose_name_plural = _("audits")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(scope__in=[choice.value for choice in AuditScope]),
                name="registry_audit_scope_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in AuditStatus]),
                name="registry_audit_status_valid",
            ),
            models.CheckConstraint(
                condition=~models.Q(scope=AuditScope.LOCATION) | models.Q(location__isnull=False),
                name="registry_audit_location_scope_names_location",
                violation_error_message=_("An audit of one location must name the location."),
            ),
            models.CheckConstraint(
                condition=~models.Q(status=AuditStatus.SIGNED_OFF)
                | (models.Q(signed_off_by__isnull=False) & models.Q(signed_off_at__isnull=False)
                   & models.Q(conducted_on__isnull=False)),
                name="registry_audit_signed_off_has_signatory",
                violation_error_message=_("A signed-off audit needs the date it was conducted, who signed it off and when."),
            ),
            models.CheckConstraint(
                condition=models.Q(period_start__isnull=True) | models.Q(period_end__isnull=True)
                | models.Q(period_end__gte=models.F("period_start")),
                name="registry_audit_period_in_order",
                violation_error_message=_("The audit period cannot end before it starts."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.reference} ({self.get_scope_display()}, {self.planned_on:%Y-%m-%d})"


class ChecklistAnswer(models.TextChoices):
    UNANSWERED = "", _("not answered yet")
    PASS = "pass", _("pass")
    FAIL = "fail", _("fail")
    NOT_APPLICABLE = "n/a", _("not applicable")


class AuditChecklistItem(ComplianceRecord):
    """One question an auditor answers; a failed item raises a finding (registry.services.audits).

    Items drawn from the control measures a class calls for (registry.services.checklist) name
    the control and the laser or room they are about; the plan's own questions name neither.
    """

    audit = models.ForeignKey(Audit, on_delete=models.PROTECT, related_name="checklist",
                              verbose_name=_("audit"))
    position = models.PositiveIntegerField(_("position"))
    question = models.CharField(_("question"), max_length=300)
    control = models.CharField(_("control measure"), max_length=40, blank=True,
                               help_text=_("The control measure the item checks; empty for the plan's own questions."))
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, null=True, blank=True,
                              related_name="checklist_items", verbose_name=_("laser"))
    location = models.ForeignKey(Location, on_delete=models.PROTECT, null=True, blank=True,
                                 related_name="checklist_items", verbose_name=_("location"))
    answer = models.CharField(_("answer"), max_length=4, choices=ChecklistAnswer.choices, blank=True)
    comment = free_text(_("comment"), blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["audit", "position"]
        verbose_name = _("audit checklist item")
        verbose_name_plural = _("audit checklist items")
        constraints = [
            models.UniqueConstraint(fields=["audit", "position"], name="registry_auditchecklistitem_unique_position"),
            models.CheckConstraint(
                condition=models.Q(answer__in=[choice.value for choice in ChecklistAnswer]),
                name="registry_auditchecklistitem_answer_valid",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.audit.reference} #{self.position}: {self.question}"


class FindingSeverity(models.TextChoices):
    OBSERVATION = "observation", _("observation")
    MINOR = "minor", _("minor")
    MAJOR = "major", _("major")
    CRITICAL = "critical", _("critical: stop work")


class FindingStatus(models.TextChoices):
    OPEN = "open", _("open")
    CLOSED = "closed", _("closed")


class Finding(ComplianceRecord):
    audit = models.ForeignKey(Audit, on_delete=models.PROTECT, related_name="findings", verbose_name=_("audit"))
    checklist_item = models.ForeignKey(AuditChecklistItem, on_delete=models.PROTECT, null=True, blank=True,
                                       related_name="findings", verbose_name=_("failed checklist item"))
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, null=True, blank=True, related_name="findings",
                              verbose_name=_("laser"))
    location = models.ForeignKey(Location, on_delete=models.PROTECT, null=True, blank=True,
                                 related_name="findings", verbose_name=_("location"))
    severity = models.CharField(_("severity"), max_length=20, choices=FindingSeverity.choices)
    description = free_text(_("what was found"))
    corrective_action = free_text(_("corrective action"), blank=True)
    owner = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="findings",
                              verbose_name=_("action owner"))
    due_on = models.DateField(_("due on"), null=True, blank=True)
    status = models.CharField(_("status"), max_length=20, choices=FindingStatus.choices, default=FindingStatus.OPEN)
    closed_on = models.DateField(_("closed on"), null=True, blank=True)
    closed_by = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True,
                                  related_name="closed_findings", verbose_name=_("closed by"))
    closure_evidence = free_text(_("evidence of closure"), blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["audit", "status", "due_on"]
        verbose_name = _("finding")
        verbose_name_plural = _("findings")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(severity__in=[choice.value for choice in FindingSeverity]),
                name="registry_finding_severity_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in FindingStatus]),
                name="registry_finding_status_valid",
            ),
            models.CheckConstraint(
                condition=~models.Q(status=FindingStatus.CLOSED)
                | (models.Q(closed_on__isnull=False) & models.Q(closed_by__isnull=False)
                   & ~models.Q(closure_evidence="")),
                name="registry_finding_closed_has_evidence",
                violation_error_message=_("A closed finding needs the closing date, who closed it and the evidence of closure."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.audit.reference}: {self.get_severity_display()} - {self.description[:60]}"
