"""The admin as an LSO uses it: every model listed, filters, search, inline emissions,
history pages, and no delete button on retained records."""
from __future__ import annotations

import pytest
from django.apps import apps
from django.contrib import admin
from django.test import Client
from django.urls import reverse

from hazards.limits import LIMIT_SETS
from registry.models import Authorization, Laser, Person
from registry.services import person_create
from tests import factories

pytestmark = pytest.mark.django_db


@pytest.fixture
def lso_client(client: Client) -> Client:
    lso = person_create(username="holloway", role="lso", password="demo-pass-1")
    client.force_login(lso.user)
    return client


@pytest.fixture
def inspector_client(client: Client) -> Client:
    inspector = person_create(username="abbott", role="inspector")
    client.force_login(inspector.user)
    return client


def _changelist(model: type) -> str:
    return reverse(f"admin:registry_{model._meta.model_name}_changelist")


REGISTERED = [model for model in admin.site._registry if model._meta.app_label == "registry"]


def test_every_registry_model_has_an_admin() -> None:
    models = {model for model in apps.get_app_config("registry").get_models()
              if not model.__name__.startswith("Historical")}
    assert models == set(REGISTERED)


@pytest.mark.parametrize("model", REGISTERED, ids=[model.__name__ for model in REGISTERED])
def test_an_lso_can_open_every_list(lso_client: Client, model: type) -> None:
    response = lso_client.get(_changelist(model))
    assert response.status_code == 200
    assert response.context["cl"].model is model


def test_lasers_filter_by_class_status_location_and_owner(lso_client: Client) -> None:
    owner = factories.PersonFactory.create(role="researcher")
    room = factories.LocationFactory.create()
    wanted = factories.LaserFactory.create(labelled_class="4", status="active", owner=owner, location=room)
    factories.LaserFactory.create(labelled_class="3B", status="active")
    factories.LaserFactory.create(labelled_class="4", status="in_storage", owner=owner, location=room)
    response = lso_client.get(_changelist(Laser), {"labelled_class": "4", "status": "active",
                                                   "location__id__exact": room.pk, "owner__id__exact": owner.pk})
    assert response.status_code == 200
    assert list(response.context["cl"].result_list) == [wanted]


@pytest.mark.parametrize("term_of", [lambda laser: laser.asset_tag, lambda laser: laser.model_name,
                                     lambda laser: laser.serial_number])
def test_lasers_are_found_by_asset_tag_model_or_serial(lso_client: Client, term_of: object) -> None:
    wanted = factories.LaserFactory.create(model_name="Tessaline 80", serial_number="CP-4471")
    factories.LaserFactory.create(model_name="Other", serial_number="ZZ-0001")
    response = lso_client.get(_changelist(Laser), {"q": term_of(wanted)})  # type: ignore[operator]
    assert list(response.context["cl"].result_list) == [wanted]


def test_the_laser_page_shows_its_emissions_inline_and_no_delete(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create(label="second harmonic")
    response = lso_client.get(reverse("admin:registry_laser_change", args=[emission.laser.pk]))
    assert response.status_code == 200
    assert "second harmonic" in response.content.decode()
    assert [formset.opts.model.__name__ for formset in response.context["inline_admin_formsets"]] == ["Emission"]
    assert response.context["has_delete_permission"] is False


def test_the_laser_history_page_lists_each_change(lso_client: Client) -> None:
    laser = factories.LaserFactory.create(status="active")
    laser.status_note = "Moved"
    laser.save()
    response = lso_client.get(reverse("admin:registry_laser_history", args=[laser.pk]))
    assert response.status_code == 200
    assert len(response.context["page_obj"].object_list) == 2
    assert response.context["page_obj"].object_list[0].status_note == "Moved"


def test_an_inspector_can_read_but_not_change(inspector_client: Client) -> None:
    laser = factories.LaserFactory.create()
    assert inspector_client.get(_changelist(Laser)).status_code == 200
    response = inspector_client.post(reverse("admin:registry_laser_change", args=[laser.pk]),
                                     {"asset_tag": "HACKED"})
    assert response.status_code == 403
    laser.refresh_from_db()
    assert laser.asset_tag != "HACKED"


def test_a_laser_user_has_no_admin_access(client: Client) -> None:
    user = factories.PersonFactory.create(role="user")
    client.force_login(user.user)
    response = client.get(_changelist(Laser))
    assert response.status_code == 302
    assert Person.objects.count() == 1


def test_the_approve_action_runs_the_review_and_reports_refusals(lso_client: Client) -> None:
    ready = factories.LaserFactory.create(status="pending_review")
    factories.HazardResultFactory.create(emission=factories.EmissionFactory.create(laser=ready))
    empty = factories.LaserFactory.create(status="pending_review")
    response = lso_client.post(_changelist(Laser), {"action": "approve_registrations",
                                                    "_selected_action": [ready.pk, empty.pk]}, follow=True)
    texts = [str(message) for message in response.context["messages"]]
    assert f"{empty}: {empty.asset_tag} has no emission; add its beam parameters first." in texts
    assert "Lasers approved: 1." in texts
    ready.refresh_from_db()
    empty.refresh_from_db()
    assert (ready.status, empty.status) == ("active", "pending_review")


def test_the_authorization_action_refuses_missing_prerequisites(lso_client: Client) -> None:
    request = factories.AuthorizationFactory.create()
    response = lso_client.post(_changelist(Authorization), {"action": "approve_requests",
                                                            "_selected_action": [request.pk]}, follow=True)
    texts = [str(message) for message in response.context["messages"]]
    assert any("has no valid general laser safety training" in text for text in texts)
    request.refresh_from_db()
    assert request.status == "requested"


def test_emissions_saved_in_the_admin_are_assessed(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create()
    assert not emission.hazard_results.exists()
    response = lso_client.post(reverse("admin:registry_emission_change", args=[emission.pk]), {
        "laser": emission.laser.pk, "label": "output", "wavelength_m": "5.32e-07", "temporal_mode": "cw",
        "average_power_W": "0.02", "beam_diameter_m": "0.001", "diameter_definition": "1/e2",
        "divergence_rad": "0.001", "source_size_rad": "0",
    })
    assert response.status_code == 302
    emission.refresh_from_db()
    assert emission.average_power_W == 0.02
    assert emission.hazard_results.count() == len(LIMIT_SETS)


def test_the_admin_is_headed_as_the_pages_name_it(lso_client: Client) -> None:
    page = lso_client.get("/admin/").content.decode()
    assert "Beamkeeper back office" in page
    assert "Django administration" not in page
