"""schemathesis against the generated OpenAPI schema, in-process: every operation, called
as each role (LSO, researcher, laser user, inspector) with generated input, must never answer
5xx and must answer as documented.

Generated ids are mostly strings no record has; so that the calls reach real records, the
generated id picks one of the collection's records in the test register, or itself (a
function of the generated value, so that Hypothesis can still replay and shrink it). An update
or workflow step that sends If-Match sends the record's current ETag as the caller reads it
(when the caller can read it), so that the request gets past the 412 to the code behind it.

Two checks are left out, for reasons the schema cannot express:
- positive_data_acceptance: a string with units ("5 mW") is only checkable by pint, and
  cross-field rules (a pulse shorter than its period) and workflow states refuse input
  that matches the schema;
- negative_data_rejection: django-filter ignores an empty query parameter that an enum in
  the schema forbids (accepted by design).

The register is built once per module and worker (``api_world``), and each operation's
examples run in a transaction rolled back after it, so operations do not see each other's
writes.
"""
from __future__ import annotations

import os
import zlib
from collections.abc import Iterator
from typing import Any

import pytest
import schemathesis
from django.core.cache import cache
from django.core.signals import request_finished, request_started
from django.db import close_old_connections
from hypothesis import HealthCheck, Phase, settings
from rest_framework.authtoken.models import Token
from schemathesis.config import SchemathesisConfig
from schemathesis.python.wsgi import HOST as WSGI_HOST
from werkzeug.test import Client as WSGIClient

from registry.api.urls import router
from registry.wsgi import application
from tests.registry.api_world import World

# The coverage phase (every edge of every field, about 9,000 calls as the LSO: nine tenths of
# this module's time, since max_examples does not bound it) runs when FUZZ_EDGES=1, as .ci/run
# sets; a local run sends the schema's examples and generated input, to stay within minutes.
FUZZ_EDGES = os.environ.get("FUZZ_EDGES", "0") == "1"
# A required If-Match left out is a 428 (RFC 6585, section 3: the server requires the request
# to be conditional), which schemathesis does not count among the refusals of a missing header.
CONFIG = SchemathesisConfig.from_dict({
    "checks": {"missing_required_header": {"expected-statuses": [400, 401, 403, 406, 415, 422, 428]}},
    "phases": {"coverage": {"enabled": FUZZ_EDGES}},
})
schema = schemathesis.openapi.from_wsgi("/api/v1/schema/?format=json", application, config=CONFIG)

# The personas of tests.registry.api_world that hold each role.
ROLES = {"lso": "lso", "researcher": "owner", "laser user": "user", "inspector": "inspector"}
PREFIX = "/api/v1/"


@pytest.fixture(autouse=True)
def keep_the_test_connection() -> Iterator[None]:
    # In-process WSGI calls fire request_started/finished, whose close_old_connections
    # would close the test's open transaction on PostgreSQL (django.test.Client
    # disconnects them in the same way).
    request_started.disconnect(close_old_connections)
    request_finished.disconnect(close_old_connections)
    yield
    request_started.connect(close_old_connections)
    request_finished.connect(close_old_connections)


@pytest.fixture(scope="module")
def register(api_world: World, django_db_blocker: Any) -> dict[str, Any]:
    """A token per role, and the ids of each collection's records in the test register."""
    with django_db_blocker.unblock():
        tokens = {role: Token.objects.create(user=api_world.person(persona).user).key
                  for role, persona in ROLES.items()}
        ids = {prefix: [str(pk) for pk in viewset().base_queryset().order_by("pk").values_list("pk", flat=True)]
               for prefix, viewset, _basename in router.registry}
    return {"tokens": tokens, "ids": ids}


def _call_and_validate(case: schemathesis.Case, token: str, register: dict[str, Any]) -> None:
    # Sign-in throttling counts attempts in the cache; each call starts with none.
    cache.clear()
    collection = case.path.removeprefix(PREFIX).split("/", 1)[0]
    if case.path_parameters and "id" in case.path_parameters:
        choices = [*register["ids"][collection], str(case.path_parameters["id"])]
        case.path_parameters["id"] = choices[zlib.crc32(choices[-1].encode()) % len(choices)]
    authorization = f"Token {token}"
    if case.headers and "If-Match" in case.headers:
        # Read as this caller, through the same WSGI host (the representation's links name it);
        # not with django.test.Client, which reconnects close_old_connections after each call.
        read = WSGIClient(application).get(f"{PREFIX}{collection}/{case.path_parameters['id']}/",
                                           headers={"Authorization": authorization, "Host": WSGI_HOST})
        if read.status_code == 200:
            case.headers["If-Match"] = read.headers["ETag"]
    case.call_and_validate(
        headers={"Authorization": authorization},
        excluded_checks=[schemathesis.checks.positive_data_acceptance, schemathesis.checks.negative_data_rejection],
    )


_HEALTH = [HealthCheck.function_scoped_fixture, HealthCheck.too_slow, HealthCheck.filter_too_much]


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
@schema.parametrize()
@settings(max_examples=12, deadline=None, suppress_health_check=_HEALTH)
def test_every_operation_answers_the_lso_as_documented_and_never_5xx(
        case: schemathesis.Case, register: dict[str, Any], db: None) -> None:
    """The schema's examples, schemathesis's coverage cases (edges of every field; with
    FUZZ_EDGES=1), then generated input: the LSO may do everything, so input reaches the
    deepest code."""
    _call_and_validate(case, register["tokens"]["lso"], register)


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
@pytest.mark.parametrize("role", [role for role in ROLES if role != "lso"])
@schema.parametrize()
@settings(max_examples=12, deadline=None, suppress_health_check=_HEALTH, phases=[Phase.generate])
def test_every_operation_answers_each_other_role_as_documented_and_never_5xx(
        case: schemathesis.Case, role: str, register: dict[str, Any], db: None) -> None:
    """Generated input as the researcher, the laser user and the inspector: their scopes and
    refusals (the coverage cases, run for the LSO, mostly stop at a 403 here)."""
    _call_and_validate(case, register["tokens"][role], register)


def _number_properties(node: object, where: str = "") -> Iterator[tuple[str, dict[str, object]]]:
    """Every property of the schema whose value may be a JSON number, with its path."""
    if isinstance(node, dict):
        properties = node.get("properties")
        if isinstance(properties, dict):
            for name, prop in properties.items():
                branches = prop.get("oneOf", prop.get("anyOf", [prop]))
                if any(isinstance(branch, dict) and branch.get("type") == "number" for branch in branches):
                    yield f"{where}.{name}", prop
        for key, value in node.items():
            yield from _number_properties(value, f"{where}.{key}")
    elif isinstance(node, list):
        for index, value in enumerate(node):
            yield from _number_properties(value, f"{where}[{index}]")


def test_every_number_in_the_schema_states_its_unit() -> None:
    """Issue 5: every field documents its unit (x-unit and the description), or says it has none."""
    document = schema.raw_schema
    checked = 0
    for where, prop in _number_properties(document):
        checked += 1
        description = str(prop.get("description", ""))
        unit = prop.get("x-unit")
        if not unit:
            assert "dimensionless" in description, f"{where} states no unit"
        else:
            assert unit.replace("**2", "\u00b2") in description or unit in description, \
                f"{where}: x-unit {unit} not in its description"
    assert checked > 40
