"""Each room's stored standing says what the room's own computation says, after a change made
through any way in: the API, the admin, the pages, the import command and the services."""
from __future__ import annotations

import datetime
import io
import threading
from unittest import mock
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from django.apps import apps
from django.core.management import call_command
from django.db import connection
from django.db.migrations.loader import MigrationLoader
from django.test import Client, TransactionTestCase
from django.urls import reverse
from rest_framework.test import APIClient

from hazards.limits import LIMIT_SETS
from registry import selectors, services
from registry.apps import fill_missing_standings
from registry.models import Eyewear, Laser, Location, RoomStanding
from registry.services.standings import room_standings_batch, room_standings_refresh
from tests import factories

pytestmark = pytest.mark.django_db


def _fresh(room: Location, limits: str) -> dict[str, Any]:
    """What the room's page computes from the register, as a standing holds it."""
    hazards = selectors.room_hazards(locations=[room], limits=limits)[0]
    largest = hazards.largest[1] if hazards.largest else None
    return {"lasers": len(hazards.lasers), "unprotected": len(hazards.matrix.unprotected),
            "beyond_room": len(hazards.beyond_room),
            "largest": (largest.nohd_m, largest.nohd_unbounded) if largest else (None, False)}


def _stored(room: Location, limits: str) -> dict[str, Any]:
    standing = RoomStanding.objects.filter(location=room, limits=limits).first()
    if standing is None:
        return {"lasers": 0, "unprotected": 0, "beyond_room": 0, "largest": (None, False)}
    return {"lasers": standing.lasers, "unprotected": standing.unprotected, "beyond_room": standing.beyond_room,
            "largest": (standing.largest_nohd_m, standing.largest_nohd_unbounded)}


def assert_standings_current() -> None:
    """Every room's stored standing, under every limit set, equals a computation from the register now."""
    for room in Location.objects.all():
        for limits in LIMIT_SETS:
            assert _stored(room, limits) == _fresh(room, limits), (room, limits)


class Campus:
    """Two rooms through the services: a 4 m lab with a 2 W and a 100 mW laser of the same 532 nm beam and
    no eyewear, and a 30 m hall with goggles for 532 nm."""

    def __init__(self) -> None:
        self.lso = services.person_create(username="ada", role="lso", first_name="Ada", last_name="Quill")
        self.owner = services.person_create(username="rhea", role="researcher", first_name="Rhea", last_name="Tallis")
        self.lab = services.location_create(code="std-lab", site="Test Site", building="Birch Hall", room="1",
                                            by=self.lso, longest_dimension_m="4 m")
        self.hall = services.location_create(code="std-hall", site="Test Site", building="Birch Hall", room="2",
                                             by=self.lso, longest_dimension_m="30 m")
        self.strong = self.laser("STD-0001", "2 W")
        self.weak = self.laser("STD-0002", "100 mW")
        self.goggles = services.eyewear_create(
            inventory_tag="STD-EW-1", location=self.hall, by=self.lso, description="goggles for 532 nm",
            markings=[{"wavelength_min_m": "520 nm", "wavelength_max_m": "540 nm", "optical_density": 7.0}])

    def laser(self, asset_tag: str, power: str) -> Laser:
        laser = services.laser_register(by=self.owner, asset_tag=asset_tag, laser_type="solid_state",
                                        labelled_class="4", location=self.lab)
        services.emission_create(laser=laser, by=self.owner, wavelength_m="532 nm", temporal_mode="cw",
                                 average_power_W=power, beam_diameter_m="2 mm", divergence_rad="1 mrad")
        return services.laser_approve(laser=laser, by=self.lso)

    def standing(self, room: Location) -> RoomStanding:
        return RoomStanding.objects.get(location=room, limits=selectors.register_limits())

    def api(self) -> APIClient:
        client = APIClient()
        client.force_authenticate(user=self.lso.user)
        return client

    def patch(self, url: str, body: dict[str, Any]) -> None:
        client = self.api()
        response = client.patch(url, body, format="json", HTTP_IF_MATCH=client.get(url)["ETag"])
        assert response.status_code == 200, response.content

    def post(self, url: str, body: dict[str, Any]) -> None:
        response = self.api().post(url, body, format="json")
        assert response.status_code in (200, 201), response.content


@pytest.fixture
def campus() -> Campus:
    return Campus()


def test_the_services_store_each_room_s_counts_and_the_most_urgent_emissions_first(campus: Campus) -> None:
    assert_standings_current()
    lab = campus.standing(campus.lab)
    strong, weak = (laser.emissions.get() for laser in (campus.strong, campus.weak))
    # Both need eyewear (OD above 0) and none is kept in the lab. Same beam, 20 times the power: a higher
    # OD (OD = log10(exposure / MPE), EN 207 Annex B) and a longer NOHD (the beam's irradiance falls with
    # the square of the distance, IEC TR 60825-14), so the 2 W emission comes first in both lists.
    assert (lab.lasers, lab.unprotected, lab.beyond_room) == (2, 2, 2)
    assert lab.unprotected_first == [strong.pk, weak.pk]
    assert lab.beyond_room_first == [strong.pk, weak.pk]
    assert lab.unprotected_od_max == strong.hazard_results.get(limits=lab.limits).od_required
    hall = campus.standing(campus.hall)
    assert (hall.lasers, hall.unprotected, hall.beyond_room) == (0, 0, 0)


def test_the_first_emissions_a_standing_names_are_bounded_and_the_count_is_not(campus: Campus) -> None:
    for number in range(3, 10):
        campus.laser(f"STD-{number:04d}", f"{number} mW")
    lab = campus.standing(campus.lab)
    assert (lab.lasers, lab.unprotected, len(lab.unprotected_first), len(lab.beyond_room_first)) == (9, 9, 5, 5)
    assert lab.unprotected_first[0] == campus.strong.emissions.get().pk


def test_every_api_change_is_in_the_standing_at_once(campus: Campus) -> None:
    goggles, lab_url = f"/api/v1/eyewear/{campus.goggles.pk}/", f"/api/v1/locations/{campus.lab.pk}/"
    # The goggles (OD 7 at 532 nm) brought into the lab cover both emissions.
    campus.patch(goggles, {"location": campus.lab.pk})
    assert campus.standing(campus.lab).unprotected == 0
    assert_standings_current()
    # Damaged eyewear protects nobody.
    campus.post(f"{goggles}inspect/", {"condition": "damaged"})
    assert campus.standing(campus.lab).unprotected == 2
    assert_standings_current()
    campus.post(f"{goggles}inspect/", {"condition": "good"})
    campus.post(f"{goggles}retire/", {"reason": "Lenses scratched."})
    assert campus.standing(campus.lab).unprotected == 2
    assert_standings_current()
    # A room longer than every NOHD.
    campus.patch(lab_url, {"longest_dimension": "5 km"})
    assert campus.standing(campus.lab).beyond_room == 0
    assert_standings_current()
    # A laser moved to the hall leaves the lab's counts and enters the hall's.
    campus.patch(f"/api/v1/lasers/{campus.strong.pk}/", {"location": campus.hall.pk})
    assert (campus.standing(campus.lab).lasers, campus.standing(campus.hall).lasers) == (1, 1)
    assert_standings_current()
    # An emission turned down below its MPE needs no eyewear (OD 0).
    emission = campus.weak.emissions.get()
    campus.patch(f"/api/v1/emissions/{emission.pk}/", {"average_power": "1 uW"})
    assert campus.standing(campus.lab).unprotected == 0
    assert_standings_current()
    campus.post(f"/api/v1/lasers/{campus.weak.pk}/status/", {"status": "disposed", "note": "Sold."})
    assert campus.standing(campus.lab).lasers == 0
    assert_standings_current()


def test_a_laser_registered_with_several_emissions_refreshes_its_room_once(campus: Campus) -> None:
    """Each emission's assessment asks for the room's refresh; the registration computes the room once
    (one room_hazards call per limit set), and the standing counts every emission."""
    beam = {"temporal_mode": "cw", "beam_diameter_m": "2 mm", "divergence_rad": "1 mrad"}
    with mock.patch.object(selectors, "room_hazards", wraps=selectors.room_hazards) as computed:
        services.laser_register(by=campus.owner, asset_tag="STD-0003", laser_type="solid_state",
                                labelled_class="4", location=campus.lab,
                                emissions=[{**beam, "wavelength_m": f"{nm} nm", "average_power_W": "1 W"}
                                           for nm in (532, 1064, 808)])
    assert computed.call_count == len(LIMIT_SETS)
    assert_standings_current()
    assert campus.standing(campus.lab).lasers == 3


def test_a_failed_block_refreshes_nothing_and_a_nested_one_leaves_it_to_the_outer(campus: Campus) -> None:
    with mock.patch.object(selectors, "room_hazards", wraps=selectors.room_hazards) as computed:
        with pytest.raises(RuntimeError), room_standings_batch():
            room_standings_refresh(locations=[campus.lab.pk])
            raise RuntimeError("the write failed")
        assert computed.call_count == 0
        with room_standings_batch():
            with room_standings_batch():
                room_standings_refresh(locations=[campus.lab.pk])
            assert computed.call_count == 0
            room_standings_refresh(locations=[campus.hall.pk])
        assert computed.call_count == len(LIMIT_SETS)


def test_a_description_edit_leaves_the_standings_alone(campus: Campus) -> None:
    before = list(RoomStanding.objects.values_list("pk", "computed_at"))
    campus.patch(f"/api/v1/lasers/{campus.strong.pk}/", {"description": "Realigned."})
    assert list(RoomStanding.objects.values_list("pk", "computed_at")) == before


@pytest.fixture
def admin_client(client: Client, campus: Campus) -> Client:
    client.force_login(campus.lso.user)
    return client


def _change(client: Client, record: Any, **changes: Any) -> None:
    """Post the record's admin change form as shown, with ``changes``."""
    url = reverse(f"admin:registry_{record._meta.model_name}_change", args=[record.pk])
    page = client.get(url)
    data: dict[str, Any] = {}
    forms_on_page = [page.context["adminform"].form]
    for inline in page.context["inline_admin_formsets"]:
        forms_on_page += [inline.formset.management_form, *inline.formset.forms]
    for form in forms_on_page:
        for bound in form:
            value = bound.value()
            if value is not None and value is not False:
                data[bound.html_name] = value
    data.update(changes)
    response = client.post(url, data)
    assert response.status_code == 302, response.context["adminform"].form.errors if response.context else response


def test_every_admin_change_is_in_the_standing_at_once(campus: Campus, admin_client: Client) -> None:
    _change(admin_client, campus.goggles, location=campus.lab.pk)
    assert campus.standing(campus.lab).unprotected == 0
    assert_standings_current()
    _change(admin_client, Eyewear.objects.get(pk=campus.goggles.pk), condition="damaged")
    assert campus.standing(campus.lab).unprotected == 2
    assert_standings_current()
    _change(admin_client, campus.lab, longest_dimension_m="5 km")
    assert campus.standing(campus.lab).beyond_room == 0
    assert_standings_current()
    _change(admin_client, Laser.objects.get(pk=campus.strong.pk), location=campus.hall.pk)
    assert (campus.standing(campus.lab).lasers, campus.standing(campus.hall).lasers) == (1, 1)
    assert_standings_current()
    emission = campus.weak.emissions.get()
    _change(admin_client, emission, average_power_W="1 uW")
    assert campus.standing(campus.lab).unprotected == 0
    assert_standings_current()


def test_a_marking_deleted_in_the_admin_no_longer_protects(campus: Campus, client: Client) -> None:
    services.eyewear_update(eyewear=campus.goggles, by=campus.lso, location=campus.lab)
    assert campus.standing(campus.lab).unprotected == 0
    root = factories.UserFactory.create(is_superuser=True, is_staff=True)
    client.force_login(root)
    marking = campus.goggles.markings.get()
    response = client.post(reverse("admin:registry_eyewearmarking_delete", args=[marking.pk]), {"post": "yes"})
    assert response.status_code == 302
    assert campus.standing(campus.lab).unprotected == 2
    assert_standings_current()


def test_a_laser_registered_on_the_page_and_one_imported_on_the_command_line_count_at_once(
        campus: Campus, client: Client, tmp_path: Path) -> None:
    client.force_login(campus.owner.user)
    response = client.post("/lasers/new/", {
        "asset_tag": "STD-0100", "laser_type": "diode", "labelled_class": "3B", "location": str(campus.hall.pk),
        "emissions-TOTAL_FORMS": "1", "emissions-INITIAL_FORMS": "0", "emissions-MIN_NUM_FORMS": "1",
        "emissions-MAX_NUM_FORMS": "12", "emissions-0-wavelength_m": "532 nm", "emissions-0-temporal_mode": "cw",
        "emissions-0-average_power_W": "50 mW", "emissions-0-beam_diameter_m": "2 mm",
        "emissions-0-diameter_definition": "1/e2", "emissions-0-divergence_rad": "1 mrad", "submit": "1"})
    assert response.status_code == 302
    hall = campus.standing(campus.hall)
    # 50 mW of 532 nm is within the goggles' OD 7; its NOHD (tens of metres) exceeds the 30 m hall.
    assert (hall.lasers, hall.unprotected, hall.beyond_room) == (1, 0, 1)
    assert_standings_current()
    sheet = tmp_path / "lasers.csv"
    sheet.write_text("asset tag,laser type,class,status,building,room,owner,emission,mode,wavelength,"
                     "average power,beam diameter,divergence\n"
                     "STD-0200,solid state,4,active,Birch Hall,2,rhea,main,cw,1064 nm,1 W,2 mm,1 mrad\n",
                     encoding="utf-8")
    call_command("import_lasers", str(sheet), "--as", "ada", stdout=io.StringIO())
    hall = campus.standing(campus.hall)
    # The goggles are marked for 520-540 nm only: nothing protects against 1064 nm.
    assert (hall.lasers, hall.unprotected) == (2, 1)
    assert_standings_current()


def test_the_refresh_fills_rooms_written_without_the_services(campus: Campus) -> None:
    room = factories.LocationFactory.create(longest_dimension_m=2.0)
    laser = factories.LaserFactory.create(location=room, status="active")
    factories.HazardResultFactory.create(emission=factories.EmissionFactory.create(laser=laser), limits="icnirp2013",
                                         nohd_m=40.0, od_required=3.0)
    assert not RoomStanding.objects.filter(location=room).exists()
    room_standings_refresh(locations=[room.pk])
    assert_standings_current()
    assert (campus.standing(room).lasers, campus.standing(room).beyond_room) == (1, 1)


def test_a_migrate_that_applied_migrations_fills_the_rooms_without_a_standing(campus: Campus) -> None:
    """A database migrated to the standings (or restored from an older backup) has rooms with none."""
    RoomStanding.objects.filter(location=campus.lab).delete()
    registry = apps.get_app_config("registry")
    fill_missing_standings(registry, using="default", plan=None)  # flush sends no plan: nothing done
    assert not RoomStanding.objects.filter(location=campus.lab).exists()
    hall_computed_at = campus.standing(campus.hall).computed_at
    applied = [(MigrationLoader(connection).graph.nodes[("registry", "0012_room_standing")], False)]
    fill_missing_standings(registry, using="default", plan=applied)
    assert_standings_current()
    assert (campus.standing(campus.lab).lasers, campus.standing(campus.lab).unprotected) == (2, 2)
    assert campus.standing(campus.hall).computed_at == hall_computed_at  # a room that had one is left alone


def test_a_migrate_backwards_fills_nothing(campus: Campus) -> None:
    RoomStanding.objects.filter(location=campus.lab).delete()
    undone = [(MigrationLoader(connection).graph.nodes[("registry", "0012_room_standing")], True)]
    fill_missing_standings(apps.get_app_config("registry"), using="default", plan=undone)
    assert not RoomStanding.objects.filter(location=campus.lab).exists()


def test_the_campus_loader_stores_every_room_s_standing() -> None:
    from registry.services.campus import campus_load, campus_read

    campus_load(data=campus_read(), today=datetime.date(2026, 12, 2))
    assert RoomStanding.objects.count() == Location.objects.count() * len(LIMIT_SETS)
    assert_standings_current()


def _together(*steps: Callable[[], object]) -> None:
    """Run ``steps`` from one thread each, released together."""
    start = threading.Barrier(len(steps))

    def run(step: Callable[[], object]) -> None:
        try:
            start.wait()
            step()
        finally:
            connection.close()

    threads = [threading.Thread(target=run, args=(step,)) for step in steps]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()


@pytest.mark.skipif(connection.vendor != "postgresql", reason="row locks need PostgreSQL; SQLite runs one writer "
                                                              "at a time")
class SimultaneousChangesTests(TransactionTestCase):
    """Two changes to one room at the same moment: the standing written last has seen both."""

    def test_an_eyewear_inspection_and_a_laser_moving_out_at_once_both_reach_the_standing(self) -> None:
        campus = Campus()
        services.eyewear_update(eyewear=campus.goggles, by=campus.lso, location=campus.lab)
        for round_number in range(10):
            with self.subTest(round=round_number):
                condition = "damaged" if round_number % 2 == 0 else "good"
                room = campus.hall if round_number % 2 == 0 else campus.lab
                goggles = Eyewear.objects.get(pk=campus.goggles.pk)
                weak = Laser.objects.get(pk=campus.weak.pk)
                _together(lambda: services.eyewear_inspect(eyewear=goggles, by=campus.lso, condition=condition),
                          lambda: services.laser_update(laser=weak, by=campus.lso, location=room))
                assert_standings_current()
