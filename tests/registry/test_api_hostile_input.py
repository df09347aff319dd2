"""Hostile input at every way in over HTTP: a 400 naming the field, never a 500 or a stall.

Each test takes one class of input the issue-9 probe sent (pathological strings, numbers
of hundreds of digits, deep nesting, thousands of parameters, words, list items or bytes)
to every place it can go: each list parameter, each body that is read, the anonymous
sign-in, the admin. Bounds: hazards.units.MAX_TEXT_LENGTH for a typed value,
registry.models.FREE_TEXT_MAX_LENGTH for free text, registry.api.parsers for bodies,
Django's DATA_UPLOAD_MAX_NUMBER_FIELDS (1,000) for parameters.
"""
from __future__ import annotations

import json
from typing import Any

from django.conf import settings
from django.contrib.messages import get_messages
from django.core.exceptions import ValidationError
from django.test import Client, TestCase, override_settings
from django.urls import URLPattern, URLResolver, get_resolver
from drf_spectacular.generators import SchemaGenerator
from rest_framework.parsers import FormParser, MultiPartParser
from rest_framework.test import APIClient

from registry import services
from registry.api.parsers import BoundedJSONParser
from registry.models import FREE_TEXT_MAX_LENGTH, Emission, Laser
from tests.registry.api_world import World, build_world, register_state

V = "/api/v1"
# The probe's string: it made the old quantity pattern backtrack for 40 s.
PATHOLOGICAL = "5" + " " * 3000 + "x"
EMISSION = {"wavelength": "532 nm", "temporal_mode": "cw", "average_power": "5 mW", "beam_diameter": "2 mm",
            "divergence": "1.2 mrad"}


def _nested(depth: int, leaf: str = "1") -> str:
    return "[" * depth + leaf + "]" * depth


class HostileInputTestCase(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def client_for(self, persona: str) -> APIClient:
        client = self.world.client(persona)
        # A 500 must show as a status here, not as the exception the test client re-raises.
        client.raise_request_exception = False
        return client

    def assertNamesField(self, response: Any, field: str, *, status: int = 400) -> list[str]:
        self.assertEqual(response.status_code, status, response.content[:300])
        body = response.json()
        self.assertIn(field, body, body)
        return body[field]  # type: ignore[no-any-return]


class ListParameterTests(HostileInputTestCase):
    def test_a_pathological_quantity_in_a_list_filter_is_a_400_naming_the_parameter_for_every_reader(self) -> None:
        for persona in ("lso", "inspector", "owner", "outsider"):
            for url, parameter in ((f"{V}/lasers/", "wavelength_min"), (f"{V}/lasers/", "nohd_gt"),
                                   (f"{V}/emissions/", "wavelength_max"), (f"{V}/hazard-results/", "nohd_gt")):
                with self.subTest(persona=persona, url=url, parameter=parameter):
                    response = self.client_for(persona).get(url, {parameter: PATHOLOGICAL})
                    messages = self.assertNamesField(response, parameter)
                    self.assertIn("at most 100", messages[0])

    def test_every_query_parameter_of_every_operation_refuses_a_value_longer_than_a_typed_value(self) -> None:
        schema = SchemaGenerator().get_schema(request=None, public=True)
        checked = 0
        for path, operations in schema["paths"].items():
            get = operations.get("get")
            if get is None or "{" in path:
                continue
            for parameter in get.get("parameters", []):
                name = parameter["name"]
                if parameter["in"] != "query" or name in {"format", "lang", "page", "page_size"}:
                    # The schema's own format and language choices, and the page number and
                    # size (an unreadable one is the first page or a 404, as DRF answers).
                    continue
                with self.subTest(path=path, parameter=name):
                    response = self.client_for("lso").get(path, {name: PATHOLOGICAL})
                    self.assertNamesField(response, name)
                    checked += 1
        self.assertGreater(checked, 40)

    def test_a_search_of_thousands_of_words_is_a_400_naming_the_search_not_a_500(self) -> None:
        # 2,000 words made a condition no database plans ("Expression tree is too large").
        for words in (" ".join(["beam"] * 2000), " ".join(["a"] * 11), ",".join(["a"] * 11)):
            with self.subTest(words=words[:20]):
                messages = self.assertNamesField(self.client_for("inspector").get(f"{V}/lasers/", {"search": words}),
                                                 "search")
                self.assertIn("at most", messages[0])
        ten_words = " ".join(["TST"] * 10)
        self.assertEqual(self.client_for("inspector").get(f"{V}/lasers/", {"search": ten_words}).status_code, 200)

    def test_the_admin_search_of_thousands_of_words_finds_nothing_and_says_why_instead_of_a_500(self) -> None:
        client = Client(raise_request_exception=False)
        client.force_login(self.world.lso.user)
        for words, why in ((" ".join(["beam"] * 2000), "is 9999 characters long; a search is at most 100."),
                           (" ".join(["TST"] * 11), "has 11 words; a search looks for at most 10.")):
            with self.subTest(why=why):
                response = client.get("/admin/registry/laser/", {"q": words})
                self.assertEqual(response.status_code, 200)
                self.assertEqual([str(message) for message in get_messages(response.wsgi_request)],
                                 [f"The search {why} Nothing was searched."])
                self.assertEqual(response.context["cl"].result_count, 0)
        found = client.get("/admin/registry/laser/", {"q": "TST-0001"})
        self.assertEqual(found.context["cl"].result_count, 1)


class BodyValueTests(HostileInputTestCase):
    def test_a_pathological_quantity_in_a_body_is_a_400_naming_the_field_and_nothing_is_saved(self) -> None:
        before = register_state()
        body = {**EMISSION, "laser": self.world.laser.pk, "average_power": PATHOLOGICAL}
        messages = self.assertNamesField(self.client_for("lso").post(f"{V}/emissions/", body, format="json"),
                                         "average_power")
        self.assertIn("at most 100", messages[0])
        self.assertEqual(register_state(), before)

    def test_a_json_integer_of_401_digits_in_a_quantity_field_is_a_400_naming_the_field(self) -> None:
        before = register_state()
        raw = json.dumps({**EMISSION, "laser": self.world.laser.pk, "average_power": 0}).replace(
            '"average_power": 0', '"average_power": 1' + "0" * 400)
        self.assertNamesField(self.client_for("lso").post(f"{V}/emissions/", raw, content_type="application/json"),
                              "average_power")
        self.assertEqual(register_state(), before)

    def test_an_integer_of_5000_digits_is_a_400_naming_its_field_not_a_parse_error(self) -> None:
        # Python refuses to read an int of more than 4,300 digits; the answer named no field.
        raw = json.dumps({**EMISSION, "laser": self.world.laser.pk, "fibre_na": 0}).replace(
            '"fibre_na": 0', '"fibre_na": ' + "5" * 5000)
        self.assertNamesField(self.client_for("lso").post(f"{V}/emissions/", raw, content_type="application/json"),
                              "fibre_na")

    def test_an_lb_number_of_5000_digits_is_a_400_naming_the_field_at_the_markings_endpoint(self) -> None:
        url = f"{V}/eyewear/{self.world.eyewear.pk}/markings/"
        markings_before = list(self.world.eyewear.markings.values_list("pk", flat=True))
        raw = ('{"markings": [{"wavelength_min": "520 nm", "wavelength_max": "540 nm", "en207_conditions": "D", '
               '"en207_scale": ' + "5" * 5000 + "}]}")
        errors = self.assertNamesField(self.client_for("lso").post(url, raw, content_type="application/json"),
                                       "markings")
        self.assertIn("en207_scale", errors["0"])  # type: ignore[call-overload]
        self.assertEqual(list(self.world.eyewear.markings.values_list("pk", flat=True)), markings_before)

    def test_a_marking_with_an_lb_number_of_5000_digits_is_a_400_naming_the_eyewear_field_at_evaluate(self) -> None:
        body = {"wavelength": "532 nm", "power": "1 W", "beam_diameter": "2 mm", "divergence": "1 mrad",
                "eyewear": ["D 532 LB" + "5" * 5000]}
        self.assertNamesField(self.client_for("user").post(f"{V}/evaluate/", body, format="json"), "eyewear")

    def test_free_text_longer_than_the_bound_is_refused_naming_the_field_by_the_api_and_the_services(self) -> None:
        too_long = "x" * (FREE_TEXT_MAX_LENGTH + 1)
        laser_url = f"{V}/lasers/{self.world.laser.pk}/"
        client = self.client_for("lso")
        etag = client.get(laser_url)["ETag"]
        self.assertNamesField(client.patch(laser_url, {"description": too_long}, format="json", HTTP_IF_MATCH=etag),
                              "description")
        self.assertNamesField(client.post(f"{laser_url}status/", {"status": "in_storage", "note": too_long},
                                          format="json"), "note")
        self.assertNamesField(client.post(f"{V}/emissions/", {**EMISSION, "laser": self.world.laser.pk,
                                                              "notes": too_long}, format="json"), "notes")
        # The bound is the model's, so every way in (services, admin, import) holds to it.
        with self.assertRaises(ValidationError) as refused:
            services.laser_update(laser=self.world.laser, by=self.world.lso, description=too_long)
        self.assertIn("description", refused.exception.message_dict)
        exactly = "x" * FREE_TEXT_MAX_LENGTH
        etag = client.get(laser_url)["ETag"]
        self.assertEqual(client.patch(laser_url, {"description": exactly}, format="json",
                                      HTTP_IF_MATCH=etag).status_code, 200)
        self.world.laser.refresh_from_db()
        self.assertEqual(self.world.laser.description, exactly)

    def test_lists_longer_than_their_bound_are_refused_naming_the_field_before_any_lookup(self) -> None:
        client = self.client_for("lso")
        before = register_state()
        incident = {"reference": "TST-INC-9", "kind": "near_miss", "occurred_at": "2025-01-01T10:00:00Z",
                    "description": "Reflection.", "people_involved": [self.world.user.pk] * 51}
        self.assertNamesField(client.post(f"{V}/incidents/", incident, format="json"), "people_involved")
        audit = {"reference": "TST-AUD-9", "scope": "site", "site": "Test Site", "auditor": self.world.lso.pk,
                 "planned_on": "2030-01-01", "questions": ["Is it safe?"] * 201}
        self.assertNamesField(client.post(f"{V}/audits/", audit, format="json"), "questions")
        band = {"wavelength_min": "520 nm", "wavelength_max": "540 nm", "optical_density": 4}
        self.assertNamesField(client.post(f"{V}/eyewear/{self.world.eyewear.pk}/markings/",
                                          {"markings": [band] * 21}, format="json"), "markings")
        self.assertEqual(register_state(), before)
        self.assertEqual(client.post(f"{V}/incidents/", {**incident, "people_involved": [self.world.user.pk]},
                                     format="json").status_code, 201)


class BodyShapeTests(HostileInputTestCase):
    def _operations_with_a_body(self) -> list[tuple[str, str]]:
        schema = SchemaGenerator().get_schema(request=None, public=True)
        operations = []
        for template, items in schema["paths"].items():
            for method, operation in items.items():
                if method in {"post", "put", "patch"} and "requestBody" in operation:
                    operations.append((method, template))
        return operations

    def _path(self, template: str) -> str:
        # Every body is refused before the record it names is looked at, so any id will do.
        return template.replace("{id}", str(self.world.laser.pk))

    def test_a_deeply_nested_body_is_a_400_at_every_operation_that_reads_a_body(self) -> None:
        before = register_state()
        operations = self._operations_with_a_body()
        self.assertGreater(len(operations), 30)
        for method, template in operations:
            for body, key in ((_nested(100_000), None), ('{"note": ' + _nested(5000) + "}", "note")):
                with self.subTest(method=method, path=template, key=key):
                    response = getattr(self.client_for("lso"), method)(
                        self._path(template), body, content_type="application/json", HTTP_IF_MATCH="*")
                    self.assertIn(response.status_code, (400, 404), response.content[:200])
                    if response.status_code == 400 and key is not None:
                        self.assertIn("nested more than 20 levels deep", response.json()[key][0])
        self.assertEqual(register_state(), before)

    def test_a_deeply_nested_body_is_a_400_at_the_anonymous_sign_in(self) -> None:
        client = self.client_for("anonymous")
        response = client.post(f"{V}/auth/token/", _nested(100_000), content_type="application/json")
        self.assertEqual(response.status_code, 400)
        self.assertIn("nested more than 20 levels deep", response.json()["detail"])
        named = client.post(f"{V}/auth/token/", '{"username": ' + _nested(3000, '"ada"') + "}",
                            content_type="application/json")
        self.assertIn("nested more than 20 levels deep", self.assertNamesField(named, "username")[0])

    def test_nesting_within_the_bound_and_brackets_inside_strings_are_read_as_usual(self) -> None:
        laser_url = f"{V}/lasers/{self.world.laser.pk}/"
        client = self.client_for("lso")
        text = "[[[[[[[[[[[[[[[[[[[[[[[[ not nesting \\" + '" {{{{{{{{{{{{{{{{{{{{{{{{'
        raw = json.dumps({"description": text})
        response = client.patch(laser_url, raw, content_type="application/json", HTTP_IF_MATCH=client.get(laser_url)["ETag"])
        self.assertEqual(response.status_code, 200, response.content[:300])
        self.world.laser.refresh_from_db()
        self.assertEqual(self.world.laser.description, text)
        # 20 levels is still a body (a list of lists is refused by the field, not the parser).
        twenty = client.post(f"{V}/evaluate/", '{"eyewear": ' + _nested(19, '"D 532 LB5"') + "}",
                             content_type="application/json")
        self.assertNamesField(twenty, "eyewear")
        self.assertNotIn("nested", str(twenty.json()))

    @override_settings(DATA_UPLOAD_MAX_MEMORY_SIZE=2000)
    def test_a_body_longer_than_the_upload_limit_is_a_400_in_the_api_error_shape(self) -> None:
        before = register_state()
        body = {**EMISSION, "laser": self.world.laser.pk, "notes": "x" * 3000}
        for content in ("json", "application/x-www-form-urlencoded"):
            with self.subTest(content=content):
                if content == "json":
                    response = self.client_for("lso").post(f"{V}/emissions/", body, format="json")
                else:
                    response = self.client_for("lso").post(
                        f"{V}/emissions/", "&".join(f"{key}={value}" for key, value in body.items()),
                        content_type=content)
                self.assertEqual(response.status_code, 400, response.content[:200])
                self.assertIn("DATA_UPLOAD_MAX_MEMORY_SIZE", response.json()["detail"])
        self.assertEqual(register_state(), before)

    def test_every_api_view_reads_bodies_through_the_bounded_parsers(self) -> None:
        bounded = (BoundedJSONParser, FormParser, MultiPartParser)
        views = list(_api_views(get_resolver().url_patterns))
        self.assertGreater(len(views), 10)
        for name, view in views:
            with self.subTest(view=name):
                parsers = view().get_parsers()
                self.assertTrue(parsers)
                for parser in parsers:
                    self.assertIsInstance(parser, bounded)
                self.assertTrue(any(isinstance(parser, BoundedJSONParser) for parser in parsers))


def _api_views(patterns: list[URLPattern | URLResolver], prefix: str = "") -> Any:
    for pattern in patterns:
        if isinstance(pattern, URLResolver):
            yield from _api_views(pattern.url_patterns, prefix + str(pattern.pattern))
        elif prefix.startswith("api/"):
            view = getattr(pattern.callback, "cls", None) or getattr(pattern.callback, "view_class", None)
            if view is not None and hasattr(view, "get_parsers"):
                yield prefix + str(pattern.pattern), view


class FieldCountTests(HostileInputTestCase):
    many = "&".join(f"p{index}=1" for index in range(settings.DATA_UPLOAD_MAX_NUMBER_FIELDS + 1))

    def test_more_than_1000_query_parameters_is_a_400_on_every_url_with_debug_off_and_on(self) -> None:
        api = self.client_for("lso")
        admin = Client(raise_request_exception=False)
        admin.force_login(self.world.lso.user)
        for debug in (False, True):
            with override_settings(DEBUG=debug):
                for client, path in ((api, f"{V}/schema/"), (api, f"{V}/lasers/"),
                                     (self.client_for("anonymous"), f"{V}/auth/token/"),
                                     (admin, "/admin/registry/laser/"), (admin, "/admin/")):
                    with self.subTest(debug=debug, path=path):
                        response = client.get(f"{path}?{self.many}")
                        self.assertEqual(response.status_code, 400)
                        if path.startswith(V):
                            self.assertIn("DATA_UPLOAD_MAX_NUMBER_FIELDS", response.json()["detail"])
        self.assertEqual(api.get(f"{V}/lasers/?p1=1").status_code, 200)

    def test_more_than_1000_form_fields_is_a_400_in_the_api_error_shape_with_debug_off_and_on(self) -> None:
        before = register_state()
        for debug in (False, True):
            with override_settings(DEBUG=debug), self.subTest(debug=debug):
                response = self.client_for("lso").post(f"{V}/lasers/", self.many,
                                                       content_type="application/x-www-form-urlencoded")
                self.assertEqual(response.status_code, 400)
                self.assertIn("DATA_UPLOAD_MAX_NUMBER_FIELDS", response.json()["detail"])
        self.assertEqual(register_state(), before)
        self.assertFalse(Laser.objects.filter(asset_tag="").exists())
        self.assertEqual(Emission.objects.count(), before["registry.Emission"])
