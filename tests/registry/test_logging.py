"""Logging: one line per request and per service action with the acting user, and a request id
on every line of a request that also goes back in the X-Request-ID header."""
from __future__ import annotations

import logging
import re
from unittest import mock

import pytest
from django.test import Client
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

from registry import services
from registry.models import Laser, LaserStatus, Person

pytestmark = pytest.mark.django_db


@pytest.fixture
def lso() -> Person:
    return services.person_create(username="ada", role="lso")


@pytest.fixture
def researcher() -> Person:
    return services.person_create(username="rhea", role="researcher")


def _lines(caplog: pytest.LogCaptureFixture, logger: str) -> list[logging.LogRecord]:
    return [record for record in caplog.records if record.name == logger]


def test_a_page_request_is_one_line_with_its_user_and_the_id_sent_back(caplog: pytest.LogCaptureFixture,
                                                                       lso: Person) -> None:
    client = Client()
    client.force_login(lso.user)
    caplog.set_level(logging.INFO, logger="registry")
    response = client.get("/lasers/?status=active")
    assert response.status_code == 200
    request_id = response["X-Request-ID"]
    assert re.fullmatch(r"[0-9a-f]{32}", request_id)
    [line] = _lines(caplog, "registry.requests")
    assert re.fullmatch(r"GET /lasers/ 200 \d+ ms user=ada", line.getMessage())
    assert line.request_id == request_id  # type: ignore[attr-defined]


def test_an_api_request_names_the_token_s_user_and_an_anonymous_one_says_so(caplog: pytest.LogCaptureFixture,
                                                                           researcher: Person) -> None:
    token = Token.objects.create(user=researcher.user)
    caplog.set_level(logging.INFO, logger="registry")
    assert Client().get("/api/v1/lasers/", HTTP_AUTHORIZATION=f"Token {token.key}").status_code == 200
    assert Client().get("/api/v1/lasers/").status_code == 401
    assert Client().get("/healthz").status_code == 200
    messages = [line.getMessage() for line in _lines(caplog, "registry.requests")]
    assert [re.sub(r" \d+ ms", "", message) for message in messages] == [
        "GET /api/v1/lasers/ 200 user=rhea",
        "GET /api/v1/lasers/ 401 user=anonymous",
        # Nothing asked who it was, so nobody was looked up.
        "GET /healthz 200 user=-",
    ]


@pytest.mark.parametrize(("incoming", "kept"), [
    ("3f2a9c1e-77b0-4d2e-9f10-5b6c7d8e9f00", True),
    ("edge.proxy_0001", True),
    ("a" * 64, True),
    ("a" * 65, False),
    ("short", False),
    ("id with spaces", False),
    ("id<script>alert(1)</script>", False),
    ("", False),
])
def test_a_sane_incoming_request_id_is_kept_anything_else_replaced(incoming: str, kept: bool) -> None:
    response = Client().get("/healthz", HTTP_X_REQUEST_ID=incoming)
    if kept:
        assert response["X-Request-ID"] == incoming
    else:
        assert re.fullmatch(r"[0-9a-f]{32}", response["X-Request-ID"])


def test_an_exception_is_logged_with_the_request_id_sent_back(caplog: pytest.LogCaptureFixture) -> None:
    client = Client(raise_request_exception=False)
    with mock.patch("registry.views.health.MigrationExecutor", side_effect=RuntimeError("disk on fire")):
        response = client.get("/healthz", HTTP_X_REQUEST_ID="trace-0001-abcd")
    assert response.status_code == 500
    assert response["X-Request-ID"] == "trace-0001-abcd"
    [error] = [record for record in caplog.records if record.name == "django.request"]
    assert error.levelno == logging.ERROR
    assert error.request_id == "trace-0001-abcd"  # type: ignore[attr-defined]
    assert error.exc_info is not None and str(error.exc_info[1]) == "disk on fire"
    [line] = _lines(caplog, "registry.requests")
    assert line.getMessage().startswith("GET /healthz 500 ")
    assert line.request_id == "trace-0001-abcd"  # type: ignore[attr-defined]


def test_a_service_action_is_one_line_with_the_actor_and_record_even_when_it_calls_others(
        caplog: pytest.LogCaptureFixture, lso: Person, researcher: Person) -> None:
    client = APIClient()
    client.force_authenticate(user=researcher.user)
    caplog.set_level(logging.INFO, logger="registry")
    created = client.post("/api/v1/lasers/", {
        "asset_tag": "LOG-1", "laser_type": "diode", "labelled_class": "2", "emissions": []}, format="json")
    assert created.status_code == 201, created.content
    laser = Laser.objects.get(asset_tag="LOG-1")
    assert laser.status == LaserStatus.PENDING_REVIEW
    [action] = _lines(caplog, "registry.services")
    assert re.fullmatch(rf"laser_register by rhea on laser {laser.pk}: done in \d+ ms", action.getMessage())
    [request] = _lines(caplog, "registry.requests")
    assert action.request_id == request.request_id == created["X-Request-ID"]  # type: ignore[attr-defined]

    caplog.clear()
    emission = services.emission_create(laser=laser, by=researcher, wavelength_m="650 nm", temporal_mode="cw",
                                        average_power_W="1 mW", beam_diameter_m="1 mm", divergence_rad="1 mrad")
    # emission_create refreshes the hazard results through another service: still one line.
    [action] = _lines(caplog, "registry.services")
    assert re.fullmatch(rf"emission_create by rhea on emission {emission.pk}: done in \d+ ms", action.getMessage())
    assert emission.hazard_results.count() == 2  # one per limit set


def test_a_refused_service_action_says_so(caplog: pytest.LogCaptureFixture, researcher: Person) -> None:
    laser = services.laser_register(by=researcher, asset_tag="LOG-2", laser_type="diode", labelled_class="2")
    caplog.set_level(logging.INFO, logger="registry")
    caplog.clear()
    with pytest.raises(Exception):  # noqa: B017 - the refusal's class is what the line names
        services.laser_approve(laser=laser, by=researcher)
    [action] = _lines(caplog, "registry.services")
    assert re.fullmatch(rf"laser_approve by rhea on laser {laser.pk}: refused \(PermissionDenied\) in \d+ ms",
                        action.getMessage())
    laser.refresh_from_db()
    assert laser.status == LaserStatus.PENDING_REVIEW
