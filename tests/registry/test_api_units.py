"""Physical inputs over the API: numbers in the documented SI unit or strings with units.

Table-driven (STYLE 10, after DRF's FieldValues): each row is a field, what was sent and
either the SI value stored and the text given back, or the words the 400 must contain.
Unit conversions are the SI prefix definitions (BIPM SI Brochure, 9th ed., Table 7) and
1 ft = 0.3048 m (international yard and pound agreement, 1959).
"""
from __future__ import annotations

import math
from typing import Any

from django.test import TestCase
from rest_framework.test import APIClient

from registry import services
from registry.models import Emission, Location

# A valid continuous-wave emission; each row overrides some fields.
BASE = {"wavelength": "532 nm", "temporal_mode": "cw", "average_power": "5 mW", "beam_diameter": "2 mm",
        "divergence": "1.2 mrad"}

ACCEPTED: list[tuple[str, dict[str, Any], str, float, str]] = [
    # (field, sent, model attribute, SI value, text answered)
    ("wavelength", {"wavelength": "532 nm"}, "wavelength_m", 532e-9, "532 nm"),
    ("wavelength", {"wavelength": 5.32e-7}, "wavelength_m", 532e-9, "532 nm"),
    ("wavelength", {"wavelength": "1.064 um"}, "wavelength_m", 1.064e-6, "1.064 µm"),
    ("wavelength", {"wavelength": "1.064 µm"}, "wavelength_m", 1.064e-6, "1.064 µm"),
    ("wavelength", {"wavelength": "10.6um"}, "wavelength_m", 10.6e-6, "10.6 µm"),
    ("average_power", {"average_power": "5 mW"}, "average_power_W", 5e-3, "5 mW"),
    ("average_power", {"average_power": 2}, "average_power_W", 2.0, "2 W"),
    ("average_power", {"average_power": "0.5 kW"}, "average_power_W", 500.0, "500 W"),
    ("beam_diameter", {"beam_diameter": "2 mm"}, "beam_diameter_m", 2e-3, "2 mm"),
    ("beam_diameter", {"beam_diameter": "0.25 in"}, "beam_diameter_m", 6.35e-3, "6.35 mm"),
    ("divergence", {"divergence": "1.2 mrad"}, "divergence_rad", 1.2e-3, "1.2 mrad"),
    ("divergence", {"divergence": 0}, "divergence_rad", 0.0, "0 rad"),
    ("pulse_duration", {"temporal_mode": "q_switched", "pulse_duration": "10 ns", "pulse_energy": "0.5 J",
                        "prf": "10 Hz", "average_power": "5 W"}, "pulse_duration_s", 10e-9, "10 ns"),
    ("pulse_energy", {"temporal_mode": "q_switched", "pulse_duration": "10 ns", "pulse_energy": "500 mJ",
                      "prf": "10 Hz", "average_power": "5 W"}, "pulse_energy_J", 0.5, "500 mJ"),
    ("prf", {"temporal_mode": "mode_locked", "pulse_duration": "100 fs", "pulse_energy": "7.5 nJ",
             "prf": "80 MHz", "average_power": "0.6 W"}, "prf_Hz", 80e6, "80 MHz"),
    ("source_size", {"source_size": "1.5 mrad"}, "source_size_rad", 1.5e-3, "1.5 mrad"),
]

REFUSED: list[tuple[str, dict[str, Any], str]] = [
    # (field named in the 400, sent, words the message contains)
    ("wavelength", {"wavelength": "5 mW"}, "is not a length"),
    ("wavelength", {"wavelength": "100 nm"}, "out of range"),
    ("wavelength", {"wavelength": "2 mm"}, "out of range"),
    ("wavelength", {"wavelength": "green"}, "cannot read"),
    ("wavelength", {"wavelength": True}, "expected a number"),
    ("wavelength", {"wavelength": [532]}, "expected a number"),
    ("average_power", {"average_power": "-5 mW"}, "out of range"),
    ("average_power", {"average_power": "5 blorts"}, "unknown unit"),
    ("average_power", {"average_power": "5 J"}, "is not a power"),
    # Text that breaks pint's own parser is still just an unknown unit.
    ("average_power", {"average_power": "5 mW)"}, "unknown unit"),
    ("average_power", {"average_power": "5 W/0"}, "unknown unit"),
    ("beam_diameter", {"beam_diameter": 0}, "allowed from 1 µm to 10 m"),
    # Impossible values the engine's one validation refuses at every way in (hazards.assessment.inputs):
    # beyond any laboratory beam (plausibility bounds of common practice, no source), or of the wrong kind.
    ("beam_diameter", {"beam_diameter": "1e-300 m"}, "out of range"),
    ("beam_diameter", {"beam_diameter": "5 lightyear"}, "out of range"),
    ("divergence", {"divergence": 1e308}, "out of range"),
    ("divergence", {"divergence": "5 percent"}, "is not an angle"),
    ("average_power", {"average_power": "1e308 W"}, "out of range"),
    ("average_power", {"average_power": 10**401}, "out of range"),
    ("beam_diameter", {"beam_diameter": "NaN mm"}, "cannot read"),
    ("divergence", {"divergence": "-1 mrad"}, "out of range"),
    ("divergence", {"divergence": "1 mm"}, "not a"),
    ("pulse_duration", {"temporal_mode": "repetitive", "pulse_duration": "10 nm", "prf": "1 kHz",
                        "average_power": "1 W"}, "is not a duration"),
    # A 2 us pulse cannot repeat every 1 us (1 MHz).
    ("pulse_duration", {"temporal_mode": "repetitive", "pulse_duration": "2 us", "prf": "1 MHz",
                        "average_power": "1 W"}, "not shorter than the pulse period"),
    # 0.5 J x 10 Hz = 5 W, not 50 W.
    ("average_power", {"temporal_mode": "q_switched", "pulse_duration": "10 ns", "pulse_energy": "0.5 J",
                       "prf": "10 Hz", "average_power": "50 W"}, "disagrees with pulse energy x prf"),
    ("prf", {"temporal_mode": "repetitive", "pulse_duration": "1 ns", "prf": "10 s", "average_power": "1 W"},
     "is not a frequency"),
]


class EmissionUnitTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.lso = services.person_create(username="ada", role="lso")
        room = services.location_create(code="u-1", site="U", building="U", room="1", by=cls.lso)
        cls.laser = services.laser_register(by=cls.lso, asset_tag="U-0001", laser_type="solid_state",
                                            labelled_class="4", owner=cls.lso, location=room)

    def setUp(self) -> None:
        self.client = APIClient()
        self.client.force_authenticate(user=self.lso.user)

    def _post(self, fields: dict[str, Any]) -> Any:
        return self.client.post("/api/v1/emissions/", {**BASE, **fields, "laser": self.laser.pk}, format="json")

    def test_values_with_or_without_units_are_stored_in_si_and_answered_with_text(self) -> None:
        for field, sent, attribute, si_value, text in ACCEPTED:
            with self.subTest(field=field, sent=sent):
                response = self._post(sent)
                self.assertEqual(response.status_code, 201, response.content)
                stored = getattr(Emission.objects.get(pk=response.json()["id"]), attribute)
                self.assertTrue(math.isclose(stored, si_value, rel_tol=1e-9), (stored, si_value))
                self.assertTrue(math.isclose(response.json()[field], si_value, rel_tol=1e-9))
                self.assertEqual(response.json()[f"{field}_text"], text)

    def test_bad_values_get_400_naming_the_field_and_nothing_is_saved(self) -> None:
        for field, sent, words in REFUSED:
            with self.subTest(field=field, sent=sent):
                response = self._post(sent)
                self.assertEqual(response.status_code, 400, response.content)
                body = response.json()
                self.assertEqual(list(body), [field], body)
                self.assertIn(words, " ".join(body[field]))
                self.assertEqual(Emission.objects.count(), 0)

    def test_an_update_is_checked_against_the_values_it_does_not_change(self) -> None:
        created = self._post({"temporal_mode": "repetitive", "pulse_duration": "1 us", "prf": "100 kHz",
                              "average_power": "1 W"}).json()
        url = f"/api/v1/emissions/{created['id']}/"
        etag = self.client.get(url)["ETag"]
        # 1 us pulses repeating at 2 MHz would overlap.
        response = self.client.patch(url, {"prf": "2 MHz"}, format="json", HTTP_IF_MATCH=etag)
        self.assertEqual(response.status_code, 400)
        self.assertIn("pulse_duration", response.json())
        self.assertEqual(Emission.objects.get(pk=created["id"]).prf_Hz, 1e5)


class OtherQuantityTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.lso = services.person_create(username="ada", role="lso")

    def setUp(self) -> None:
        self.client = APIClient()
        self.client.force_authenticate(user=self.lso.user)

    def test_a_room_dimension_in_feet_is_stored_in_metres(self) -> None:
        response = self.client.post("/api/v1/locations/", {"code": "u-2", "site": "U", "building": "U",
                                                           "room": "2", "longest_dimension": "20 ft"}, format="json")
        self.assertEqual(response.status_code, 201, response.content)
        self.assertAlmostEqual(Location.objects.get(code="u-2").longest_dimension_m, 6.096)
        self.assertEqual(response.json()["longest_dimension_text"], "6.096 m")

    def test_a_negative_room_dimension_is_refused_naming_the_field(self) -> None:
        response = self.client.post("/api/v1/locations/", {"code": "u-3", "site": "U", "building": "U",
                                                           "room": "3", "longest_dimension": "-2 m"}, format="json")
        self.assertEqual(response.status_code, 400)
        self.assertIn("longest_dimension", response.json())
        self.assertFalse(Location.objects.filter(code="u-3").exists())

    def test_an_eyewear_band_in_the_wrong_dimension_is_refused_naming_the_nested_field(self) -> None:
        room = services.location_create(code="u-4", site="U", building="U", room="4", by=self.lso)
        response = self.client.post("/api/v1/eyewear/", {
            "inventory_tag": "U-EW", "location": room.pk,
            "markings": [{"wavelength_min": "190 nm", "wavelength_max": "5 ns", "optical_density": 5}]},
            format="json")
        self.assertEqual(response.status_code, 400)
        self.assertIn("wavelength_max", response.json()["markings"]["0"])

    def test_list_filters_take_units_and_name_the_parameter_when_wrong(self) -> None:
        response = self.client.get("/api/v1/lasers/", {"nohd_gt": "5 W"})
        self.assertEqual(response.status_code, 400)
        self.assertIn("is not a length", response.json()["nohd_gt"][0])
        self.assertEqual(self.client.get("/api/v1/lasers/", {"wavelength_min": "400 nm"}).status_code, 200)
        nul = self.client.get("/api/v1/lasers/", {"search": "a\x00b"})
        self.assertEqual(nul.status_code, 400)
        self.assertIn("Null characters", nul.json()["non_field_errors"][0])
        percent = self.client.get("/api/v1/emissions/", {"wavelength_max": "5 %J"})
        self.assertEqual(percent.status_code, 400)
        self.assertIn("'5 %J'", percent.json()["wavelength_max"][0])
