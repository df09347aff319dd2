"""A small register for the API tests, built through the services like real data.

Personas (STYLE 8: owner, member, outsider): the LSO, an inspector, a researcher who owns
the lasers under test (group "optics"), a researcher of another group who owns one other
laser, and a laser user in the owner's group with current training, the SOP read and an
authorization request pending, who is authorized on one other laser of the owner.
"""
from __future__ import annotations

import datetime
from dataclasses import dataclass

from django.apps import apps
from django.utils import timezone
from rest_framework.test import APIClient

from registry import services
from registry.models import (
    SOP,
    Audit,
    Authorization,
    Emission,
    Eyewear,
    Finding,
    HazardResult,
    Incident,
    Laser,
    Location,
    Person,
    TrainingRecord,
)

PERSONAS = ("anonymous", "lso", "inspector", "owner", "outsider", "user")


@dataclass
class World:
    lso: Person
    inspector: Person
    owner: Person
    outsider: Person
    user: Person
    room: Location
    laser: Laser
    emission: Emission
    result: HazardResult
    pending_laser: Laser
    returned_laser: Laser
    other_laser: Laser
    authorized_laser: Laser
    training: TrainingRecord
    sop: SOP
    draft_sop: SOP
    authorization: Authorization
    eyewear: Eyewear
    planned_audit: Audit
    running_audit: Audit
    answered_audit: Audit
    finding: Finding
    incident: Incident
    investigated_incident: Incident

    def person(self, persona: str) -> Person | None:
        return None if persona == "anonymous" else getattr(self, persona)

    def client(self, persona: str) -> APIClient:
        client = APIClient()
        person = self.person(persona)
        if person is not None:
            client.force_authenticate(user=person.user)
        return client


def build_world() -> World:
    today = timezone.localdate()
    optics = services.research_group_create(slug="optics", name="Beam Optics Group")
    plasma = services.research_group_create(slug="plasma", name="Plasma Diagnostics Group")
    lso = services.person_create(username="ada", role="lso", first_name="Ada", last_name="Quill")
    inspector = services.person_create(username="ivo", role="inspector", first_name="Ivo", last_name="Marsh")
    owner = services.person_create(username="rhea", role="researcher", research_group=optics,
                                   first_name="Rhea", last_name="Tallis")
    outsider = services.person_create(username="otto", role="researcher", research_group=plasma,
                                      first_name="Otto", last_name="Venn")
    user = services.person_create(username="uma", role="user", research_group=optics, supervisor=owner,
                                  first_name="Uma", last_name="Pell")
    room = services.location_create(code="tst-101", site="Test Site", building="Alder Hall", room="101",
                                    by=lso, is_controlled_area=True, longest_dimension_m="6 m")

    laser = _active_laser(asset_tag="TST-0001", owner=owner, room=room, by=lso)
    emission = laser.emissions.get()
    # Computed by the emission services (registry.services.hazards).
    result = emission.hazard_results.get(limits="icnirp2013")
    pending_laser = services.laser_register(by=owner, asset_tag="TST-0002", laser_type="diode",
                                            labelled_class="3B", owner=owner, location=room)
    services.emission_create(laser=pending_laser, by=owner, wavelength_m="405 nm", temporal_mode="cw",
                             average_power_W="100 mW", beam_diameter_m="1 mm", divergence_rad="1 mrad")
    returned_laser = services.laser_register(by=owner, asset_tag="TST-0003", laser_type="gas",
                                             labelled_class="2", owner=owner, location=room)
    services.laser_return(laser=returned_laser, by=lso, comments="Add the emission's divergence.")
    other_laser = _active_laser(asset_tag="TST-0004", owner=outsider, room=room, by=lso)

    training = services.training_record(person=user, course="general", completed_on=today - datetime.timedelta(days=30),
                                        valid_until=today + datetime.timedelta(days=700), by=lso, verified_by=lso)
    sop = services.sop_create(laser=laser, title="Operating the test laser", by=owner)
    sop = services.sop_approve(sop=sop, by=lso)
    services.sop_acknowledge(sop=sop, person=user)
    draft_sop = services.sop_create(laser=laser, title="Operating the test laser, revised", by=owner)
    authorization = services.authorization_request(person=user, laser=laser, by=owner)
    authorized_laser = _active_laser(asset_tag="TST-0005", owner=owner, room=room, by=lso)
    authorized_sop = services.sop_approve(sop=services.sop_create(laser=authorized_laser, title="Operating TST-0005",
                                                                  by=owner), by=lso)
    services.sop_acknowledge(sop=authorized_sop, person=user)
    services.authorization_approve(
        authorization=services.authorization_request(person=user, laser=authorized_laser, by=owner), by=lso)
    eyewear = services.eyewear_create(
        inventory_tag="TST-EW-1", location=room, by=lso, description="goggles for 532 nm",
        markings=[{"wavelength_min_m": "520 nm", "wavelength_max_m": "540 nm", "optical_density": 4.0}])

    planned_audit = services.audit_plan(reference="TST-AUD-1", scope="location", location=room, auditor=lso,
                                        planned_on=today, by=lso, questions=["Is the warning light working?"])
    running_audit = services.audit_plan(reference="TST-AUD-2", scope="location", location=room, auditor=lso,
                                        planned_on=today, by=lso, questions=["Are beam dumps in place?"])
    services.audit_start(audit=running_audit, by=lso)
    answered_audit = services.audit_plan(reference="TST-AUD-3", scope="site", site="Test Site", auditor=lso,
                                         planned_on=today, by=lso)
    services.audit_start(audit=answered_audit, by=lso)
    # Starting drew the class 4 lasers' control measures; all pass, so the audit can be signed off.
    for item in answered_audit.checklist.all():
        services.audit_answer(item=item, answer="pass", by=lso)
    finding = services.finding_raise(audit=running_audit, severity="minor", description="A beam dump is missing.",
                                     owner=owner, laser=laser, by=lso)
    incident = services.incident_report(reference="TST-INC-1", kind="near_miss", occurred_at=timezone.now(),
                                        description="A stray reflection reached the door.", reported_by=owner,
                                        laser=laser)
    investigated_incident = services.incident_report(
        reference="TST-INC-2", kind="near_miss", occurred_at=timezone.now(), description="Goggles left off.",
        reported_by=owner, laser=laser)
    services.incident_investigate(incident=investigated_incident, by=lso)

    return World(
        lso=lso, inspector=inspector, owner=owner, outsider=outsider, user=user, room=room, laser=laser,
        emission=emission, result=result, pending_laser=pending_laser, returned_laser=returned_laser,
        other_laser=other_laser, authorized_laser=authorized_laser, training=training, sop=sop, draft_sop=draft_sop, authorization=authorization,
        eyewear=eyewear, planned_audit=planned_audit, running_audit=running_audit, answered_audit=answered_audit,
        finding=finding, incident=incident, investigated_incident=investigated_incident,
    )


def _active_laser(*, asset_tag: str, owner: Person, room: Location, by: Person) -> Laser:
    laser = services.laser_register(by=owner, asset_tag=asset_tag, laser_type="solid_state", labelled_class="4",
                                    owner=owner, location=room, manufacturer="Testbench Optics", model_name="TB-532")
    services.emission_create(laser=laser, by=owner, wavelength_m="532 nm", temporal_mode="cw",
                             average_power_W="2 W", beam_diameter_m="2 mm", divergence_rad="1 mrad")
    return services.laser_approve(laser=laser, by=by)


def register_state() -> dict[str, int]:
    """Row counts of every model of the register and of the token table, history included.

    A refused write must leave all of them as they were.
    """
    counts = {model._meta.label: model._default_manager.count() for model in apps.get_app_config("registry").get_models()}
    counts["authtoken.Token"] = apps.get_model("authtoken", "Token").objects.count()
    return counts

