"""No lost updates: ETags on reads, If-Match required on updates, 412 when stale."""
from __future__ import annotations

import threading
from typing import Any

import pytest
from django.db import connection, transaction
from django.test import TestCase, TransactionTestCase
from drf_spectacular.generators import SchemaGenerator
from rest_framework.test import APIClient

from registry import services
from registry.models import Laser, Person
from tests.registry.api_world import World, build_world, register_state
from tests.registry.test_api_permissions import ROWS


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


class IfMatchInTheSchemaTests(TestCase):
    """Issue 9: the schema says where If-Match is read, and the server does what it says."""

    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()
        cls.operations = {
            (method, path): operation
            for path, item in SchemaGenerator().get_schema(request=None, public=True)["paths"].items()
            for method, operation in item.items() if method in {"get", "post", "put", "patch", "delete"}}

    def _if_match(self, operation: dict[str, Any]) -> dict[str, Any] | None:
        return next((parameter for parameter in operation.get("parameters", [])
                     if parameter["in"] == "header" and parameter["name"] == "If-Match"), None)

    def test_every_update_requires_it_and_every_workflow_step_offers_it_with_the_answers(self) -> None:
        updates = steps = 0
        for (method, path), operation in sorted(self.operations.items()):
            with self.subTest(operation=f"{method} {path}"):
                if_match = self._if_match(operation)
                if method in {"put", "patch"}:
                    updates += 1
                    self.assertIsNotNone(if_match)
                    self.assertIs(if_match["required"], True)
                    self.assertLessEqual({"409", "412", "428"}, operation["responses"].keys())
                elif method == "post" and "{id}" in path:
                    # A workflow step on one record (RegisterViewSet.workflow_step).
                    steps += 1
                    self.assertIsNotNone(if_match)
                    self.assertIs(if_match.get("required", False), False)
                    self.assertLessEqual({"409", "412"}, operation["responses"].keys())
                    self.assertNotIn("428", operation["responses"])
                else:
                    self.assertIsNone(if_match)
                    self.assertNotIn("412", operation["responses"])
        # PUT and PATCH on ten collections; 19 steps and seven collections' retire.
        self.assertEqual(updates, 20)
        self.assertEqual(steps, 26)

    def test_each_operation_declaring_it_answers_412_to_a_stale_one_and_428_if_required_and_missing(self) -> None:
        rows = {(row.method, row.template): row for row in ROWS.values()}
        checked = 0
        for (method, path), operation in sorted(self.operations.items()):
            if_match = self._if_match(operation)
            if if_match is None:
                continue
            row = rows[(method, path)]
            checked += 1
            with self.subTest(operation=f"{method} {path}"), transaction.atomic():
                before = register_state()
                client = self.world.client("lso")
                body = row.body(self.world) if row.body else None
                stale = getattr(client, method)(row.path(self.world), body, format="json",
                                                HTTP_IF_MATCH='"0123456789abcdef0123456789abcdef"')
                self.assertEqual(stale.status_code, 412, stale.content[:300])
                missing = getattr(client, method)(row.path(self.world), body, format="json")
                if if_match.get("required", False):
                    self.assertEqual(missing.status_code, 428, missing.content[:300])
                    self.assertEqual(register_state(), before)
                else:
                    self.assertNotIn(missing.status_code, {412, 428}, missing.content[:300])
                transaction.set_rollback(True)
        self.assertEqual(checked, 46)
