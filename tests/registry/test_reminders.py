"""send_reminders: who is mailed, what the mail says, and that a reminder goes out once a day.

The clock is frozen with time-machine and mail goes to Django's test outbox.
"""
from __future__ import annotations

import datetime
import smtplib
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from io import StringIO

import pytest
import time_machine
from django.core import mail
from django.core.mail.backends import locmem
from django.core.mail.message import EmailMessage
from django.core.management import CommandError, call_command
from django.db import connection
from django.test.utils import CaptureQueriesContext
from pytest_django.fixtures import Settings

from registry.models import Person, SentReminder
from registry.services.reminders import reminders_due
from tests import factories

pytestmark = pytest.mark.django_db

TODAY = datetime.date(2031, 3, 10)


def days(offset: int) -> datetime.date:
    return TODAY + datetime.timedelta(days=offset)


@pytest.fixture
def clock() -> Iterator[time_machine.Coordinates]:
    with time_machine.travel(datetime.datetime(2031, 3, 10, 6, 30, tzinfo=datetime.UTC), tick=False) as traveller:
        yield traveller


@dataclass
class World:
    lso: Person
    supervisor: Person
    expiring: Person
    expired: Person
    no_address: Person


def person(username: str, **fields: object) -> Person:
    return factories.PersonFactory.create(user__username=username, **fields)


@pytest.fixture
def world(clock: time_machine.Coordinates) -> World:
    lso = person("officer", role="lso", research_group=None)
    supervisor = person("head", role="researcher")
    expiring = person("expiring", supervisor=supervisor)
    expired = person("expired", supervisor=supervisor)
    no_address = person("no-address", supervisor=supervisor, user__email="")
    factories.TrainingRecordFactory.create(person=expiring, completed_on=days(-355), valid_until=days(10))
    factories.TrainingRecordFactory.create(
        person=expiring, course="equipment", laser=factories.LaserFactory.create(asset_tag="AMP-7"),
        title="Amplifier hands-on", completed_on=days(-340), valid_until=days(25))
    factories.TrainingRecordFactory.create(person=expired, completed_on=days(-370), valid_until=days(-5))
    factories.TrainingRecordFactory.create(person=no_address, completed_on=days(-360), valid_until=days(3))
    # Not reminded: training valid for months, training renewed by a refresher, an account that was closed.
    factories.TrainingRecordFactory.create(person=person("current", supervisor=supervisor), valid_until=days(100))
    renewed = person("renewed", supervisor=supervisor)
    factories.TrainingRecordFactory.create(person=renewed, completed_on=days(-400), valid_until=days(-40))
    factories.TrainingRecordFactory.create(person=renewed, course="refresher", title="Refresher",
                                           completed_on=days(-41), valid_until=days(320))
    departed = person("departed", supervisor=supervisor, user__is_active=False)
    factories.TrainingRecordFactory.create(person=departed, completed_on=days(-360), valid_until=days(2))
    return World(lso=lso, supervisor=supervisor, expiring=expiring, expired=expired, no_address=no_address)


def send(*args: str) -> tuple[str, str]:
    out, err = StringIO(), StringIO()
    call_command("send_reminders", *args, stdout=out, stderr=err)
    return out.getvalue(), err.getvalue()


def outbox_by_address() -> dict[str, EmailMessage]:
    assert all(len(message.to) == 1 for message in mail.outbox)
    return {message.to[0]: message for message in mail.outbox}


def test_people_with_training_due_their_supervisor_and_the_lso_are_mailed(world: World) -> None:
    out, err = send()
    messages = outbox_by_address()
    assert set(messages) == {"expiring@campus.example", "expired@campus.example", "head@campus.example",
                             "officer@campus.example"}
    own = messages["expiring@campus.example"]
    assert own.subject == "Laser safety training to renew"
    assert "  - Laser safety induction (general laser safety): valid until 2031-03-20 (in 10 days)" in own.body
    assert "  - Amplifier hands-on (equipment-specific, AMP-7): valid until 2031-04-04 (in 25 days)" in own.body
    assert "valid until 2031-03-05 (5 days ago)" in messages["expired@campus.example"].body
    supervisor = messages["head@campus.example"].body
    listed = [line.removeprefix("  - ").split(":")[0] for line in supervisor.splitlines() if line.startswith("  - ")]
    # Not the supervisees whose training is current or renewed, nor the one whose account was closed.
    assert sorted(listed) == sorted(map(str, [world.expiring, world.expiring, world.expired, world.no_address]))
    assert messages["officer@campus.example"].subject == "Laser register digest for 2031-03-10"

    sent = SentReminder.objects.order_by("kind", "recipient__user__username")
    assert [(row.kind, row.recipient.user.username, row.sent_on) for row in sent] == [
        ("digest", "officer", TODAY), ("supervisees", "head", TODAY), ("training", "expired", TODAY),
        ("training", "expiring", TODAY)]
    assert sent.get(recipient=world.expiring).body == own.body
    assert out == ("2031-03-10: training reminders 2, to supervisors 1, digests 1; sent already that day 0; "
                   "without an e-mail address 1.\n")
    assert err == f"  no e-mail address: {world.no_address} (no-address)\n"


def test_a_second_run_the_same_day_sends_nothing_and_the_next_day_sends_again(
        world: World, clock: time_machine.Coordinates) -> None:
    send()
    assert len(mail.outbox) == 4
    out, _ = send()
    assert len(mail.outbox) == 4
    assert SentReminder.objects.count() == 4
    assert "sent already that day 4" in out

    clock.shift(datetime.timedelta(days=1))
    send()
    assert len(mail.outbox) == 8
    assert SentReminder.objects.filter(sent_on=days(1)).count() == 4
    assert "valid until 2031-03-20 (in 9 days)" in outbox_by_address()["expiring@campus.example"].body


def test_the_today_option_reminds_as_of_that_day(world: World) -> None:
    send("--today", "2031-05-01")
    assert SentReminder.objects.filter(sent_on=datetime.date(2031, 5, 1)).count() == 4
    assert "valid until 2031-03-20 (42 days ago)" in outbox_by_address()["expiring@campus.example"].body


class RefusingBackend(locmem.EmailBackend):
    """A mail server that refuses one mailbox and delivers the rest to the test outbox."""

    refused = "expired@campus.example"

    def send_messages(self, email_messages: Sequence[EmailMessage]) -> int:
        for message in email_messages:
            if self.refused in message.to:
                raise smtplib.SMTPRecipientsRefused({self.refused: (550, b"mailbox unavailable")})
        return super().send_messages(email_messages)


def test_a_refused_reminder_is_not_recorded_and_the_next_run_sends_it(world: World, settings: Settings) -> None:
    settings.EMAIL_BACKEND = f"{__name__}.RefusingBackend"
    err = StringIO()
    with pytest.raises(CommandError, match="1 reminders could not be sent; the next run tries them again."):
        call_command("send_reminders", stdout=StringIO(), stderr=err)
    assert f"not sent to {world.expired} (expired): SMTPRecipientsRefused" in err.getvalue()
    assert not SentReminder.objects.filter(recipient=world.expired).exists()
    assert SentReminder.objects.count() == 3

    settings.EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
    out, _ = send()
    assert [message.to for message in mail.outbox[-1:]] == [["expired@campus.example"]]
    assert SentReminder.objects.filter(recipient=world.expired).count() == 1
    assert "training reminders 1, to supervisors 0, digests 0; sent already that day 3" in out


def test_the_digest_lists_everything_due_and_nothing_else(world: World) -> None:
    room = factories.LocationFactory.create(building="Kestrel Building", room="0.14")
    laser = factories.LaserFactory.create(asset_tag="DIG-1", labelled_class="4", location=room)
    decided = {"status": "approved", "decided_by": world.lso, "decided_at": datetime.datetime(2030, 3, 1, tzinfo=datetime.UTC)}
    factories.AuthorizationFactory.create(person=world.expiring, laser=laser, valid_until=days(15), **decided)
    factories.AuthorizationFactory.create(person=world.expired, laser=laser, valid_until=days(60), **decided)
    audit = factories.AuditFactory.create(reference="AUD-9", location=room, auditor=world.lso)
    overdue = factories.FindingFactory.create(audit=audit, description="Beam dump missing on the second table.",
                                              due_on=days(-3))
    factories.FindingFactory.create(audit=audit, description="Curtain torn.", due_on=days(5))
    factories.FindingFactory.create(audit=audit, description="Sign faded.", due_on=days(-30), status="closed",
                                    closed_on=days(-31), closed_by=world.lso, closure_evidence="New sign posted.")
    approved = {"status": "approved", "approved_on": days(-300), "approved_by": world.lso}
    factories.SOPFactory.create(laser=laser, title="Amplifier operation", version=1, review_due=days(7), **approved)
    factories.SOPFactory.create(laser=laser, title="Amplifier draft", version=2, review_due=days(-7))
    factories.EyewearFactory.create(inventory_tag="EW-OLD", location=room, last_inspected_on=days(-213))
    factories.EyewearFactory.create(inventory_tag="EW-NEW", location=room, last_inspected_on=days(-60))
    factories.EyewearFactory.create(inventory_tag="EW-NONE", location=room, last_inspected_on=None)

    send()
    digest = outbox_by_address()["officer@campus.example"].body
    assert "Training expired or expiring (4)" in digest
    assert f"  - {world.expired}: Laser safety induction (general laser safety), valid until 2031-03-05 (5 days ago)" \
        in digest
    assert f"Authorizations lapsing (1)\n  - {world.expiring} on DIG-1: valid until 2031-03-25 (in 15 days)\n" in digest
    # Two rooms hold class 3B or 4 lasers (the factories' AMP-7 and DIG-1) and neither was ever audited.
    assert "Rooms due for audit (2)" in digest
    assert "  - Kestrel Building 0.14: never audited; planned as AUD-9 on 2031-03-10" in digest
    assert ("Findings past their due date (1)\n  - AUD-9, minor: Beam dump missing on the second table. "
            f"(action owner {overdue.owner}, due 2031-03-07 (3 days ago))") in digest
    assert "SOP reviews due (1)\n  - DIG-1 Amplifier operation v1: review due 2031-03-17 (in 7 days)\n" in digest
    assert "Eyewear inspections due (2, every 6 months)" in digest
    assert "  - EW-NONE Test goggles in Kestrel Building 0.14: never inspected" in digest
    assert "  - EW-OLD Test goggles in Kestrel Building 0.14: last inspected 2030-08-09, due 2031-02-09 (29 days ago)" \
        in digest
    assert "EW-NEW" not in digest
    assert f"no e-mail address (1)\n  - {world.no_address} (no-address)" in digest


def test_no_digest_goes_out_when_nothing_is_due(clock: time_machine.Coordinates) -> None:
    person("officer", role="lso", research_group=None)
    factories.TrainingRecordFactory.create(person=person("current"), valid_until=days(100))
    out, _ = send()
    assert mail.outbox == []
    assert not SentReminder.objects.exists()
    assert out.startswith("2031-03-10: training reminders 0, to supervisors 0, digests 0;")


def test_the_eyewear_interval_is_a_setting(world: World, settings: Settings) -> None:
    room = factories.LocationFactory.create(building="Marlow Hall", room="2.10")
    factories.EyewearFactory.create(inventory_tag="EW-YEAR", location=room, last_inspected_on=days(-300))
    settings.EYEWEAR_INSPECTION_MONTHS = 12
    send()
    assert "EW-YEAR" not in outbox_by_address()["officer@campus.example"].body
    settings.EYEWEAR_INSPECTION_MONTHS = 9
    send("--today", "2031-03-11")
    assert "EW-YEAR Test goggles in Marlow Hall 2.10: last inspected 2030-05-14, due 2031-02-14" in \
        mail.outbox[-1].body


@pytest.mark.parametrize("copies", [1, 3])
def test_writing_the_days_reminders_costs_the_same_queries_however_many_are_due(
        clock: time_machine.Coordinates, copies: int) -> None:
    lso = person("officer", role="lso", research_group=None)
    for number in range(copies):
        supervisor = person(f"head{number}", role="researcher")
        trainee = person(f"trainee{number}", supervisor=supervisor)
        factories.TrainingRecordFactory.create(person=trainee, completed_on=days(-360), valid_until=days(-1))
        laser = factories.LaserFactory.create()
        factories.TrainingRecordFactory.create(person=trainee, course="equipment", laser=laser,
                                               completed_on=days(-300), valid_until=days(4))
        factories.AuthorizationFactory.create(person=trainee, laser=laser, valid_until=days(3), status="approved",
                                              decided_by=lso, decided_at=datetime.datetime(2030, 1, 1,
                                                                                           tzinfo=datetime.UTC))
        factories.FindingFactory.create(audit__auditor=lso, due_on=days(-2))
        factories.SOPFactory.create(laser=laser, status="approved", approved_on=days(-100), approved_by=lso,
                                    review_due=days(1))
        factories.EyewearFactory.create(last_inspected_on=None)
    with CaptureQueriesContext(connection) as queries:
        reminders, _ = reminders_due(today=TODAY)
    assert len(reminders) == 2 * copies + 1
    # Training records (with person, account, supervisor and laser); authorizations; audits due: the rooms
    # and their audits (2); overdue findings; SOP reviews; eyewear; the LSOs.
    assert len(queries) == 8


def test_an_address_that_is_no_e_mail_address_is_reported_and_not_recorded(clock: time_machine.Coordinates) -> None:
    typo = person("typo", user__email="typo at campus.example")
    factories.TrainingRecordFactory.create(person=typo, completed_on=days(-360), valid_until=days(3))
    err = StringIO()
    with pytest.raises(CommandError, match="1 reminders could not be sent"):
        call_command("send_reminders", stdout=StringIO(), stderr=err)
    assert err.getvalue() == f"  not sent to {typo} (typo): Enter a valid email address.\n"
    assert mail.outbox == []
    assert not SentReminder.objects.exists()
