"""Permission for one person to operate one laser."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord, free_text
from registry.models.laser import Laser
from registry.models.people import Person


class AuthorizationStatus(models.TextChoices):
    REQUESTED = "requested", _("requested")
    APPROVED = "approved", _("approved")
    REFUSED = "refused", _("refused")
    WITHDRAWN = "withdrawn", _("withdrawn by the requester")
    REVOKED = "revoked", _("revoked")


# An open authorization blocks a second request for the same person and laser.
OPEN_AUTHORIZATION_STATUSES = (AuthorizationStatus.REQUESTED, AuthorizationStatus.APPROVED)


class Authorization(ComplianceRecord):
    person = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="authorizations",
                               verbose_name=_("person"))
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, related_name="authorizations",
                              verbose_name=_("laser"))
    status = models.CharField(_("status"), max_length=20, choices=AuthorizationStatus.choices,
                              default=AuthorizationStatus.REQUESTED)
    requested_by = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="requested_authorizations",
                                     verbose_name=_("requested by"))
    requested_at = models.DateTimeField(_("requested at"))
    decided_by = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True,
                                   related_name="decided_authorizations", verbose_name=_("decided by"))
    decided_at = models.DateTimeField(_("decided at"), null=True, blank=True)
    decision_reason = free_text(_("reason for the decision"), blank=True)
    conditions = free_text(_("conditions"), blank=True,
                                  help_text=_("e.g. 'only with a second trained person present'."))
    valid_until = models.DateField(_("valid until"), null=True, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["laser", "person", "-requested_at"]
        verbose_name = _("authorization")
        verbose_name_plural = _("authorizations")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in AuthorizationStatus]),
                name="registry_authorization_status_valid",
            ),
            models.UniqueConstraint(
                fields=["person", "laser"], condition=models.Q(status__in=OPEN_AUTHORIZATION_STATUSES),
                name="registry_authorization_one_open_per_person_laser",
            ),
            models.CheckConstraint(
                condition=~models.Q(status__in=[AuthorizationStatus.APPROVED, AuthorizationStatus.REFUSED])
                | (models.Q(decided_by__isnull=False) & models.Q(decided_at__isnull=False)),
                name="registry_authorization_decision_has_decider",
                violation_error_message=_("An approved or refused authorization needs who decided and when."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.person} on {self.laser.asset_tag} ({self.get_status_display()})"
