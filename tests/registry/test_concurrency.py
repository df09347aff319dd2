"""Two requests on one record at the same moment: nobody's change is silently lost.

Every write locks the record's row (registry.services lock_for_change / lock_for_decision),
decides on the row as it is, and writes back only the columns it changed; the loser of a
race gets 409 or 412. On PostgreSQL the races run in two threads against the test database.

On SQLite the race is run in a subprocess (tests/registry/sqlite_race.py) against a new
database file. It cannot run in the test process: pytest-django's SQLite test database is an
in-memory database in shared-cache mode, where SQLite locks tables instead of the database
file and answers a conflicting writer "database table is locked" at once, without the busy
timeout; the default database of a deployment is a file, whose locking and timeout are what
``transaction_mode`` IMMEDIATE (registry/settings.py) is about. Django's connection to the
test database cannot be pointed at a file for one test without affecting every other test
of the same process.
"""
from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import threading
from collections.abc import Callable
from pathlib import Path

import pytest
from django.conf import settings
from django.db import connection
from django.test import SimpleTestCase, TransactionTestCase
from rest_framework.response import Response
from rest_framework.test import APIClient

from registry import services
from registry.models import Laser, Person

ROOT = Path(__file__).resolve().parents[2]


def _client(person: Person) -> APIClient:
    client = APIClient()
    client.raise_request_exception = False
    client.force_authenticate(user=person.user)
    return client


def _at_once(*requests: Callable[[], Response]) -> list[int]:
    """Send ``requests`` from one thread each, released together; their statuses in order."""
    start = threading.Barrier(len(requests))
    statuses: list[int] = [0] * len(requests)

    def run(index: int, request: Callable[[], Response]) -> None:
        try:
            start.wait()
            statuses[index] = request().status_code
        finally:
            connection.close()

    threads = [threading.Thread(target=run, args=(index, request)) for index, request in enumerate(requests)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    return statuses


@pytest.mark.skipif(connection.vendor != "postgresql", reason="row locks need PostgreSQL; SQLite is raced in "
                                                              "SQLiteRaceTests")
class PostgreSQLRaceTests(TransactionTestCase):
    def setUp(self) -> None:
        self.first = services.person_create(username="ada", role="lso")
        self.second = services.person_create(username="bo", role="lso")
        self.room = services.location_create(code="race-1", site="R", building="R", room="1", by=self.first)

    def _active_laser(self, asset_tag: str) -> Laser:
        laser = services.laser_register(by=self.first, asset_tag=asset_tag, laser_type="gas", labelled_class="2",
                                        owner=self.first, location=self.room, description="as registered")
        services.emission_create(laser=laser, by=self.first, wavelength_m="633 nm", temporal_mode="cw",
                                 average_power_W="1 mW", beam_diameter_m="1 mm", divergence_rad="1 mrad")
        return services.laser_approve(laser=laser, by=self.first)

    def test_a_status_change_and_a_description_patch_at_once_never_revert_the_description(self) -> None:
        laser = self._active_laser("RACE-1")
        url = f"/api/v1/lasers/{laser.pk}/"
        for round_number in range(40):
            with self.subTest(round=round_number):
                target = "in_storage" if round_number % 2 == 0 else "active"
                text = f"edited in round {round_number}"
                etag = _client(self.second).get(url)["ETag"]
                moved, patched = _at_once(
                    lambda: _client(self.first).post(f"{url}status/", {"status": target}, format="json"),
                    lambda: _client(self.second).patch(url, {"description": text}, format="json",
                                                       HTTP_IF_MATCH=etag))
                laser.refresh_from_db()
                # The status step sends no If-Match and its status is free to move: it always goes
                # through. The PATCH wins when it goes first; when the status changed first, it gets
                # 412 (its ETag is stale) or 409 (the status moved while it waited for the row).
                self.assertEqual(moved, 200)
                self.assertIn(patched, (200, 409, 412))
                self.assertEqual(laser.status, target)
                if patched == 200:
                    self.assertEqual(laser.description, text)
                self.assertEqual(laser.history.filter(description=text).exists(), patched == 200)

    def test_of_two_status_changes_sent_at_once_from_one_read_exactly_one_wins(self) -> None:
        for round_number in range(10):
            with self.subTest(round=round_number):
                laser = self._active_laser(f"RACE-2-{round_number}")
                url = f"/api/v1/lasers/{laser.pk}/"
                etag = _client(self.first).get(url)["ETag"]
                disposed, stored = _at_once(
                    lambda: _client(self.first).post(f"{url}status/", {"status": "disposed", "note": "Scrapped."},
                                                     format="json", HTTP_IF_MATCH=etag),
                    lambda: _client(self.second).post(f"{url}status/", {"status": "in_storage"}, format="json",
                                                      HTTP_IF_MATCH=etag))
                self.assertEqual(sorted((disposed, stored))[0], 200)
                self.assertIn(max(disposed, stored), (409, 412))
                winner, loser = ("disposed", "in_storage") if disposed == 200 else ("in_storage", "disposed")
                laser.refresh_from_db()
                self.assertEqual(laser.status, winner)
                self.assertFalse(laser.history.filter(status=loser).exists())

    def test_without_if_match_a_status_change_never_undoes_a_disposal_it_did_not_see(self) -> None:
        for round_number in range(10):
            with self.subTest(round=round_number):
                laser = self._active_laser(f"RACE-3-{round_number}")
                url = f"/api/v1/lasers/{laser.pk}/"
                disposed, stored = _at_once(
                    lambda: _client(self.first).post(f"{url}status/", {"status": "disposed", "note": "Scrapped."},
                                                     format="json"),
                    lambda: _client(self.second).post(f"{url}status/", {"status": "in_storage"}, format="json"))
                laser.refresh_from_db()
                # Whichever locks the row second finds the status moved and is refused (409), unless
                # it read the laser after the first had finished: a disposal after the storage is
                # legal, a storage after the disposal is refused (the laser is read-only).
                self.assertIn((disposed, stored), [(200, 409), (409, 200), (200, 200)])
                self.assertEqual(laser.status, "in_storage" if disposed == 409 else "disposed")


@pytest.mark.skipif(connection.vendor != "sqlite", reason="the SQLite default database, raced in a subprocess")
class SQLiteRaceTests(SimpleTestCase):
    def test_the_loser_of_two_simultaneous_patches_gets_412_not_database_is_locked(self) -> None:
        self.assertEqual(settings.DATABASES["default"]["OPTIONS"]["transaction_mode"], "IMMEDIATE")
        with tempfile.TemporaryDirectory() as directory:
            finished = subprocess.run(
                [sys.executable, "-m", "tests.registry.sqlite_race", str(Path(directory) / "race.sqlite3"), "5"],
                cwd=ROOT, capture_output=True, text=True, timeout=600, check=False)
        self.assertEqual(finished.returncode, 0, finished.stderr[-2000:])
        outcome = json.loads(finished.stdout.strip().splitlines()[-1])
        for statuses in outcome["rounds"]:
            self.assertEqual(sorted(statuses), [200, 412], outcome)
        last_round = len(outcome["rounds"]) - 1
        winner = ("ada", "bo")[outcome["rounds"][-1].index(200)]
        self.assertEqual(outcome["description"], f"round {last_round} by {winner}")
