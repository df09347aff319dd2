"""The checklist a class calls for (registry.services.checklist) and how answering it works.

Which control measure applies to which class follows the control-measure table of ANSI Z136.1
(as reproduced in university laser safety manuals) and IEC 60825-1 for labels; the mapping is
the register's reading of them, stated beside each measure in registry/services/checklist.py.
"""
from __future__ import annotations

import datetime

import pytest
from django.core.exceptions import ValidationError

from registry.models import Finding, Person
from registry.services import audit_answer, audit_plan, audit_start
from registry.services.checklist import checklist_for
from tests import factories

pytestmark = pytest.mark.django_db

HAZARDOUS_ROOM = ["signs_posted", "entry_controls_tested", "eyewear_adequate"]
HAZARDOUS_LASER = ["registered", "labelled", "sop_current", "users_authorized", "beams_terminated", "key_controlled"]


def controls(entries: list) -> list[tuple[str, str]]:
    return [(entry.control.code, entry.laser.asset_tag if entry.laser else entry.location.code) for entry in entries]


@pytest.mark.parametrize(("labelled", "embedded", "room_items", "laser_items"), [
    ("4", "", HAZARDOUS_ROOM, HAZARDOUS_LASER),
    ("3B", "", HAZARDOUS_ROOM, HAZARDOUS_LASER),
    ("3R", "", ["signs_posted"], ["labelled", "users_briefed", "beams_terminated"]),
    ("2", "", ["signs_posted"], ["labelled", "users_briefed"]),
    ("1M", "", [], ["labelled"]),
    ("1", "", [], []),
    # An enclosed class 4 laser is checked as class 4: the enclosure is opened for service.
    ("1", "4", HAZARDOUS_ROOM, HAZARDOUS_LASER),
])
def test_each_class_calls_for_its_control_measures(labelled: str, embedded: str, room_items: list[str],
                                                   laser_items: list[str]) -> None:
    laser = factories.LaserFactory.create(labelled_class=labelled, embedded_class=embedded)
    assert controls(checklist_for([laser])) == ([(code, laser.location.code) for code in room_items]
                                                + [(code, laser.asset_tag) for code in laser_items])


def test_a_rooms_items_follow_the_highest_class_in_it_and_rooms_come_in_order() -> None:
    room_a = factories.LocationFactory.create(building="A", room="1", code="a-1")
    room_b = factories.LocationFactory.create(building="B", room="1", code="b-1")
    pointer = factories.LaserFactory.create(asset_tag="P-1", labelled_class="2", location=room_b)
    diode = factories.LaserFactory.create(asset_tag="D-1", labelled_class="3B", location=room_b)
    marker = factories.LaserFactory.create(asset_tag="M-1", labelled_class="3R", location=room_a)
    assert controls(checklist_for([pointer, diode, marker])) == [
        ("signs_posted", "a-1"), ("labelled", "M-1"), ("users_briefed", "M-1"), ("beams_terminated", "M-1"),
        *[(code, "b-1") for code in HAZARDOUS_ROOM], *[(code, "D-1") for code in HAZARDOUS_LASER],
        ("labelled", "P-1"), ("users_briefed", "P-1"),
    ]


@pytest.fixture
def lso() -> Person:
    return factories.PersonFactory.create(role="lso", research_group=None)


def test_starting_an_audit_adds_the_scopes_control_measures_after_the_plans_questions(lso: Person) -> None:
    laser = factories.LaserFactory.create(labelled_class="4")
    factories.LaserFactory.create(labelled_class="4", location=laser.location, status="disposed", owner=None)
    audit = audit_plan(reference="AUD-C1", scope="location", location=laser.location, auditor=lso,
                       planned_on=datetime.date(2026, 12, 1), by=lso, questions=["Lab log kept?"])
    assert list(audit.checklist.values_list("question", flat=True)) == ["Lab log kept?"]
    audit_start(audit=audit, by=lso)
    items = list(audit.checklist.order_by("position"))
    # The disposed laser has left the register's care and is not checked.
    assert [(item.position, item.control, item.laser_id) for item in items] == [
        (1, "", None), *[(position, code, None) for position, code in enumerate(HAZARDOUS_ROOM, start=2)],
        *[(position, code, laser.pk) for position, code in enumerate(HAZARDOUS_LASER, start=5)]]
    assert items[1].location == laser.location
    assert items[4].question == f"{laser.asset_tag}: Registered: class, emissions, owner and room in the register " \
                                "match the laser"


def test_a_failed_item_raises_one_finding_with_its_follow_up(lso: Person) -> None:
    laser = factories.LaserFactory.create(labelled_class="4")
    owner = laser.owner
    audit = audit_plan(reference="AUD-C2", scope="lasers", lasers=[laser], auditor=lso,
                       planned_on=datetime.date(2026, 12, 1), by=lso)
    audit_start(audit=audit, by=lso)
    key = audit.checklist.get(control="key_controlled")
    with pytest.raises(ValidationError) as refused:
        audit_answer(item=key, answer="fail", comment="Key left in the controller.", by=lso)
    assert refused.value.message_dict == {
        "finding": ["A failed item raises a finding; give its severity, corrective_action, owner, due_on."]}
    key.refresh_from_db()
    assert (key.answer, Finding.objects.count()) == ("", 0)

    follow_up = {"severity": "minor", "corrective_action": "Keep the key in the lab safe.", "owner": owner,
                 "due_on": datetime.date(2026, 12, 15)}
    audit_answer(item=key, answer="fail", comment="Key left in the controller.", by=lso, finding=follow_up)
    finding = Finding.objects.get()
    assert (finding.checklist_item, finding.laser, finding.location, finding.severity, finding.owner,
            finding.due_on) == (key, laser, laser.location, "minor", owner, datetime.date(2026, 12, 15))
    assert finding.description.endswith(": Key left in the controller.")

    # Answered again, the item keeps the finding it raised; a second finding is refused.
    audit_answer(item=key, answer="fail", comment="Still in the controller.", by=lso)
    with pytest.raises(ValidationError, match="Only the first failure"):
        audit_answer(item=key, answer="fail", comment="Again.", by=lso, finding=follow_up)
    with pytest.raises(ValidationError, match="Only the first failure"):
        audit_answer(item=key, answer="pass", by=lso, finding=follow_up)
    key.refresh_from_db()
    assert (key.answer, key.comment, Finding.objects.count()) == ("fail", "Still in the controller.", 1)


def test_a_failure_needs_a_note_saying_what_failed(lso: Person) -> None:
    laser = factories.LaserFactory.create(labelled_class="3B")
    audit = audit_plan(reference="AUD-C3", scope="lasers", lasers=[laser], auditor=lso,
                       planned_on=datetime.date(2026, 12, 1), by=lso)
    audit_start(audit=audit, by=lso)
    item = audit.checklist.get(control="sop_current")
    with pytest.raises(ValidationError) as refused:
        audit_answer(item=item, answer="fail", comment=" ", by=lso, finding={
            "severity": "minor", "corrective_action": "Review the SOP.", "owner": laser.owner,
            "due_on": datetime.date(2026, 12, 15)})
    assert refused.value.message_dict == {"comment": ["A note saying what failed is required."]}
    assert Finding.objects.count() == 0
