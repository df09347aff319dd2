"""POST /api/v1/evaluate/ answers what `python -m hazards assess --json` prints, saving nothing."""
from __future__ import annotations

import contextlib
import io
import json
from typing import Any

from django.test import TestCase
from rest_framework.test import APIClient

from tests.registry.api_world import register_state
from hazards.beam import DIAMETER_DEFINITIONS
from hazards.cli import main
from registry import services
from registry.models import DiameterDefinition

# The API takes the command's options with underscores; the command takes them with dashes.
CASES: list[dict[str, Any]] = [
    {"wavelength": "532 nm", "power": "5 mW", "beam_diameter": "2 mm", "divergence": "1 mrad"},
    {"wavelength": 1.064e-6, "power": 2.5, "beam_diameter": 3e-3, "divergence": 0.8e-3, "diameter_at": "1/e",
     "limits": "eu2006"},
    {"wavelength": "1064 nm", "pulse_energy": "0.5 J", "pulse_duration": "10 ns", "beam_diameter": "6 mm",
     "divergence": "0.5 mrad", "exposure": "10 s"},
    {"wavelength": "1064 nm", "pulse_energy": "0.5 J", "pulse_duration": "10 ns", "prf": "10 Hz",
     "beam_diameter": "6 mm", "divergence": "0.5 mrad"},
    {"wavelength": "694.3 nm", "pulse_energy": "2 J", "pulse_duration": "1 ms", "beam_diameter": "6 mm",
     "divergence": "2 mrad"},
]


def _command_output(request: dict[str, Any]) -> tuple[int, str, str]:
    argv = ["assess", "--json"]
    for key, value in request.items():
        argv += [f"--{key.replace('_', '-')}", str(value)]
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = main(argv)
    return status, out.getvalue(), err.getvalue()


class EvaluateTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.user = services.person_create(username="uma", role="user")

    def setUp(self) -> None:
        self.client = APIClient()
        self.client.force_authenticate(user=self.user.user)

    def test_the_answer_is_the_commands_json_and_nothing_is_saved(self) -> None:
        for request in CASES:
            with self.subTest(request=request):
                status, printed, _ = _command_output(request)
                self.assertEqual(status, 0)
                before = register_state()
                response = self.client.post("/api/v1/evaluate/", request, format="json")
                self.assertEqual(response.status_code, 200, response.content)
                self.assertEqual(response.json(), json.loads(printed))
                self.assertEqual(register_state(), before)
                for key in ("nohd_m", "od_required", "exposure_basis", "engine_version", "working"):
                    self.assertIn(key, response.json())

    def test_bad_input_is_a_400_naming_the_key_with_the_commands_message(self) -> None:
        bad = [
            ({"wavelength": "5 mW", "power": "5 mW", "beam_diameter": "2 mm", "divergence": "1 mrad"},
             "wavelength"),
            ({"wavelength": "532 nm", "power": "-1 W", "beam_diameter": "2 mm", "divergence": "1 mrad"}, "power"),
            # 10 ns pulses of 0.5 J at 10 Hz average 5 W, not 50 W.
            ({"wavelength": "1064 nm", "power": "50 W", "pulse_energy": "0.5 J", "pulse_duration": "10 ns",
              "prf": "10 Hz", "beam_diameter": "6 mm", "divergence": "0.5 mrad"}, "power"),
            # A 1 ms pulse cannot repeat every 0.1 ms.
            ({"wavelength": "1064 nm", "power": "1 W", "pulse_duration": "1 ms", "prf": "10 kHz",
              "beam_diameter": "6 mm", "divergence": "0.5 mrad"}, "pulse_duration"),
        ]
        for request, field in bad:
            with self.subTest(request=request):
                status, _, error = _command_output(request)
                self.assertEqual(status, 2)
                response = self.client.post("/api/v1/evaluate/", request, format="json")
                self.assertEqual(response.status_code, 400)
                self.assertEqual(list(response.json()), [field])
                message = response.json()[field][0]
                self.assertIn(message, error)

    def test_missing_required_and_unknown_keys_are_named(self) -> None:
        response = self.client.post("/api/v1/evaluate/", {"wavelength": "532 nm", "powr": "5 mW"}, format="json")
        self.assertEqual(response.status_code, 400)
        self.assertEqual(set(response.json()), {"beam_diameter", "divergence"})
        response = self.client.post("/api/v1/evaluate/", {"wavelength": "532 nm", "powr": "5 mW",
                                                          "beam_diameter": "2 mm", "divergence": 0}, format="json")
        self.assertEqual(response.status_code, 400)
        self.assertEqual(list(response.json()), ["powr"])

    def test_the_documented_diameter_definitions_are_the_engines(self) -> None:
        self.assertEqual({value for value, _label in DiameterDefinition.choices}, set(DIAMETER_DEFINITIONS))

    def test_anonymous_callers_cannot_evaluate(self) -> None:
        response = APIClient().post("/api/v1/evaluate/", CASES[0], format="json")
        self.assertEqual(response.status_code, 401)
