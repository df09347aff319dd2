"""Who is who: research groups and the person (role, group, supervisor) behind each account."""
from __future__ import annotations

from django.conf import settings
from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import TimestampedModel


class ResearchGroup(TimestampedModel):
    """A laboratory group; researchers see and act for the people of their own group only."""

    slug = models.SlugField(_("short name"), unique=True, help_text=_("Stable identifier, e.g. 'ultrafast-optics'."))
    name = models.CharField(_("name"), max_length=200)
    department = models.CharField(_("department"), max_length=200, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["name"]
        verbose_name = _("research group")
        verbose_name_plural = _("research groups")

    def __str__(self) -> str:
        return self.name


class Role(models.TextChoices):
    LSO = "lso", _("laser safety officer")
    RESEARCHER = "researcher", _("researcher")
    USER = "user", _("laser user")
    INSPECTOR = "inspector", _("inspector")


class Person(TimestampedModel):
    """The register's view of an account: its role, group and supervisor.

    The role lives here (one per person) rather than in Django groups so that a
    permission check is one attribute read; services keep the matching Django group
    (which carries the admin permissions) in step, see registry.services.people.
    """

    Role = Role

    user = models.OneToOneField(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="person", verbose_name=_("account")
    )
    role = models.CharField(_("role"), max_length=20, choices=Role.choices, default=Role.USER)
    research_group = models.ForeignKey(
        ResearchGroup, on_delete=models.PROTECT, null=True, blank=True, related_name="members",
        verbose_name=_("research group"),
    )
    supervisor = models.ForeignKey(
        "self", on_delete=models.PROTECT, null=True, blank=True, related_name="supervisees",
        verbose_name=_("supervisor"),
    )
    phone = models.CharField(_("phone"), max_length=40, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["user__last_name", "user__first_name", "user__username"]
        verbose_name = _("person")
        verbose_name_plural = _("people")
        constraints = [
            models.CheckConstraint(
                condition=models.Q(role__in=[choice.value for choice in Role]),
                name="registry_person_role_valid",
            ),
            models.CheckConstraint(
                condition=~models.Q(supervisor=models.F("id")),
                name="registry_person_not_own_supervisor",
                violation_error_message=_("A person cannot be their own supervisor."),
            ),
        ]

    def __str__(self) -> str:
        return self.user.get_full_name() or self.user.get_username()

    @property
    def is_lso(self) -> bool:
        return self.role == Role.LSO
