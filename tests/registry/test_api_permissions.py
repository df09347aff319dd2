"""The permission matrix: every endpoint x persona x method, with the status each must get.

The expected statuses are written out by hand from issue 5's role rules, as changed by
issue 10 (a laser user reads the lasers they are authorized on; the LSO adds people; anyone
signed in reports an incident on a laser they can see), not derived from
registry.permissions, so a policy change shows up here as a failing row. A refused
write must leave every row count of the register, history included, unchanged.
test_every_operation_is_in_the_matrix keeps new endpoints from escaping it.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import pytest
from django.core.cache import cache
from drf_spectacular.generators import SchemaGenerator

from tests.registry.api_world import PERSONAS, World, register_state

Body = Callable[[World], dict[str, Any]] | None
Target = Callable[[World], int] | None


@dataclass(frozen=True)
class Row:
    method: str
    template: str
    target: Target
    body: Body
    # Statuses in PERSONAS order: anonymous, lso, inspector, owner, outsider, user.
    statuses: tuple[int, int, int, int, int, int]
    needs_if_match: bool = False

    def path(self, world: World) -> str:
        return self.template.format(id=self.target(world)) if self.target else self.template


def _s(*statuses: int) -> tuple[int, int, int, int, int, int]:
    assert len(statuses) == len(PERSONAS)
    return statuses  # type: ignore[return-value]


READERS = _s(401, 200, 200, 200, 200, 403)     # the register's shared records
EVERYONE = _s(401, 200, 200, 200, 200, 200)
LSO_INSPECTOR = _s(401, 200, 200, 403, 403, 403)
LSO_WRITE = _s(401, 200, 403, 403, 403, 403)
LSO_CREATE = _s(401, 201, 403, 403, 403, 403)
EVERYONE_CREATE = _s(401, 201, 201, 201, 201, 201)
OWNER_DETAIL = _s(401, 200, 200, 200, 404, 403)  # visible to the owner only among researchers
OWNER_HISTORY = _s(401, 200, 200, 200, 403, 403)
OWNER_WRITE = _s(401, 200, 403, 200, 403, 403)
# The reporter may edit; another researcher cannot see the incident at all.
REPORTER_WRITE = _s(401, 200, 403, 200, 404, 403)

V = "/api/v1"
laser = lambda w: w.laser.pk  # noqa: E731
emission = lambda w: w.emission.pk  # noqa: E731

ROWS: dict[str, Row] = {
    # Locations
    "locations list": Row("get", f"{V}/locations/", None, None, READERS),
    "location detail": Row("get", f"{V}/locations/{{id}}/", lambda w: w.room.pk, None, READERS),
    "location history": Row("get", f"{V}/locations/{{id}}/history/", lambda w: w.room.pk, None, LSO_INSPECTOR),
    "location create": Row("post", f"{V}/locations/", None, lambda w: {
        "code": "tst-102", "site": "Test Site", "building": "Alder Hall", "room": "102",
        "longest_dimension": "4.5 m"}, LSO_CREATE),
    "location edit": Row("patch", f"{V}/locations/{{id}}/", lambda w: w.room.pk, lambda w: {
        "longest_dimension": "7.5 m", "has_warning_light": True}, LSO_WRITE, needs_if_match=True),
    "location sign": Row("get", f"{V}/locations/{{id}}/sign.pdf", lambda w: w.room.pk, None, READERS),
    "location replace": Row("put", f"{V}/locations/{{id}}/", lambda w: w.room.pk, lambda w: {
        "site": "Test Site", "building": "Alder Hall", "room": "101A", "is_controlled_area": True},
        LSO_WRITE, needs_if_match=True),
    # Lasers and their workflow
    # A laser user lists only the lasers they are authorized on (an empty page is still 200).
    "lasers list": Row("get", f"{V}/lasers/", None, None, EVERYONE),
    # The user's request on this laser is not approved yet: it is outside their scope.
    "laser detail": Row("get", f"{V}/lasers/{{id}}/", laser, None, _s(401, 200, 200, 200, 200, 404)),
    "laser detail (the user is authorized)": Row("get", f"{V}/lasers/{{id}}/", lambda w: w.authorized_laser.pk,
                                                 None, EVERYONE),
    "laser history": Row("get", f"{V}/lasers/{{id}}/history/", laser, None, OWNER_HISTORY),
    "laser label": Row("get", f"{V}/lasers/{{id}}/label.pdf", laser, None, READERS),
    "laser register": Row("post", f"{V}/lasers/", None, lambda w: {
        "asset_tag": "TST-0100", "laser_type": "diode", "labelled_class": "3R", "location": w.room.pk},
        _s(401, 201, 403, 201, 201, 403)),
    "laser edit": Row("patch", f"{V}/lasers/{{id}}/", laser, lambda w: {"description": "Moved to table 2."},
                      OWNER_WRITE, needs_if_match=True),
    "laser replace": Row("put", f"{V}/lasers/{{id}}/", laser, lambda w: {
        "laser_type": "solid_state", "labelled_class": "4", "owner": w.owner.pk,
        "location": w.room.pk, "description": "Re-described."}, OWNER_WRITE, needs_if_match=True),
    "laser submit": Row("post", f"{V}/lasers/{{id}}/submit/", lambda w: w.returned_laser.pk,
                        lambda w: {"note": "Divergence added."}, OWNER_WRITE),
    "laser approve": Row("post", f"{V}/lasers/{{id}}/approve/", lambda w: w.pending_laser.pk, lambda w: {},
                         LSO_WRITE),
    "laser return": Row("post", f"{V}/lasers/{{id}}/return/", lambda w: w.pending_laser.pk,
                        lambda w: {"comments": "State the beam diameter definition."}, LSO_WRITE),
    "laser status": Row("post", f"{V}/lasers/{{id}}/status/", laser,
                        lambda w: {"status": "in_storage", "note": "Lab refurbishment."}, LSO_WRITE),
    # Emissions and hazard results
    "emissions list": Row("get", f"{V}/emissions/", None, None, READERS),
    "emission detail": Row("get", f"{V}/emissions/{{id}}/", emission, None, READERS),
    "emission history": Row("get", f"{V}/emissions/{{id}}/history/", emission, None, OWNER_HISTORY),
    # The outsider may not attach an emission to another's laser: the laser id is refused.
    "emission create": Row("post", f"{V}/emissions/", None, lambda w: {
        "laser": w.laser.pk, "wavelength": "1064 nm", "temporal_mode": "cw", "average_power": "0.5 W",
        "beam_diameter": "3 mm", "divergence": "0.8 mrad"}, _s(401, 201, 403, 201, 400, 403)),
    "emission edit": Row("patch", f"{V}/emissions/{{id}}/", emission, lambda w: {"average_power": "1.5 W"},
                         OWNER_WRITE, needs_if_match=True),
    "emission replace": Row("put", f"{V}/emissions/{{id}}/", emission, lambda w: {
        "wavelength": "532 nm", "temporal_mode": "cw", "average_power": "1 W", "beam_diameter": "2 mm",
        "divergence": "1 mrad"}, OWNER_WRITE, needs_if_match=True),
    "hazard results list": Row("get", f"{V}/hazard-results/", None, None, READERS),
    "hazard result detail": Row("get", f"{V}/hazard-results/{{id}}/", lambda w: w.result.pk, None, READERS),
    "hazard result working": Row("get", f"{V}/hazard-results/{{id}}/working/", lambda w: w.result.pk, None,
                                 READERS),
    "hazard result history": Row("get", f"{V}/hazard-results/{{id}}/history/", lambda w: w.result.pk, None,
                                 LSO_INSPECTOR),
    # People: researchers see their own group only, users themselves only
    "people list": Row("get", f"{V}/people/", None, None, EVERYONE),
    "person create": Row("post", f"{V}/people/", None, lambda w: {
        "username": "nia", "first_name": "Nia", "last_name": "Orme", "role": "user",
        "research_group": w.owner.research_group_id, "supervisor": w.owner.pk}, LSO_CREATE),
    "person detail (the user)": Row("get", f"{V}/people/{{id}}/", lambda w: w.user.pk, None,
                                    _s(401, 200, 200, 200, 404, 200)),
    "person history": Row("get", f"{V}/people/{{id}}/history/", lambda w: w.user.pk, None, LSO_INSPECTOR),
    "person edit": Row("patch", f"{V}/people/{{id}}/", lambda w: w.user.pk, lambda w: {"role": "researcher"},
                       LSO_WRITE, needs_if_match=True),
    "person replace": Row("put", f"{V}/people/{{id}}/", lambda w: w.user.pk, lambda w: {
        "role": "user", "research_group": w.outsider.research_group_id, "supervisor": w.outsider.pk},
        LSO_WRITE, needs_if_match=True),
    # Training
    "training list": Row("get", f"{V}/training-records/", None, None, EVERYONE),
    "training detail": Row("get", f"{V}/training-records/{{id}}/", lambda w: w.training.pk, None,
                           _s(401, 200, 200, 200, 404, 200)),
    "training history": Row("get", f"{V}/training-records/{{id}}/history/", lambda w: w.training.pk, None,
                            LSO_INSPECTOR),
    "training retire": Row("post", f"{V}/training-records/{{id}}/retire/", lambda w: w.training.pk,
                  lambda w: {"reason": "Recorded twice."}, LSO_WRITE),
    "training record": Row("post", f"{V}/training-records/", None, lambda w: {
        "person": w.owner.pk, "course": "refresher", "completed_on": "2026-11-02", "valid_until": "2028-11-02",
        "evidence": "Attendance list R-17"}, LSO_CREATE),
    "training edit": Row("patch", f"{V}/training-records/{{id}}/", lambda w: w.training.pk,
                         lambda w: {"evidence": "Certificate GS-2291"}, LSO_WRITE, needs_if_match=True),
    "training replace": Row("put", f"{V}/training-records/{{id}}/", lambda w: w.training.pk, lambda w: {
        "course": "refresher", "completed_on": "2026-10-01", "valid_until": "2028-10-01",
        "evidence": "Portal import 2026-10"}, LSO_WRITE, needs_if_match=True),
    # Authorizations
    "authorizations list": Row("get", f"{V}/authorizations/", None, None, EVERYONE),
    "authorization detail": Row("get", f"{V}/authorizations/{{id}}/", lambda w: w.authorization.pk, None,
                                _s(401, 200, 200, 200, 404, 200)),
    "authorization prerequisites": Row("get", f"{V}/authorizations/{{id}}/prerequisites/",
                                       lambda w: w.authorization.pk, None, _s(401, 200, 200, 200, 404, 200)),
    "authorization history": Row("get", f"{V}/authorizations/{{id}}/history/", lambda w: w.authorization.pk,
                                 None, LSO_INSPECTOR),
    # The outsider may request only for their own group: the owner is refused as a person.
    "authorization request": Row("post", f"{V}/authorizations/", None,
                                 lambda w: {"person": w.owner.pk, "laser": w.laser.pk},
                                 _s(401, 201, 403, 201, 400, 403)),
    "authorization approve": Row("post", f"{V}/authorizations/{{id}}/approve/", lambda w: w.authorization.pk,
                                 lambda w: {"valid_until": "2027-12-31"}, LSO_WRITE),
    "authorization refuse": Row("post", f"{V}/authorizations/{{id}}/refuse/", lambda w: w.authorization.pk,
                                lambda w: {"reason": "Supervision not arranged."}, LSO_WRITE),
    "authorization withdraw": Row("post", f"{V}/authorizations/{{id}}/withdraw/", lambda w: w.authorization.pk,
                                  None, _s(401, 200, 403, 200, 404, 403)),
    # The request is not approved yet, so the LSO passes the permission check and meets the workflow's 409.
    "authorization revoke": Row("post", f"{V}/authorizations/{{id}}/revoke/", lambda w: w.authorization.pk,
                                lambda w: {"reason": "Left the group."}, _s(401, 409, 403, 403, 403, 403)),
    "authorization retire": Row("post", f"{V}/authorizations/{{id}}/retire/", lambda w: w.authorization.pk,
                                lambda w: {"reason": "Entered in error."}, LSO_WRITE),
    # SOPs
    "sops list": Row("get", f"{V}/sops/", None, None, EVERYONE),
    "sop detail": Row("get", f"{V}/sops/{{id}}/", lambda w: w.sop.pk, None, EVERYONE),
    "sop history": Row("get", f"{V}/sops/{{id}}/history/", lambda w: w.sop.pk, None, LSO_INSPECTOR),
    "sop upload": Row("post", f"{V}/sops/", None, lambda w: {"laser": w.laser.pk, "title": "Alignment"},
                      _s(401, 201, 403, 201, 400, 403)),
    "sop retire": Row("post", f"{V}/sops/{{id}}/retire/", lambda w: w.draft_sop.pk,
                  lambda w: {"reason": "Recorded twice."}, LSO_WRITE),
    # The owner of the laser corrects their draft; the outsider's role may edit, not this SOP.
    "sop edit": Row("patch", f"{V}/sops/{{id}}/", lambda w: w.draft_sop.pk, lambda w: {"review_due": "2027-06-30"},
                    OWNER_WRITE, needs_if_match=True),
    "sop replace": Row("put", f"{V}/sops/{{id}}/", lambda w: w.draft_sop.pk, lambda w: {
        "title": "Operating the test laser, third draft", "version": 3, "review_due": "2027-06-30"},
        OWNER_WRITE, needs_if_match=True),
    "sop approve": Row("post", f"{V}/sops/{{id}}/approve/", lambda w: w.draft_sop.pk, lambda w: {}, LSO_WRITE),
    "sop acknowledge": Row("post", f"{V}/sops/{{id}}/acknowledge/", lambda w: w.sop.pk, None,
                           _s(401, 201, 403, 201, 201, 201)),
    # The world's SOPs have no document: 404 to everyone who may read them (test_sop_documents
    # serves real files, and refuses them to those who may not).
    "sop document": Row("get", f"{V}/sops/{{id}}/document/", lambda w: w.sop.pk, None, _s(401, 404, 404, 404, 404, 404)),
    # Eyewear
    "eyewear list": Row("get", f"{V}/eyewear/", None, None, READERS),
    "eyewear detail": Row("get", f"{V}/eyewear/{{id}}/", lambda w: w.eyewear.pk, None, READERS),
    "eyewear history": Row("get", f"{V}/eyewear/{{id}}/history/", lambda w: w.eyewear.pk, None, LSO_INSPECTOR),
    "eyewear create": Row("post", f"{V}/eyewear/", None, lambda w: {
        "inventory_tag": "TST-EW-2", "location": w.room.pk, "markings": [
            {"wavelength_min": "1000 nm", "wavelength_max": "1100 nm", "en207_conditions": "D",
             "en207_scale": 5}]}, LSO_CREATE),
    "eyewear retire": Row("post", f"{V}/eyewear/{{id}}/retire/", lambda w: w.eyewear.pk,
                  lambda w: {"reason": "Recorded twice."}, LSO_WRITE),
    "eyewear edit": Row("patch", f"{V}/eyewear/{{id}}/", lambda w: w.eyewear.pk, lambda w: {"quantity": 3},
                        LSO_WRITE, needs_if_match=True),
    "eyewear replace": Row("put", f"{V}/eyewear/{{id}}/", lambda w: w.eyewear.pk, lambda w: {
        "manufacturer": "Lumen Shield", "model_name": "LS-2", "description": "goggles for 532 nm, spare pair",
        "location": w.room.pk, "quantity": 2}, LSO_WRITE, needs_if_match=True),
    "eyewear inspect": Row("post", f"{V}/eyewear/{{id}}/inspect/", lambda w: w.eyewear.pk,
                           lambda w: {"condition": "worn"}, LSO_WRITE),
    "eyewear markings": Row("post", f"{V}/eyewear/{{id}}/markings/", lambda w: w.eyewear.pk, lambda w: {
        "markings": [{"wavelength_min": "515 nm", "wavelength_max": "545 nm", "optical_density": 5}]}, LSO_WRITE),
    # Audits and findings
    "audits list": Row("get", f"{V}/audits/", None, None, LSO_INSPECTOR),
    "audit detail": Row("get", f"{V}/audits/{{id}}/", lambda w: w.running_audit.pk, None, LSO_INSPECTOR),
    "audit history": Row("get", f"{V}/audits/{{id}}/history/", lambda w: w.running_audit.pk, None, LSO_INSPECTOR),
    "audit report pdf": Row("get", f"{V}/audits/{{id}}/report.pdf", lambda w: w.running_audit.pk, None,
                            LSO_INSPECTOR),
    "audit report json": Row("get", f"{V}/audits/{{id}}/report.json", lambda w: w.running_audit.pk, None,
                             LSO_INSPECTOR),
    "audit plan": Row("post", f"{V}/audits/", None, lambda w: {
        "reference": "TST-AUD-9", "scope": "location", "location": w.room.pk, "auditor": w.lso.pk,
        "planned_on": "2027-01-15", "questions": ["Is the door sign posted?"]}, LSO_CREATE),
    "audit retire": Row("post", f"{V}/audits/{{id}}/retire/", lambda w: w.planned_audit.pk,
                  lambda w: {"reason": "Recorded twice."}, LSO_WRITE),
    "audit edit": Row("patch", f"{V}/audits/{{id}}/", lambda w: w.planned_audit.pk,
                      lambda w: {"planned_on": "2027-02-01", "lasers": [w.laser.pk]}, LSO_WRITE, needs_if_match=True),
    "audit replace": Row("put", f"{V}/audits/{{id}}/", lambda w: w.running_audit.pk, lambda w: {
        "scope": "site", "site": "Test Site", "planned_on": "2026-12-01", "auditor": w.lso.pk, "lasers": []},
        LSO_WRITE, needs_if_match=True),
    "audit start": Row("post", f"{V}/audits/{{id}}/start/", lambda w: w.planned_audit.pk, lambda w: {}, LSO_WRITE),
    "audit answer": Row("post", f"{V}/audits/{{id}}/answer/", lambda w: w.running_audit.pk,
                        lambda w: {"position": 1, "answer": "fail", "comment": "One dump missing.", "finding": {
                            "severity": "minor", "corrective_action": "Fit a dump.", "owner": w.owner.pk,
                            "due_on": "2027-01-31"}}, LSO_WRITE),
    "audit raise finding": Row("post", f"{V}/audits/{{id}}/findings/", lambda w: w.running_audit.pk, lambda w: {
        "severity": "major", "description": "Interlock bypassed.", "owner": w.owner.pk}, LSO_CREATE),
    "audit sign off": Row("post", f"{V}/audits/{{id}}/sign-off/", lambda w: w.answered_audit.pk,
                          lambda w: {"summary": "Site in order."}, LSO_WRITE),
    "findings list": Row("get", f"{V}/findings/", None, None, READERS),
    "finding detail": Row("get", f"{V}/findings/{{id}}/", lambda w: w.finding.pk, None, OWNER_DETAIL),
    "finding history": Row("get", f"{V}/findings/{{id}}/history/", lambda w: w.finding.pk, None, LSO_INSPECTOR),
    # The finding's action owner closes it; the outsider cannot even see it.
    "finding retire": Row("post", f"{V}/findings/{{id}}/retire/", lambda w: w.finding.pk,
                  lambda w: {"reason": "Recorded twice."}, LSO_WRITE),
    "finding edit": Row("patch", f"{V}/findings/{{id}}/", lambda w: w.finding.pk,
                        lambda w: {"due_on": "2027-01-31"}, LSO_WRITE, needs_if_match=True),
    "finding replace": Row("put", f"{V}/findings/{{id}}/", lambda w: w.finding.pk, lambda w: {
        "corrective_action": "Fit a beam dump at the second mirror.", "owner": w.owner.pk, "due_on": "2027-01-31"},
        LSO_WRITE, needs_if_match=True),
    "finding close": Row("post", f"{V}/findings/{{id}}/close/", lambda w: w.finding.pk,
                         lambda w: {"evidence": "Dump fitted, photo in the lab log p. 14."},
                         _s(401, 200, 403, 200, 404, 403)),
    # Incidents
    "incidents list": Row("get", f"{V}/incidents/", None, None, READERS),
    "incident detail": Row("get", f"{V}/incidents/{{id}}/", lambda w: w.incident.pk, None, OWNER_DETAIL),
    "incident history": Row("get", f"{V}/incidents/{{id}}/history/", lambda w: w.incident.pk, None, LSO_INSPECTOR),
    "incident report": Row("post", f"{V}/incidents/", None, lambda w: {
        "reference": "TST-INC-9", "kind": "near_miss", "occurred_at": "2026-11-30T10:00:00Z",
        "description": "Beam block slipped.", "laser": w.laser.pk}, _s(401, 201, 201, 201, 201, 400)),
    # The user may name only a laser they can see: the one they are authorized on.
    "incident report (the user's laser)": Row("post", f"{V}/incidents/", None, lambda w: {
        "reference": "TST-INC-8", "kind": "near_miss", "occurred_at": "2026-11-30T10:00:00Z",
        "description": "Goggles found scratched.", "laser": w.authorized_laser.pk}, EVERYONE_CREATE),
    "incident retire": Row("post", f"{V}/incidents/{{id}}/retire/", lambda w: w.incident.pk,
                  lambda w: {"reason": "Recorded twice."}, LSO_WRITE),
    "incident edit": Row("patch", f"{V}/incidents/{{id}}/", lambda w: w.incident.pk,
                         lambda w: {"description": "A stray reflection from mirror M3 reached the door."},
                         REPORTER_WRITE, needs_if_match=True),
    "incident replace": Row("put", f"{V}/incidents/{{id}}/", lambda w: w.incident.pk, lambda w: {
        "kind": "near_miss", "occurred_at": "2026-11-29T09:30:00Z", "description": "Reflection from M3.",
        "laser": w.laser.pk, "location": w.room.pk, "people_involved": [w.user.pk]},
        REPORTER_WRITE, needs_if_match=True),
    "incident investigate": Row("post", f"{V}/incidents/{{id}}/investigate/", lambda w: w.incident.pk, None,
                                LSO_WRITE),
    "incident close": Row("post", f"{V}/incidents/{{id}}/close/", lambda w: w.investigated_incident.pk,
                          lambda w: {"follow_up": "Goggle hooks fitted by the door."}, LSO_WRITE),
    # Evaluation, sign-in, schema and docs
    "evaluate": Row("post", f"{V}/evaluate/", None, lambda w: {
        "wavelength": "532 nm", "power": "5 mW", "beam_diameter": "2 mm", "divergence": "1 mrad"}, EVERYONE),
    "schema": Row("get", f"{V}/schema/", None, None, _s(200, 200, 200, 200, 200, 200)),
    # A wrong password is refused the same way for everyone (token sign-in needs no session).
    "token sign-in": Row("post", f"{V}/auth/token/", None, lambda w: {"username": "ada", "password": "wrong"},
                         _s(400, 400, 400, 400, 400, 400)),
}


CASES = [(name, persona, expected) for name, row in ROWS.items() for persona, expected in zip(PERSONAS, row.statuses)]


@pytest.mark.parametrize(("name", "persona", "expected"), CASES,
                         ids=[f"{name}-{persona}" for name, persona, _expected in CASES])
def test_each_persona_gets_the_expected_status_and_refusals_change_nothing(
        name: str, persona: str, expected: int, api_world: World, db: None) -> None:
    # One test per row and persona, so that xdist spreads the matrix over the workers; the
    # register is built once per module (api_world) and each case's writes are rolled back.
    row = ROWS[name]
    # Sign-in throttling counts attempts in the cache; each case starts with none.
    cache.clear()
    headers = {}
    if row.needs_if_match:
        headers["HTTP_IF_MATCH"] = api_world.client("lso").get(row.path(api_world))["ETag"]
    before = register_state()
    client = api_world.client(persona)
    body = row.body(api_world) if row.body else None
    response = getattr(client, row.method)(row.path(api_world), body, format="json", **headers)
    assert response.status_code == expected, response.content[:400]
    if expected >= 400:
        assert register_state() == before, "a refused request changed the register"


def test_every_operation_is_in_the_matrix() -> None:
    schema = SchemaGenerator().get_schema(request=None, public=True)
    operations = {(method, path) for path, item in schema["paths"].items() for method in item
                  if method in {"get", "post", "put", "patch", "delete"}}
    covered = {(row.method, row.template) for row in ROWS.values()}
    assert operations - covered == set()


# OPTIONS describes only the writes the caller's role may make.

@pytest.mark.parametrize(("persona", "described"), [("lso", True), ("owner", True), ("user", False), ("inspector", False)])
def test_the_create_form_is_described_only_to_roles_that_may_create(
        persona: str, described: bool, api_world: World, db: None) -> None:
    response = api_world.client(persona).options("/api/v1/sops/")
    assert response.status_code == 200
    assert ("POST" in response.json().get("actions", {})) is described


def test_the_edit_form_of_a_laser_is_described_to_its_owner_not_to_an_outsider(api_world: World, db: None) -> None:
    url = f"/api/v1/lasers/{api_world.laser.pk}/"
    assert "PUT" in api_world.client("owner").options(url).json()["actions"]
    assert "actions" not in api_world.client("outsider").options(url).json()


DETAILS = sorted({row.template for row in ROWS.values() if row.template.endswith("{id}/")})


def test_the_matrix_has_the_detail_routes() -> None:
    assert len(DETAILS) > 10


@pytest.mark.parametrize("template", DETAILS)
def test_nothing_can_be_deleted_over_http(template: str, api_world: World, db: None) -> None:
    # Lasers and compliance records are retired, never deleted (issue 2): no DELETE route.
    row = next(row for row in ROWS.values() if row.template == template)
    before = register_state()
    response = api_world.client("lso").delete(row.path(api_world))
    assert response.status_code == 405
    assert register_state() == before
