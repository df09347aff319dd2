"""A room for the document tests, built through the services like real data.

Room lab-1 holds a class 4 Q-switched Nd:YAG (1064 nm) and a class 3B CW diode (808 nm), with
one pair of goggles rated for each; two users are authorized on the Nd:YAG, one of whom holds
general training that expires 400 days from now. The audit of the room is started (so its
checklist is drawn), one item failed with its finding, the rest passed.
"""
from __future__ import annotations

import datetime
from dataclasses import dataclass

from django.utils import timezone

from registry import services
from registry.models import Audit, Eyewear, Laser, Location, Person


@dataclass
class DocumentsWorld:
    lso: Person
    owner: Person
    lapsing: Person
    current: Person
    room: Location
    yag: Laser
    diode: Laser
    goggles_1064: Eyewear
    goggles_808: Eyewear
    audit: Audit
    training_expires_on: datetime.date


def build_documents_world() -> DocumentsWorld:
    today = timezone.localdate()
    lso = services.person_create(username="ada", role="lso", first_name="Ada", last_name="Quill", phone="+00 100 200")
    owner = services.person_create(username="rhea", role="researcher", first_name="Rhea", last_name="Tallis")
    lapsing = services.person_create(username="lars", role="user", first_name="Lars", last_name="Fenn")
    current = services.person_create(username="cora", role="user", first_name="Cora", last_name="Mill")
    room = services.location_create(code="lab-1", site="North Site", building="Alder Hall", room="101", by=lso,
                                    name="Pulsed laser laboratory", is_controlled_area=True, interlock="door_switch",
                                    has_warning_light=True, longest_dimension_m="7 m")
    yag = services.laser_register(by=owner, asset_tag="YAG-1", laser_type="solid_state", labelled_class="4",
                                  owner=owner, location=room, gain_medium="Nd:YAG", manufacturer="Holm Photonics",
                                  model_name="QX-10")
    services.emission_create(laser=yag, by=owner, label="fundamental", wavelength_m="1064 nm",
                             temporal_mode="q_switched", pulse_energy_J="100 mJ", pulse_duration_s="10 ns",
                             prf_Hz="10 Hz", average_power_W="1 W", beam_diameter_m="5 mm", divergence_rad="1 mrad")
    yag = services.laser_approve(laser=yag, by=lso)
    diode = services.laser_register(by=owner, asset_tag="DIO-1", laser_type="diode", labelled_class="3B",
                                    owner=owner, location=room, manufacturer="Holm Photonics", model_name="D-808")
    services.emission_create(laser=diode, by=owner, label="output", wavelength_m="808 nm", temporal_mode="cw",
                             average_power_W="300 mW", beam_diameter_m="2 mm", divergence_rad="2 mrad")
    diode = services.laser_approve(laser=diode, by=lso)
    goggles_1064 = services.eyewear_create(
        inventory_tag="EW-1064", location=room, by=lso, description="goggles for the Nd:YAG",
        markings=[{"wavelength_min_m": "1000 nm", "wavelength_max_m": "1100 nm", "optical_density": 7,
                   "en207_conditions": "DR", "en207_scale": 7}])
    goggles_808 = services.eyewear_create(
        inventory_tag="EW-808", location=room, by=lso, description="goggles for the diode",
        markings=[{"wavelength_min_m": "780 nm", "wavelength_max_m": "850 nm", "optical_density": 4,
                   "en207_conditions": "D", "en207_scale": 6}])

    sop = services.sop_approve(sop=services.sop_create(laser=yag, title="Operating the Nd:YAG", by=owner), by=lso)
    expires_on = today + datetime.timedelta(days=400)
    for person, valid_until in ((lapsing, expires_on), (current, today + datetime.timedelta(days=2000))):
        services.training_record(person=person, course="general", completed_on=today - datetime.timedelta(days=10),
                                 valid_until=valid_until, by=lso, verified_by=lso)
        services.sop_acknowledge(sop=sop, person=person)
        request = services.authorization_request(person=person, laser=yag, by=owner)
        services.authorization_approve(authorization=request, by=lso)

    audit = services.audit_plan(reference="AUD-LAB-1", scope="location", location=room, auditor=lso,
                                planned_on=today, period_start=today - datetime.timedelta(days=365),
                                period_end=today, by=lso, questions=["Is the lab log kept up to date?"])
    services.audit_start(audit=audit, by=lso, conducted_on=today)
    for item in audit.checklist.order_by("position"):
        if item.control == "beams_terminated" and item.laser == yag:
            services.audit_answer(item=item, answer="fail", comment="Second harmonic dump missing on table 2.",
                                  by=lso, finding={"severity": "major", "owner": owner,
                                                   "corrective_action": "Fit a water-cooled beam dump.",
                                                   "due_on": today + datetime.timedelta(days=14)})
        else:
            services.audit_answer(item=item, answer="pass", by=lso)
    return DocumentsWorld(lso=lso, owner=owner, lapsing=lapsing, current=current, room=room, yag=yag, diode=diode,
                          goggles_1064=goggles_1064, goggles_808=goggles_808, audit=audit,
                          training_expires_on=expires_on)
