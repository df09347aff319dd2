"""Behaviour shared by the register's models: timestamps and the never-delete rule."""
from __future__ import annotations

from typing import Any, NoReturn

from django.core.validators import MaxLengthValidator
from django.db import models
from django.utils.functional import Promise
from django.utils.translation import gettext_lazy as _

# Free text a person writes (a description, a note, a reason): room for pages of it, with a
# bound, so that no request stores megabytes (common practice, no source).
FREE_TEXT_MAX_LENGTH = 10_000


def free_text(verbose_name: str | Promise, **kwargs: Any) -> models.TextField:  # type: ignore[type-arg]
    """A TextField held to FREE_TEXT_MAX_LENGTH characters by forms, the API and full_clean().

    Django reads a TextField's max_length only in forms (and DRF in serializers); the
    validator makes full_clean(), and so every service, refuse a longer text as well.
    """
    return models.TextField(verbose_name, max_length=FREE_TEXT_MAX_LENGTH,
                            validators=[MaxLengthValidator(FREE_TEXT_MAX_LENGTH)], **kwargs)


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
    retirement_reason = free_text(_("retirement reason"), blank=True)

    class Meta:
        abstract = True

    @property
    def is_retired(self) -> bool:
        return self.retired_at is not None
