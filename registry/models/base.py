"""Behaviour shared by the register's models: timestamps and the never-delete rule."""
from __future__ import annotations

from typing import Any, NoReturn

from django.db import models
from django.utils.translation import gettext_lazy as _


class RecordRetainedError(Exception):
    """A delete was attempted on a record the register must keep.

    Lasers and compliance records (training, authorizations, SOPs, audits, findings,
    incidents, eyewear) are retired through a service, never deleted, so that the
    history an inspector asks for still exists.
    """


class RetainedQuerySet(models.QuerySet):  # type: ignore[type-arg]
    def delete(self) -> NoReturn:
        raise RecordRetainedError(
            f"{self.model._meta.verbose_name_plural} are never deleted; retire them through a service."
        )


class TimestampedModel(models.Model):
    created_at = models.DateTimeField(_("created at"), auto_now_add=True)
    updated_at = models.DateTimeField(_("updated at"), auto_now=True)

    class Meta:
        abstract = True


class RetainedModel(TimestampedModel):
    """A record that refuses deletion, from an instance and from a queryset."""

    objects = RetainedQuerySet.as_manager()

    class Meta:
        abstract = True

    def delete(self, *args: Any, **kwargs: Any) -> NoReturn:
        raise RecordRetainedError(
            f"{self._meta.verbose_name} {self} is never deleted; retire it through a service."
        )


class ComplianceRecord(RetainedModel):
    """A retained record whose retirement is a date and a reason, not a status."""

    retired_at = models.DateTimeField(_("retired at"), null=True, blank=True)
    retirement_reason = models.TextField(_("retirement reason"), blank=True)

    class Meta:
        abstract = True

    @property
    def is_retired(self) -> bool:
        return self.retired_at is not None
