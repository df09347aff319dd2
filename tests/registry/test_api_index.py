"""/api/v1/, where the README sends API users: a link to every collection, the schema and the docs."""
from __future__ import annotations

from django.test import TestCase
from rest_framework.test import APIClient

from registry import services
from registry.api.urls import router


class ApiIndexTests(TestCase):
    def test_it_links_every_registered_collection_and_the_entry_points(self) -> None:
        response = APIClient().get("/api/v1/", HTTP_ACCEPT="application/json")
        self.assertEqual(response.status_code, 200)
        links = response.json()
        collections = {prefix for prefix, _viewset, _basename in router.registry}
        self.assertGreaterEqual(len(collections), 12)
        self.assertEqual(collections - links.keys(), set())
        self.assertEqual(links["lasers"], "http://testserver/api/v1/lasers/")
        self.assertEqual(links["hazard-results"], "http://testserver/api/v1/hazard-results/")
        self.assertEqual(links["training-records"], "http://testserver/api/v1/training-records/")
        self.assertEqual(links["schema"], "http://testserver/api/v1/schema/")
        self.assertEqual(links["docs"], "http://testserver/api/v1/docs/")
        self.assertEqual(links["redoc"], "http://testserver/api/v1/docs/redoc/")
        self.assertEqual(links["evaluate"], "http://testserver/api/v1/evaluate/")
        self.assertEqual(links["auth-token"], "http://testserver/api/v1/auth/token/")

    def test_every_collection_link_lists_records_for_a_signed_in_caller(self) -> None:
        links = APIClient().get("/api/v1/", HTTP_ACCEPT="application/json").json()
        client = APIClient()
        client.force_authenticate(user=services.person_create(username="ada", role="lso").user)
        for prefix, _viewset, _basename in router.registry:
            with self.subTest(collection=prefix):
                response = client.get(links[prefix])
                self.assertEqual(response.status_code, 200)
                self.assertIn("results", response.json())
        for name in ("schema", "docs", "redoc"):
            with self.subTest(entry=name):
                self.assertEqual(APIClient().get(links[name]).status_code, 200)

    def test_a_collection_it_links_still_asks_an_anonymous_caller_to_sign_in(self) -> None:
        links = APIClient().get("/api/v1/", HTTP_ACCEPT="application/json").json()
        self.assertEqual(APIClient().get(links["lasers"]).status_code, 401)

    def test_a_browser_gets_the_links_as_a_page(self) -> None:
        response = APIClient().get("/api/v1/", HTTP_ACCEPT="text/html")
        self.assertEqual(response.status_code, 200)
        self.assertEqual(response["Content-Type"], "text/html; charset=utf-8")
        self.assertContains(response, "http://testserver/api/v1/lasers/")
