"""Query counts of the list endpoints: fixed, however many rows a page holds (STYLE 6)."""
from __future__ import annotations

from django.contrib.auth import get_user_model
from django.test import TestCase
from django.utils import timezone
from rest_framework.test import APIClient

from registry import services
from registry.models import Emission, HazardResult, Laser

# Per request: the caller's person (1), the page count (1), the lasers with owner, owner's
# account, research group and room joined (1; the page's keys chosen in a subquery,
# registry.pagination), their emissions (1), the emissions' hazard results (1) -
# selectors.laser_list().
LASER_LIST_QUERIES = 5
# More than the largest page (200), so the bound shows.
LASERS = 230


class LaserListQueryTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.lso = services.person_create(username="ada", role="lso")
        owner = services.person_create(username="rhea", role="researcher")
        room = services.location_create(code="q-1", site="Q", building="Q", room="1", by=cls.lso)
        # Built in bulk: these tests count the list's queries, not the services'.
        lasers = Laser.objects.bulk_create(
            Laser(asset_tag=f"Q-{number:04d}", laser_type="diode", labelled_class="3B", status="active",
                  owner=owner, location=room)
            for number in range(LASERS))
        emissions = Emission.objects.bulk_create(
            Emission(laser=laser, wavelength_m=wavelength, temporal_mode="cw", average_power_W=0.1,
                     beam_diameter_m=1e-3, divergence_rad=1e-3)
            for laser in lasers for wavelength in (405e-9, 520e-9))
        HazardResult.objects.bulk_create(
            HazardResult(emission=emission, limits=limits, exposure_s=0.25, eye_mpe_J_m2=6.4, eye_mpe_W_m2=25.4,
                         nohd_m=10.0, engine_version="test", computed_at=timezone.now())
            for emission in emissions for limits in ("icnirp2013", "eu2006"))

    def _list(self, page_size: int) -> dict[str, object]:
        client = APIClient()
        # A fresh user object, so the person lookup is counted on every request alike.
        client.force_authenticate(user=get_user_model().objects.get(username="ada"))
        with self.assertNumQueries(LASER_LIST_QUERIES):
            response = client.get("/api/v1/lasers/", {"page_size": page_size})
        self.assertEqual(response.status_code, 200)
        return response.json()

    def test_a_page_of_100_lasers_with_emissions_and_results_takes_five_queries(self) -> None:
        page = self._list(100)
        self.assertEqual(len(page["results"]), 100)
        first = page["results"][0]
        self.assertEqual(len(first["emissions"]), 2)
        self.assertEqual({result["limits"] for result in first["emissions"][0]["hazard_results"]},
                         {"icnirp2013", "eu2006"})

    def test_the_count_does_not_grow_with_the_page_size(self) -> None:
        for page_size in (1, 10, 200):
            with self.subTest(page_size=page_size):
                self.assertEqual(len(self._list(page_size)["results"]), page_size)

    def test_a_larger_page_size_is_cut_to_the_bound_of_200(self) -> None:
        page = self._list(10_000)
        self.assertEqual(len(page["results"]), 200)
        self.assertEqual(page["count"], LASERS)
