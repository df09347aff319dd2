"""Scheduled commands that every server's cron starts at once: one run works, the others stop."""
from __future__ import annotations

import datetime
import threading
from collections.abc import Callable
from io import StringIO
from pathlib import Path
from typing import Any
from unittest import mock

import pytest
from django.core import mail
from django.core.management import call_command
from django.db import connection, connections
from django.utils import timezone

from registry.models import SentReminder
from registry.services.scheduled import single_run
from tests import factories
from tests.registry.documents_world import build_documents_world

pytestmark = pytest.mark.django_db(transaction=True)

on_postgresql = pytest.mark.skipif(
    connection.vendor != "postgresql",
    reason="two runs in threads need a database two connections share; the lock itself is tested on SQLite too")


def _in_thread(work: Callable[[], Any]) -> threading.Thread:
    def run() -> None:
        try:
            work()
        finally:
            connections.close_all()  # this thread's own connections
    thread = threading.Thread(target=run)
    thread.start()
    return thread


def test_a_second_holder_is_refused_while_the_first_holds_the_lock_and_let_in_after() -> None:
    held, release = threading.Event(), threading.Event()
    seen: dict[str, bool] = {}

    def first() -> None:
        with single_run("nightly") as acquired:
            seen["first"] = acquired
            held.set()
            release.wait(30)

    thread = _in_thread(first)
    assert held.wait(30)
    with single_run("nightly") as acquired:
        seen["second, while held"] = acquired
    with single_run("another job") as acquired:
        seen["another name"] = acquired
    release.set()
    thread.join(30)
    with single_run("nightly") as acquired:
        seen["third, after"] = acquired
    assert seen == {"first": True, "second, while held": False, "another name": True, "third, after": True}


def _race(command: str, target: str, *args: str) -> list[str]:
    """Run ``command`` twice at once: the first run's work (``target``) waits until the second
    run has finished, so the two overlap whatever the scheduler does. Returns both outputs."""
    first_inside, second_done = threading.Event(), threading.Event()
    outputs: dict[str, str] = {}
    real = mock.patch(target).get_original()[0]

    def waiting(*call_args: Any, **call_kwargs: Any) -> Any:
        first_inside.set()
        second_done.wait(60)
        return real(*call_args, **call_kwargs)

    def run(name: str) -> None:
        out = StringIO()
        call_command(command, *args, stdout=out, stderr=StringIO())
        outputs[name] = out.getvalue()

    with mock.patch(target, side_effect=waiting, autospec=True):
        first = _in_thread(lambda: run("first"))
        assert first_inside.wait(60)
        second = _in_thread(lambda: run("second"))
        second.join(60)
        second_done.set()
        first.join(120)
    return [outputs["first"], outputs["second"]]


@on_postgresql
def test_two_reminder_runs_at_once_send_one_set_of_mails() -> None:
    today = timezone.localdate()
    factories.PersonFactory.create(user__username="officer", role="lso", research_group=None)
    expiring = factories.PersonFactory.create(user__username="expiring")
    factories.TrainingRecordFactory.create(person=expiring, completed_on=today - datetime.timedelta(days=355),
                                           valid_until=today + datetime.timedelta(days=10))

    first, second = _race("send_reminders", "registry.management.commands.send_reminders.reminders_send")

    assert "training reminders 1" in first and "digests 1" in first
    assert second == "Another send_reminders is running; nothing sent by this one.\n"
    assert sorted(message.to[0] for message in mail.outbox) == sorted(
        SentReminder.objects.values_list("address", flat=True))
    assert len(mail.outbox) == 2  # the training reminder and the LSO's digest, once each


@on_postgresql
def test_two_pack_runs_at_once_render_one_set_of_packs(tmp_path: Path) -> None:
    build_documents_world()
    output = tmp_path / "packs"
    first, second = _race("render_audit_packs",
                          "registry.management.commands.render_audit_packs.render_pre_audit_pack",
                          "--output", str(output), "--due")
    assert first.startswith("Rendered 1 pre-audit pack (")
    assert second == "Another render_audit_packs is running; nothing rendered by this one.\n"
    assert len(list(output.iterdir())) == 1
