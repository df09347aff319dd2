"""POST /api/v1/people/ (the LSO adds a person with a role) and a laser user's view of the lasers."""
from __future__ import annotations

import datetime

from django.contrib.auth import get_user_model
from django.test import TestCase
from django.utils import timezone
from rest_framework.test import APIClient

from registry import services
from registry.models import Person, Role
from tests.registry.api_world import World, build_world


def _client(person: Person) -> APIClient:
    client = APIClient()
    client.force_authenticate(user=person.user)
    return client


class PersonCreateTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_the_lso_adds_a_person_whose_account_signs_in_with_the_role_given(self) -> None:
        response = _client(self.world.lso).post("/api/v1/people/", {
            "username": "nia", "first_name": "Nia", "last_name": "Orme", "email": "n.orme@campus.example",
            "password": "a long enough phrase", "role": "researcher",
            "research_group": self.world.owner.research_group_id}, format="json")
        self.assertEqual(response.status_code, 201, response.content)
        self.assertEqual(response.json()["role"], "researcher")
        self.assertNotIn("password", response.json())
        person = Person.objects.select_related("user").get(user__username="nia")
        self.assertEqual((person.role, person.research_group_id), (Role.RESEARCHER, self.world.owner.research_group_id))
        self.assertEqual(list(person.user.groups.values_list("name", flat=True)), ["Researchers"])
        self.assertIs(person.user.check_password("a long enough phrase"), True)
        self.assertEqual(person.history.first().history_user, self.world.lso.user)

    def test_a_person_added_without_a_password_cannot_sign_in_yet(self) -> None:
        response = _client(self.world.lso).post("/api/v1/people/", {"username": "nia", "role": "user"}, format="json")
        self.assertEqual(response.status_code, 201, response.content)
        self.assertIs(get_user_model().objects.get(username="nia").has_usable_password(), False)

    def test_a_weak_password_or_a_taken_username_is_refused_naming_the_field_and_nothing_is_saved(self) -> None:
        before = Person.objects.count()
        for body, field in (({"username": "nia", "role": "user", "password": "123"}, "password"),
                            ({"username": "ada", "role": "user"}, "username"),
                            ({"username": "nia", "role": "chief"}, "role")):
            with self.subTest(field=field):
                response = _client(self.world.lso).post("/api/v1/people/", body, format="json")
                self.assertEqual(response.status_code, 400)
                self.assertIn(field, response.json())
        self.assertEqual(Person.objects.count(), before)
        self.assertIs(get_user_model().objects.filter(username="nia").exists(), False)


class LaserUserScopeTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_a_laser_user_lists_only_the_lasers_they_are_authorized_on_with_their_figures(self) -> None:
        response = _client(self.world.user).get("/api/v1/lasers/")
        self.assertEqual(response.status_code, 200)
        lasers = response.json()["results"]
        self.assertEqual([laser["asset_tag"] for laser in lasers], ["TST-0005"])
        self.assertEqual(len(lasers[0]["emissions"][0]["hazard_results"]), 2)

    def test_an_expired_authorization_no_longer_shows_the_laser(self) -> None:
        authorization = self.world.user.authorizations.get(laser=self.world.authorized_laser)
        authorization.valid_until = timezone.localdate() - datetime.timedelta(days=1)
        authorization.save()
        response = _client(self.world.user).get(f"/api/v1/lasers/{self.world.authorized_laser.pk}/")
        self.assertEqual(response.status_code, 404)

    def test_a_revoked_authorization_no_longer_shows_the_laser(self) -> None:
        authorization = self.world.user.authorizations.get(laser=self.world.authorized_laser)
        services.authorization_revoke(authorization=authorization, by=self.world.lso, reason="Left the group.")
        self.assertEqual(_client(self.world.user).get("/api/v1/lasers/").json()["results"], [])
