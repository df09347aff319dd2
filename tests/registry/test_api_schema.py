"""schemathesis against the generated OpenAPI schema, in-process: every operation, called
as the LSO with generated input, must never answer 5xx and must answer as documented.

Two checks are left out, for reasons the schema cannot express:
- positive_data_acceptance: a string with units ("5 mW") is only checkable by pint, and
  cross-field rules (a pulse shorter than its period) and workflow states refuse input
  that matches the schema;
- negative_data_rejection: django-filter ignores an empty query parameter that an enum in
  the schema forbids (accepted by design).
"""
from __future__ import annotations

from collections.abc import Iterator

import pytest
import schemathesis
from django.core.cache import cache
from django.core.signals import request_finished, request_started
from django.db import close_old_connections
from hypothesis import HealthCheck, settings
from rest_framework.authtoken.models import Token

from registry.wsgi import application
from tests.registry.api_world import build_world

schema = schemathesis.openapi.from_wsgi("/api/v1/schema/?format=json", application)


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


@pytest.fixture
def lso_token(db: None) -> str:
    cache.clear()
    world = build_world()
    return Token.objects.create(user=world.lso.user).key


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
@schema.parametrize()
@settings(max_examples=12, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow,
                                 HealthCheck.filter_too_much])
def test_every_operation_answers_as_documented_and_never_5xx(case: schemathesis.Case, lso_token: str) -> None:
    case.call_and_validate(
        headers={"Authorization": f"Token {lso_token}"},
        excluded_checks=[schemathesis.checks.positive_data_acceptance, schemathesis.checks.negative_data_rejection],
    )


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
