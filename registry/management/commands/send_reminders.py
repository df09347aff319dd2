"""manage.py send_reminders: the day's training reminders and the LSO's digest, once a day."""
from __future__ import annotations

import datetime
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser

from registry.models import ReminderKind
from registry.services.reminders import reminders_send
from registry.services.scheduled import single_run


class Command(BaseCommand):
    help = ("Send the day's reminders: training that expires within 30 days or has expired (to the person and "
            "their supervisor) and the digest for laser safety officers. Run it daily; a reminder already sent "
            "that day is not sent again, and a run started while another is under way sends nothing.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--today", type=datetime.date.fromisoformat, default=None,
                            help="The day (YYYY-MM-DD) to remind for; default: today in TIME_ZONE.")

    def handle(self, *args: Any, **options: Any) -> None:
        # Every server's cron may start it: one run sends, the others stop here.
        with single_run("send_reminders") as acquired:
            if not acquired:
                self.stdout.write("Another send_reminders is running; nothing sent by this one.")
                return
            run = reminders_send(today=options["today"])
        for person in run.unreachable:
            self.stderr.write(f"  no e-mail address: {person} ({person.user.username})")
        for person, reason in run.failed:
            self.stderr.write(f"  not sent to {person} ({person.user.username}): {reason}")
        sent = run.sent
        self.stdout.write(
            f"{run.day:%Y-%m-%d}: training reminders {sent[ReminderKind.TRAINING]}, to supervisors "
            f"{sent[ReminderKind.SUPERVISEES]}, digests {sent[ReminderKind.DIGEST]}; sent already that day "
            f"{run.already_sent}; without an e-mail address {len(run.unreachable)}.")
        if run.failed:
            raise CommandError(f"{len(run.failed)} reminders could not be sent; the next run tries them again.")
