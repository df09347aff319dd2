"""Reminder e-mail the register has sent, so that the same one never goes out twice in a day."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _

from registry.models.people import Person


class ReminderKind(models.TextChoices):
    TRAINING = "training", _("own training to renew")
    SUPERVISEES = "supervisees", _("training to renew of people supervised")
    DIGEST = "digest", _("laser safety officer's digest")


class SentReminder(models.Model):
    """One reminder as sent: to whom, of which kind, for which day, and what it said.

    Written in the transaction that sends the mail and never changed afterwards, so the
    table is its own log and keeps no separate history. One per person, kind and day
    (``sent_on`` is the day the run was for, ``--today`` included).
    """

    kind = models.CharField(_("kind"), max_length=20, choices=ReminderKind.choices)
    recipient = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="reminders_received",
                                  verbose_name=_("recipient"))
    sent_on = models.DateField(_("for the day"))
    sent_at = models.DateTimeField(_("sent at"))
    address = models.EmailField(_("sent to address"))
    subject = models.CharField(_("subject"), max_length=200)
    body = models.TextField(_("text"))

    class Meta:
        ordering = ["-sent_on", "kind", "recipient"]
        verbose_name = _("sent reminder")
        verbose_name_plural = _("sent reminders")
        constraints = [
            models.UniqueConstraint(fields=["recipient", "kind", "sent_on"], name="registry_sentreminder_once_a_day",
                                    violation_error_message=_("This reminder was already sent to this person today.")),
            models.CheckConstraint(
                condition=models.Q(kind__in=[choice.value for choice in ReminderKind]),
                name="registry_sentreminder_kind_valid",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} to {self.recipient} on {self.sent_on:%Y-%m-%d}"
