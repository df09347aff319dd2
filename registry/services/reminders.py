"""Daily reminders: training to renew, to each person and to their supervisor, and the LSO's digest.

``reminders_send`` is what ``manage.py send_reminders`` runs once a day. Each message is recorded
as a SentReminder in the transaction that sends it, and the record is unique per person, kind
and day: a second run on the same day sends nothing again, and a message the mail server
refuses leaves no record, so that the next run tries it again.
"""
from __future__ import annotations

import datetime
import smtplib
from collections import Counter, defaultdict
from dataclasses import dataclass, field

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.mail import EmailMessage, get_connection
from django.core.mail.backends.base import BaseEmailBackend
from django.db import IntegrityError, transaction
from django.template.loader import render_to_string
from django.utils import timezone

from registry.models import SOP, Authorization, Finding, Person, ReminderKind, Role, SentReminder, TrainingRecord
from registry.selectors import (
    AuditDue,
    InspectionDue,
    audits_due,
    authorizations_lapsing,
    eyewear_inspections_due,
    findings_overdue,
    people_with_role,
    sop_reviews_due,
    training_expiring,
)
from registry.services._common import validated_save
from registry.services._logging import service_action

# Training is reminded this many days before it expires (and every day after, until renewed);
# the digest looks as far ahead for every other date.
REMINDER_WINDOW_DAYS = 30


@dataclass(frozen=True)
class Reminder:
    kind: ReminderKind
    recipient: Person
    subject: str
    body: str


@dataclass(frozen=True)
class Digest:
    """What the LSO's digest lists; ``unreachable`` are people due a reminder who have no e-mail address."""

    today: datetime.date
    training: list[TrainingRecord]
    authorizations: list[Authorization]
    audits: list[AuditDue]
    findings: list[Finding]
    sops: list[SOP]
    eyewear: list[InspectionDue]
    unreachable: list[Person]

    @property
    def is_empty(self) -> bool:
        return not (self.training or self.authorizations or self.audits or self.findings or self.sops
                    or self.eyewear)


@dataclass
class ReminderRun:
    day: datetime.date
    sent: Counter[str] = field(default_factory=Counter)
    already_sent: int = 0
    unreachable: list[Person] = field(default_factory=list)
    failed: list[tuple[Person, str]] = field(default_factory=list)


def reminders_due(*, today: datetime.date) -> tuple[list[Reminder], list[Person]]:
    """The reminders for ``today``, written out, and the people due one who have no e-mail address.

    Only active accounts are reminded, and only their training is listed: someone who has left
    keeps their records but gets no mail. The digest goes to every LSO when it lists anything.
    """
    lapsing = [record for record in training_expiring(within_days=REMINDER_WINDOW_DAYS, on=today, include_expired=True)
               .select_related("person__supervisor__user").order_by("valid_until", "pk")
               if record.person.user.is_active]
    own: defaultdict[Person, list[TrainingRecord]] = defaultdict(list)
    supervised: defaultdict[Person, list[TrainingRecord]] = defaultdict(list)
    for record in lapsing:
        own[record.person].append(record)
        supervisor = record.person.supervisor
        if supervisor is not None and supervisor.user.is_active:
            supervised[supervisor].append(record)
    context = {"today": today, "window": REMINDER_WINDOW_DAYS}
    reminders = [Reminder(ReminderKind.TRAINING, person, "Laser safety training to renew",
                          render_to_string("emails/training_reminder.txt", {**context, "person": person,
                                                                              "records": records}))
                 for person, records in own.items()]
    reminders += [Reminder(ReminderKind.SUPERVISEES, supervisor, "Laser safety training to renew: people you supervise",
                           render_to_string("emails/supervisees_reminder.txt", {**context, "supervisor": supervisor,
                                                                                 "records": records}))
                  for supervisor, records in supervised.items()]
    unreachable = sorted({reminder.recipient for reminder in reminders if not reminder.recipient.user.email}, key=str)
    digest = Digest(
        today=today, training=lapsing,
        authorizations=list(authorizations_lapsing(within_days=REMINDER_WINDOW_DAYS, on=today)),
        audits=audits_due(today=today, within_days=REMINDER_WINDOW_DAYS),
        findings=list(findings_overdue(on=today)),
        sops=list(sop_reviews_due(within_days=REMINDER_WINDOW_DAYS, on=today)),
        eyewear=eyewear_inspections_due(today=today, within_days=REMINDER_WINDOW_DAYS),
        unreachable=unreachable,
    )
    if not digest.is_empty:
        body = render_to_string("emails/lso_digest.txt", {
            "digest": digest, "window": REMINDER_WINDOW_DAYS,
            "inspection_months": settings.EYEWEAR_INSPECTION_MONTHS})
        reminders += [Reminder(ReminderKind.DIGEST, lso, f"Laser register digest for {today:%Y-%m-%d}", body)
                      for lso in people_with_role(role=Role.LSO)]
    return reminders, unreachable


@service_action
def reminders_send(*, today: datetime.date | None = None) -> ReminderRun:
    """Send the reminders for ``today`` (the local date by default) that have not been sent yet."""
    day = today or timezone.localdate()
    reminders, _ = reminders_due(today=day)
    run = ReminderRun(day=day)
    with get_connection() as connection:
        for reminder in reminders:
            if not reminder.recipient.user.email:
                run.unreachable.append(reminder.recipient)
                continue
            _send_once(reminder, day=day, connection=connection, run=run)
    return run


def _send_once(reminder: Reminder, *, day: datetime.date, connection: BaseEmailBackend, run: ReminderRun) -> None:
    if _recorded(reminder, day=day):
        run.already_sent += 1
        return
    address = reminder.recipient.user.email
    record = SentReminder(kind=reminder.kind, recipient=reminder.recipient, sent_on=day, sent_at=timezone.now(),
                          address=address, subject=reminder.subject, body=reminder.body)
    message = EmailMessage(subject=reminder.subject, body=reminder.body, to=[address], connection=connection)
    try:
        # Recorded and sent together: if the mail server refuses, no record says it was sent.
        with transaction.atomic():
            validated_save(record, by=None)
            message.send()
    except (IntegrityError, ValidationError) as error:
        if _recorded(reminder, day=day):
            # A run started at the same moment recorded it first, so it went out once.
            run.already_sent += 1
        else:
            reason = "; ".join(error.messages) if isinstance(error, ValidationError) else str(error)
            run.failed.append((reminder.recipient, reason))
    except (smtplib.SMTPException, OSError) as error:
        run.failed.append((reminder.recipient, f"{type(error).__name__}: {error}"))
    else:
        run.sent[reminder.kind] += 1


def _recorded(reminder: Reminder, *, day: datetime.date) -> bool:
    return SentReminder.objects.filter(recipient=reminder.recipient, kind=reminder.kind, sent_on=day).exists()
