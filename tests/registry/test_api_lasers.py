"""Laser listings: embedded hazard results, the working behind them, filters, order and search."""
from __future__ import annotations

from django.core.exceptions import ImproperlyConfigured
from django.test import RequestFactory, TestCase
from rest_framework.request import Request
from rest_framework.test import APIClient

from registry import services
from registry.models import HazardResult, Laser, Person
from registry.selectors import laser_list
from registry.serializers.lasers import LaserSerializer


def _laser(*, tag: str, owner: Person, room: object, by: Person, labelled_class: str, wavelength: str,
           model_name: str = "") -> Laser:
    laser = services.laser_register(by=by, asset_tag=tag, laser_type="solid_state", labelled_class=labelled_class,
                                    owner=owner, location=room, model_name=model_name)
    services.emission_create(laser=laser, by=by, wavelength_m=wavelength, temporal_mode="cw",
                             average_power_W="1 W", beam_diameter_m="2 mm", divergence_rad="1 mrad")
    return laser


class LaserListTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.lso = services.person_create(username="ada", role="lso")
        cls.rhea = services.person_create(username="rhea", role="researcher")
        cls.otto = services.person_create(username="otto", role="researcher")
        alder = services.location_create(code="a-1", site="S", building="Alder Hall", room="1", by=cls.lso)
        birch = services.location_create(code="b-1", site="S", building="Birch House", room="1", by=cls.lso)
        cls.green = _laser(tag="L-01", owner=cls.rhea, room=alder, by=cls.lso, labelled_class="4",
                           wavelength="532 nm", model_name="Verdant")
        cls.infrared = _laser(tag="L-02", owner=cls.otto, room=birch, by=cls.lso, labelled_class="3B",
                              wavelength="1550 nm")
        cls.violet = _laser(tag="L-03", owner=cls.rhea, room=birch, by=cls.lso, labelled_class="3R",
                            wavelength="405 nm")
        services.laser_approve(laser=cls.green, by=cls.lso)

    def setUp(self) -> None:
        self.client = APIClient()
        self.client.force_authenticate(user=self.lso.user)

    def _tags(self, **params: object) -> list[str]:
        response = self.client.get("/api/v1/lasers/", params)
        self.assertEqual(response.status_code, 200, response.content)
        return [laser["asset_tag"] for laser in response.json()["results"]]

    def test_a_laser_embeds_its_emissions_current_results_and_a_link_to_the_working(self) -> None:
        laser = self.client.get(f"/api/v1/lasers/{self.green.pk}/").json()
        emission = laser["emissions"][0]
        self.assertEqual(emission["wavelength_text"], "532 nm")
        stored = {result.limits: result for result in HazardResult.objects.filter(emission_id=emission["id"])}
        self.assertEqual({result["limits"] for result in emission["hazard_results"]}, set(stored))
        for result in emission["hazard_results"]:
            expected = stored[result["limits"]]
            self.assertEqual((result["nohd_m"], result["nohd_unbounded"], result["od_required"],
                              result["en207_marking"], result["exposure_s"], result["eye_mpe_W_m2"],
                              result["eye_mpe_per_pulse_J_m2"], result["pulse_rule"], result["engine_version"]),
                             (expected.nohd_m, expected.nohd_unbounded, expected.od_required, expected.en207_marking,
                              expected.exposure_s, expected.eye_mpe_W_m2, None, "continuous wave",
                              expected.engine_version))
            self.assertIn("never replace", result["caution"])
            working = self.client.get(result["working_url"])
            self.assertEqual(working.status_code, 200)
            self.assertEqual(working.json()["working"], expected.working)
            self.assertGreater(len(expected.working), 0)

    def test_filters_by_class_status_location_building_and_owner(self) -> None:
        self.assertEqual(self._tags(laser_class="4"), ["L-01"])
        self.assertEqual(self._tags(laser_class=["3B", "3R"]), ["L-02", "L-03"])
        self.assertEqual(self._tags(status="pending_review"), ["L-02", "L-03"])
        self.assertEqual(self._tags(location=self.green.location_id), ["L-01"])
        self.assertEqual(self._tags(building="birch house"), ["L-02", "L-03"])
        self.assertEqual(self._tags(owner=self.rhea.pk), ["L-01", "L-03"])

    def test_filters_by_wavelength_range_with_units(self) -> None:
        self.assertEqual(self._tags(wavelength_min="500 nm", wavelength_max="1 um"), ["L-01"])
        self.assertEqual(self._tags(wavelength_min=1e-6), ["L-02"])
        self.assertEqual(self._tags(wavelength_max="450nm"), ["L-03"])

    def test_nohd_greater_than_matches_the_stored_results(self) -> None:
        results = list(HazardResult.objects.select_related("emission__laser"))
        distances = sorted({result.nohd_m for result in results if result.nohd_m is not None})
        self.assertGreater(len(distances), 1)
        for threshold in [0.0, *distances]:
            with self.subTest(threshold=threshold):
                expected = sorted({result.emission.laser.asset_tag for result in results
                                   if result.nohd_unbounded or (result.nohd_m or 0.0) > threshold})
                self.assertEqual(self._tags(nohd_gt=f"{threshold} m"), expected)
                self.assertEqual(self._tags(nohd_gt=f"{threshold / 1000} km"), expected)

    def test_ordering_and_search(self) -> None:
        self.assertEqual(self._tags(ordering="-asset_tag"), ["L-03", "L-02", "L-01"])
        self.assertEqual(self._tags(ordering="labelled_class"), ["L-02", "L-03", "L-01"])
        self.assertEqual(self._tags(search="verdant"), ["L-01"])
        self.assertEqual(self.client.get("/api/v1/lasers/", {"ordering": "owner__user__password"}).json()["count"], 3)


class PeopleScopeTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        optics = services.research_group_create(slug="optics", name="Optics")
        plasma = services.research_group_create(slug="plasma", name="Plasma")
        cls.rhea = services.person_create(username="rhea", role="researcher", research_group=optics)
        cls.uma = services.person_create(username="uma", role="user", research_group=optics)
        cls.otto = services.person_create(username="otto", role="researcher", research_group=plasma)
        cls.ivo = services.person_create(username="ivo", role="inspector")

    def _usernames(self, person: Person) -> set[str]:
        client = APIClient()
        client.force_authenticate(user=person.user)
        return {entry["username"] for entry in client.get("/api/v1/people/").json()["results"]}

    def test_a_researcher_sees_their_own_group_only(self) -> None:
        self.assertEqual(self._usernames(self.rhea), {"rhea", "uma"})
        self.assertEqual(self._usernames(self.otto), {"otto"})

    def test_a_user_sees_only_themselves_and_an_inspector_everyone(self) -> None:
        self.assertEqual(self._usernames(self.uma), {"uma"})
        self.assertEqual(self._usernames(self.ivo), {"rhea", "uma", "otto", "ivo"})


class SelectorListsTests(TestCase):
    def test_a_laser_loaded_without_its_selector_fails_loudly_instead_of_dropping_its_emissions(self) -> None:
        lso = services.person_create(username="ada", role="lso")
        room = services.location_create(code="a-1", site="S", building="Alder Hall", room="1", by=lso)
        laser = _laser(tag="L-09", owner=lso, room=room, by=lso, labelled_class="4", wavelength="532 nm")
        request = Request(RequestFactory().get("/api/v1/lasers/"))
        request.user = lso.user
        context = {"request": request}
        loaded = laser_list().get(pk=laser.pk)
        self.assertEqual(len(LaserSerializer(loaded, context=context).data["emissions"]), 1)
        with self.assertRaisesMessage(ImproperlyConfigured, "load it through its selector"):
            LaserSerializer(Laser.objects.get(pk=laser.pk), context=context).data
