"""Roles: the person's role decides the Django group, staff access and who sees whom."""
from __future__ import annotations

import datetime

import pytest
from django.core.exceptions import PermissionDenied
from django.utils import timezone

from registry.models import Person
from registry.selectors import people_visible_to, training_expiring
from registry.services import person_create, person_set_role
from registry.services.people import ROLE_GROUP_NAMES
from tests import factories

pytestmark = pytest.mark.django_db


def test_a_new_person_gets_the_group_and_staff_flag_of_their_role() -> None:
    lso = person_create(username="holloway", role="lso", first_name="Maren", password="s3cret-enough")
    inspector = person_create(username="abbott", role="inspector")
    user = person_create(username="okoro", role="user")
    assert [group.name for group in lso.user.groups.all()] == [ROLE_GROUP_NAMES["lso"]]
    assert (lso.user.is_staff, inspector.user.is_staff, user.user.is_staff) == (True, True, False)
    assert lso.user.has_perm("registry.change_laser")
    assert lso.user.has_perm("registry.view_finding")
    assert not lso.user.has_perm("registry.delete_laser")
    assert inspector.user.has_perm("registry.view_laser")
    assert not inspector.user.has_perm("registry.change_laser")
    assert not user.user.has_perm("registry.view_laser")
    assert not inspector.user.has_usable_password()
    assert lso.user.check_password("s3cret-enough")


def test_changing_a_role_moves_the_account_to_the_new_group() -> None:
    lso = person_create(username="holloway", role="lso")
    person = person_create(username="okoro", role="user")
    person_set_role(person=person, role="inspector", by=lso)
    person.user.refresh_from_db()
    assert [group.name for group in person.user.groups.all()] == [ROLE_GROUP_NAMES["inspector"]]
    assert person.user.is_staff
    assert [row.role for row in person.history.order_by("history_date")] == ["user", "inspector"]


def test_only_an_lso_changes_roles() -> None:
    researcher = person_create(username="calloway", role="researcher")
    person = person_create(username="okoro", role="user")
    with pytest.raises(PermissionDenied):
        person_set_role(person=person, role="lso", by=researcher)
    person.refresh_from_db()
    assert person.role == "user"


def test_researchers_see_their_own_group_and_users_only_themselves() -> None:
    own_group, other_group = factories.ResearchGroupFactory.create_batch(2)
    researcher = factories.PersonFactory.create(role="researcher", research_group=own_group)
    colleague = factories.PersonFactory.create(role="user", research_group=own_group)
    outsider = factories.PersonFactory.create(role="user", research_group=other_group)
    lso = factories.PersonFactory.create(role="lso", research_group=None)
    assert set(people_visible_to(viewer=researcher)) == {researcher, colleague}
    assert list(people_visible_to(viewer=colleague)) == [colleague]
    assert set(people_visible_to(viewer=lso)) == {researcher, colleague, outsider, lso}
    assert outsider not in people_visible_to(viewer=researcher)


def test_training_expiring_within_a_window() -> None:
    today = timezone.localdate()
    soon = factories.TrainingRecordFactory.create(valid_until=today + datetime.timedelta(days=10))
    factories.TrainingRecordFactory.create(valid_until=today + datetime.timedelta(days=40))
    factories.TrainingRecordFactory.create(valid_until=today - datetime.timedelta(days=1))
    assert list(training_expiring(within_days=30)) == [soon]


def test_a_person_prints_as_their_name() -> None:
    person = factories.PersonFactory.create(user__first_name="Lena", user__last_name="Okoro")
    assert str(person) == "Lena Okoro"
    assert Person.Role.LSO.label == "laser safety officer"
