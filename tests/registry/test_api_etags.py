"""No lost updates: ETags on reads, If-Match required on updates, 412 when stale."""
from __future__ import annotations

import threading

import pytest
from django.db import connection
from django.test import TestCase, TransactionTestCase
from rest_framework.test import APIClient

from registry import services
from registry.models import Laser, Person


def _register(*, asset_tag: str = "ET-0001") -> tuple[Person, Person, Laser]:
    first = services.person_create(username="ada", role="lso")
    second = services.person_create(username="bo", role="lso")
    room = services.location_create(code="et-1", site="E", building="E", room="1", by=first)
    laser = services.laser_register(by=first, asset_tag=asset_tag, laser_type="gas", labelled_class="3B",
                                    owner=first, location=room, description="as registered")
    return first, second, laser


def _client(person: Person) -> APIClient:
    client = APIClient()
    client.force_authenticate(user=person.user)
    return client


class ETagTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.first, cls.second, cls.laser = _register()
        cls.url = f"/api/v1/lasers/{cls.laser.pk}/"

    def _history_rows(self) -> int:
        return self.laser.history.count()

    def test_a_read_carries_an_etag_that_changes_when_the_record_does(self) -> None:
        before = _client(self.first).get(self.url)["ETag"]
        self.assertRegex(before, r'^"[0-9a-f]{32}"$')
        self.assertEqual(_client(self.second).get(self.url)["ETag"], before)
        services.laser_update(laser=self.laser, by=self.first, description="moved")
        self.assertNotEqual(_client(self.first).get(self.url)["ETag"], before)

    def test_an_update_without_if_match_is_refused_with_428_and_changes_nothing(self) -> None:
        rows = self._history_rows()
        response = _client(self.first).patch(self.url, {"description": "blind write"}, format="json")
        self.assertEqual(response.status_code, 428)
        self.assertIn("If-Match", response.json()["detail"])
        self.laser.refresh_from_db()
        self.assertEqual(self.laser.description, "as registered")
        self.assertEqual(self._history_rows(), rows)

    def test_the_second_of_two_editors_working_from_the_same_copy_gets_412(self) -> None:
        etag = _client(self.first).get(self.url)["ETag"]
        self.assertEqual(_client(self.second).get(self.url)["ETag"], etag)
        first = _client(self.first).patch(self.url, {"description": "first edit"}, format="json",
                                          HTTP_IF_MATCH=etag)
        self.assertEqual(first.status_code, 200)
        self.assertNotEqual(first["ETag"], etag)
        rows = self._history_rows()
        second = _client(self.second).patch(self.url, {"description": "second edit"}, format="json",
                                            HTTP_IF_MATCH=etag)
        self.assertEqual(second.status_code, 412)
        self.laser.refresh_from_db()
        self.assertEqual(self.laser.description, "first edit")
        self.assertEqual(self._history_rows(), rows)

    def test_the_etag_of_an_update_answer_is_good_for_the_next_update(self) -> None:
        etag = _client(self.first).get(self.url)["ETag"]
        answer = _client(self.first).patch(self.url, {"description": "one"}, format="json", HTTP_IF_MATCH=etag)
        self.assertEqual(answer.json()["description"], "one")
        self.assertEqual(answer["ETag"], _client(self.first).get(self.url)["ETag"])
        again = _client(self.first).patch(self.url, {"description": "two"}, format="json",
                                          HTTP_IF_MATCH=answer["ETag"])
        self.assertEqual(again.status_code, 200)

    def test_a_weak_etag_never_matches(self) -> None:
        # RFC 9110 13.1.1: If-Match uses the strong comparison.
        etag = _client(self.first).get(self.url)["ETag"]
        response = _client(self.first).patch(self.url, {"description": "weak"}, format="json",
                                             HTTP_IF_MATCH=f"W/{etag}")
        self.assertEqual(response.status_code, 412)

    def test_a_stale_if_match_on_a_workflow_step_is_refused_too(self) -> None:
        etag = _client(self.first).get(self.url)["ETag"]
        services.emission_create(laser=self.laser, by=self.first, wavelength_m="633 nm", temporal_mode="cw",
                                 average_power_W="20 mW")
        response = _client(self.second).post(f"{self.url}approve/", {}, format="json", HTTP_IF_MATCH=etag)
        self.assertEqual(response.status_code, 412)
        self.laser.refresh_from_db()
        self.assertEqual(self.laser.status, "pending_review")


@pytest.mark.skipif(connection.vendor != "postgresql", reason="row locks need PostgreSQL; SQLite serialises writers")
class ConcurrentEditTests(TransactionTestCase):
    """Two LSOs send their edits at the same moment from the same copy: one wins, one gets 412."""

    def test_exactly_one_of_two_simultaneous_edits_succeeds(self) -> None:
        first, second, laser = _register(asset_tag="ET-0002")
        url = f"/api/v1/lasers/{laser.pk}/"
        etag = _client(first).get(url)["ETag"]
        start = threading.Barrier(2)
        statuses: dict[str, int] = {}

        def edit(person: Person, text: str) -> None:
            try:
                start.wait()
                response = _client(person).patch(url, {"description": text}, format="json", HTTP_IF_MATCH=etag)
                statuses[text] = response.status_code
            finally:
                connection.close()

        threads = [threading.Thread(target=edit, args=(first, "edit by ada")),
                   threading.Thread(target=edit, args=(second, "edit by bo"))]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
        self.assertEqual(sorted(statuses.values()), [200, 412])
        winner = next(text for text, status in statuses.items() if status == 200)
        laser.refresh_from_db()
        self.assertEqual(laser.description, winner)
        self.assertEqual(laser.history.filter(description__startswith="edit by").count(), 1)
