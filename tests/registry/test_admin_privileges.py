"""No privilege escalation through the admin: the LSO keeps accounts but cannot raise one
(their own or another's) to superuser or staff, give groups or raw permissions, take over a
superuser's account, add accounts past person_create, or delete register records."""
from __future__ import annotations

from typing import Any

import pytest
from django.contrib.auth import get_user_model
from django.contrib.auth.models import Group, Permission
from django.test import Client
from django.urls import reverse

from registry.models import Location, Person
from registry.services import person_create
from tests import factories

pytestmark = pytest.mark.django_db

User = get_user_model()


@pytest.fixture
def lso(client: Client) -> Person:
    person = person_create(username="holloway", role="lso", email="holloway@campus.example")
    client.force_login(person.user)
    return person


def _account_form(user: Any, **changes: Any) -> dict[str, Any]:
    """The change form of an account as the browser would post it, with ``changes``."""
    data = {
        "username": user.username, "first_name": user.first_name, "last_name": user.last_name,
        "email": user.email, "is_active": "on", "is_staff": "on", "is_superuser": "on",
        "groups": [group.pk for group in Group.objects.all()],
        "user_permissions": [permission.pk for permission in Permission.objects.filter(codename__startswith="delete_")],
        "last_login_0": "", "last_login_1": "", "date_joined_0": "2026-01-01", "date_joined_1": "00:00:00",
    }
    data.update(changes)
    return data


def test_an_lso_cannot_make_their_own_account_superuser(client: Client, lso: Person) -> None:
    url = reverse("admin:auth_user_change", args=[lso.user.pk])
    page = client.get(url)
    assert page.status_code == 200
    # Shown to read, not as inputs.
    form_fields = set(page.context["adminform"].form.fields)
    assert not form_fields & {"is_superuser", "is_staff", "groups", "user_permissions"}

    response = client.post(url, _account_form(lso.user, first_name="Changed"))
    assert response.status_code == 302
    lso.user.refresh_from_db()
    assert lso.user.first_name == "Changed"
    assert (lso.user.is_superuser, lso.user.is_staff) == (False, True)
    assert list(lso.user.groups.values_list("name", flat=True)) == ["Laser safety officers"]
    assert not lso.user.user_permissions.exists()


def test_an_lso_cannot_make_a_researcher_staff_or_give_them_groups(client: Client, lso: Person) -> None:
    researcher = person_create(username="okafor", role="researcher")
    response = client.post(reverse("admin:auth_user_change", args=[researcher.user.pk]),
                           _account_form(researcher.user, email="okafor@campus.example"))
    assert response.status_code == 302
    researcher.user.refresh_from_db()
    assert researcher.user.email == "okafor@campus.example"
    assert (researcher.user.is_superuser, researcher.user.is_staff) == (False, False)
    assert list(researcher.user.groups.values_list("name", flat=True)) == ["Researchers"]
    assert not researcher.user.user_permissions.exists()


def test_an_lso_cannot_change_a_superusers_account_or_password(client: Client, lso: Person) -> None:
    root = User.objects.create_superuser("root", "root@campus.example", "a-long-root-passphrase")
    response = client.post(reverse("admin:auth_user_change", args=[root.pk]),
                           _account_form(root, email="lso@campus.example"))
    assert response.status_code == 403
    response = client.post(reverse("admin:auth_user_password_change", args=[root.pk]),
                           {"password1": "taken-over-9931", "password2": "taken-over-9931"})
    assert response.status_code == 403
    root.refresh_from_db()
    assert root.email == "root@campus.example"
    assert root.check_password("a-long-root-passphrase")


def test_an_lso_adds_accounts_only_with_their_person(client: Client, lso: Person) -> None:
    response = client.post(reverse("admin:auth_user_add"),
                           {"username": "ghost", "password1": "ghost-pass-8841", "password2": "ghost-pass-8841"})
    assert response.status_code == 403
    assert not User.objects.filter(username="ghost").exists()


def test_an_lso_cannot_move_a_person_to_another_account(client: Client, lso: Person) -> None:
    page = client.get(reverse("admin:registry_person_change", args=[lso.pk]))
    assert page.status_code == 200
    assert not {"user", "role"} & set(page.context["adminform"].form.fields)


@pytest.mark.parametrize("make", [
    lambda: factories.LocationFactory.create(),
    lambda: factories.EmissionFactory.create(),
    lambda: factories.ResearchGroupFactory.create(),
    lambda: person_create(username="dunmore", role="user").user,
], ids=["location", "emission", "research group", "account"])
def test_an_lso_deletes_nothing_even_with_delete_permissions(client: Client, lso: Person, make: Any) -> None:
    record = make()
    # Even were the role's group given delete permissions, the admin keeps deleting for superusers.
    lso.user.groups.get().permissions.add(*Permission.objects.filter(codename__startswith="delete_"))
    opts = record._meta
    response = client.post(reverse(f"admin:{opts.app_label}_{opts.model_name}_delete", args=[record.pk]),
                           {"post": "yes"})
    assert response.status_code == 403
    response = client.post(reverse(f"admin:{opts.app_label}_{opts.model_name}_changelist"),
                           {"action": "delete_selected", "_selected_action": [record.pk], "post": "yes"})
    assert type(record).objects.filter(pk=record.pk).exists()


def test_emission_inlines_offer_no_delete_to_an_lso(client: Client, lso: Person) -> None:
    emission = factories.EmissionFactory.create()
    page = client.get(reverse("admin:registry_laser_change", args=[emission.laser.pk]))
    assert page.status_code == 200
    [emissions] = page.context["inline_admin_formsets"]
    assert emissions.has_delete_permission is False


def test_a_command_line_superuser_may_delete_a_location(client: Client) -> None:
    root = User.objects.create_superuser("root", "root@campus.example", "a-long-root-passphrase")
    client.force_login(root)
    room = factories.LocationFactory.create()
    response = client.post(reverse("admin:registry_location_delete", args=[room.pk]), {"post": "yes"})
    assert response.status_code == 302
    assert not Location.objects.filter(pk=room.pk).exists()
