"""Laser and emission services: registration, the review and status workflow, units, history."""
from __future__ import annotations

import pytest
from django.utils import timezone
from django.core.exceptions import PermissionDenied, ValidationError

from registry.models import Emission, Laser, LaserStatus, RecordRetainedError
from registry.services import (
    PrerequisiteError,
    StateError,
    TransitionError,
    emission_create,
    emission_update,
    laser_approve,
    laser_register,
    laser_retire,
    laser_return,
    laser_set_status,
    laser_submit,
    laser_update,
)
from tests import factories

pytestmark = pytest.mark.django_db


@pytest.fixture
def lso() -> factories.Person:
    return factories.PersonFactory.create(role="lso", research_group=None)


@pytest.fixture
def researcher() -> factories.Person:
    return factories.PersonFactory.create(role="researcher")


def test_a_registered_laser_waits_for_review(researcher: factories.Person) -> None:
    location = factories.LocationFactory.create()
    laser = laser_register(by=researcher, asset_tag="NEW-1", laser_type="diode", labelled_class="3B",
                           owner=researcher, location=location)
    laser.refresh_from_db()
    assert laser.status == LaserStatus.PENDING_REVIEW
    assert laser.history.count() == 1
    assert laser.history.first().history_user == researcher.user


def test_registration_refuses_a_hazardous_laser_without_a_room(researcher: factories.Person) -> None:
    with pytest.raises(ValidationError) as raised:
        laser_register(by=researcher, asset_tag="NEW-2", laser_type="diode", labelled_class="4", owner=researcher)
    assert raised.value.messages == [
        "A class 3B or 4 laser (or one embedding such a laser) needs an owner and a location until it is disposed "
        "of or transferred."]
    assert not Laser.objects.filter(asset_tag="NEW-2").exists()


def test_registration_refuses_fields_that_belong_to_the_workflow(researcher: factories.Person) -> None:
    with pytest.raises(ValidationError) as raised:
        laser_register(by=researcher, asset_tag="NEW-3", laser_type="diode", labelled_class="2", status="active")
    assert "status" in raised.value.message_dict
    assert not Laser.objects.filter(asset_tag="NEW-3").exists()


def test_the_lso_approves_a_laser_with_an_emission(lso: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review")
    factories.HazardResultFactory.create(emission=factories.EmissionFactory.create(laser=laser))
    laser_approve(laser=laser, by=lso)
    laser.refresh_from_db()
    assert laser.status == LaserStatus.ACTIVE
    assert laser.history.first().history_user == lso.user


def test_a_class_3b_laser_whose_emission_cannot_be_assessed_is_not_approved_and_the_reason_is_given(
        lso: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review", labelled_class="3B")
    emission_create(laser=laser, by=None, wavelength_m="405 nm", temporal_mode="cw", average_power_W="100 mW",
                    beam_diameter_m="1 mm")  # no divergence: the engine cannot assess it
    with pytest.raises(PrerequisiteError) as raised:
        laser_approve(laser=laser, by=lso)
    assert ": full-angle divergence (rad): needed to assess" in raised.value.message_dict["emissions"][0]
    laser.refresh_from_db()
    assert laser.status == LaserStatus.PENDING_REVIEW


def test_a_class_2_laser_is_approved_without_an_assessment(lso: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review", labelled_class="2", embedded_class="")
    factories.EmissionFactory.create(laser=laser, average_power_W=0.9e-3)
    laser_approve(laser=laser, by=lso)
    laser.refresh_from_db()
    assert laser.status == LaserStatus.ACTIVE


def test_approval_is_refused_without_an_emission(lso: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review")
    with pytest.raises(ValidationError) as raised:
        laser_approve(laser=laser, by=lso)
    assert "has no emission" in raised.value.message_dict["emissions"][0]
    laser.refresh_from_db()
    assert laser.status == LaserStatus.PENDING_REVIEW


def test_a_researcher_cannot_approve_a_laser(researcher: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review")
    factories.EmissionFactory.create(laser=laser)
    with pytest.raises(PermissionDenied, match="Only a laser safety officer may approve a laser"):
        laser_approve(laser=laser, by=researcher)
    laser.refresh_from_db()
    assert laser.status == LaserStatus.PENDING_REVIEW


def test_a_returned_laser_goes_back_to_review_when_resubmitted(lso: factories.Person,
                                                                researcher: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review", owner=researcher)
    laser_return(laser=laser, by=lso, comments="Add the divergence.")
    laser.refresh_from_db()
    assert (laser.status, laser.review_comments) == (LaserStatus.RETURNED, "Add the divergence.")
    laser_submit(laser=laser, by=researcher)
    laser.refresh_from_db()
    assert laser.status == LaserStatus.PENDING_REVIEW
    assert [row.status for row in laser.history.order_by("history_date")] == [
        "pending_review", "returned", "pending_review"]


def test_returning_a_laser_needs_a_comment(lso: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review")
    with pytest.raises(ValidationError) as raised:
        laser_return(laser=laser, by=lso, comments="  ")
    assert raised.value.message_dict == {"review_comments": ["A comment for the owner is required."]}


@pytest.mark.parametrize(("current", "target"), [
    ("pending_review", "in_storage"),
    ("returned", "out_of_service"),
])
def test_an_illegal_status_change_is_refused_with_the_allowed_moves(current: str, target: str) -> None:
    laser = factories.LaserFactory.create(status=current, owner=None, location=None, labelled_class="2")
    with pytest.raises(TransitionError) as raised:
        laser_set_status(laser=laser, by=laser_owner_or_new(laser), status=target)
    message = raised.value.message_dict["status"][0]
    assert f"cannot go from '{current}' to '{target}'" in message
    laser.refresh_from_db()
    assert laser.status == current


@pytest.mark.parametrize(("current", "target"), [("disposed", "active"), ("transferred", "in_storage")])
def test_a_retired_laser_takes_no_status_change_and_the_refusal_names_its_status(current: str, target: str) -> None:
    laser = factories.LaserFactory.create(status=current, owner=None, location=None, labelled_class="2")
    with pytest.raises(StateError) as raised:
        laser_set_status(laser=laser, by=laser_owner_or_new(laser), status=target)
    assert f"is {current}: a disposed or transferred laser" in raised.value.message_dict["status"][0]
    laser.refresh_from_db()
    assert laser.status == current


def laser_owner_or_new(laser: Laser) -> factories.Person:
    return laser.owner or factories.PersonFactory.create(role="researcher")


def test_a_laser_moves_between_service_statuses(researcher: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="active", owner=researcher)
    laser_set_status(laser=laser, by=researcher, status="in_storage", note="Lab refurbishment")
    laser_set_status(laser=laser, by=researcher, status="active")
    laser.refresh_from_db()
    assert laser.status == LaserStatus.ACTIVE
    assert laser.history.count() == 3


def test_retirement_goes_through_laser_retire(lso: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="active")
    with pytest.raises(ValidationError, match="Use laser_retire"):
        laser_set_status(laser=laser, by=lso, status="disposed")
    laser_retire(laser=laser, by=lso, status="transferred", reason="Moved to a partner institute.")
    laser.refresh_from_db()
    assert laser.status == LaserStatus.TRANSFERRED
    assert laser.retired_on is not None
    assert laser.status_note == "Moved to a partner institute."
    with pytest.raises(StateError, match="is transferred"):
        laser_retire(laser=laser, by=lso, status="disposed", reason="again")


def test_a_laser_is_never_deleted() -> None:
    laser = factories.LaserFactory.create()
    with pytest.raises(RecordRetainedError, match="never deleted"):
        laser.delete()
    with pytest.raises(RecordRetainedError):
        Laser.objects.filter(pk=laser.pk).delete()
    assert Laser.objects.filter(pk=laser.pk).exists()


def test_emission_quantities_accept_units_and_are_stored_in_si(researcher: factories.Person) -> None:
    laser = factories.LaserFactory.create(status="pending_review")
    emission = emission_create(
        laser=laser, by=researcher, label="fundamental", wavelength_m="1064 nm", temporal_mode="q_switched",
        average_power_W="8.5 W", pulse_energy_J="850 mJ", pulse_duration_s="8 ns", prf_Hz="10 Hz",
        beam_diameter_m="9 mm", divergence_rad="0.5 mrad",
    )
    emission.refresh_from_db()
    assert emission.wavelength_m == pytest.approx(1.064e-6)
    assert emission.pulse_energy_J == pytest.approx(0.85)
    assert emission.pulse_duration_s == pytest.approx(8e-9)
    assert emission.beam_diameter_m == pytest.approx(9e-3)
    assert emission.divergence_rad == pytest.approx(5e-4)
    assert emission.source_size_rad == 0.0


@pytest.mark.parametrize(("field", "value", "expected"), [
    ("wavelength_m", "532 mW", "is not a length"),
    ("average_power_W", "5 parsecs", "is not a power"),
    ("pulse_duration_s", "ten ns", "cannot read"),
    ("prf_Hz", "10 zorks", "unknown unit"),
])
def test_a_bad_quantity_names_its_field(researcher: factories.Person, field: str, value: str, expected: str) -> None:
    laser = factories.LaserFactory.create()
    fields = {"wavelength_m": "532 nm", "temporal_mode": "cw", "average_power_W": "5 mW", field: value}
    with pytest.raises(ValidationError) as raised:
        emission_create(laser=laser, by=researcher, **fields)
    assert list(raised.value.message_dict) == [field]
    assert expected in raised.value.message_dict[field][0]
    assert not Emission.objects.filter(laser=laser).exists()


def test_a_pulse_longer_than_its_period_is_refused_before_the_database(researcher: factories.Person) -> None:
    emission = factories.EmissionFactory.create()
    with pytest.raises(ValidationError) as raised:
        emission_update(emission=emission, by=researcher, temporal_mode="repetitive", pulse_duration_s="2 ms",
                        prf_Hz="1 kHz", pulse_energy_J="1 mJ")
    # The engine's rule (hazards.assessment.inputs), the one every way in applies.
    assert raised.value.message_dict == {
        "pulse_duration_s": ["2 ms is not shorter than the pulse period 1 ms at 1 kHz (a train needs gaps between pulses)"]}
    emission.refresh_from_db()
    assert emission.temporal_mode == "cw"


@pytest.mark.parametrize("status", ["disposed", "transferred"])
def test_a_retired_laser_and_its_emissions_are_not_changed(lso: factories.Person, status: str) -> None:
    emission = factories.EmissionFactory.create(laser__status=status, laser__retired_on="2024-01-31")
    laser = emission.laser
    history = (laser.history.count(), emission.history.count())
    with pytest.raises(StateError, match="a disposed or transferred laser and its emissions, SOPs and authorizations are read-only"):
        laser_update(laser=laser, by=lso, description="found again")
    with pytest.raises(StateError):
        emission_update(emission=emission, by=lso, average_power_W="20 mW")
    with pytest.raises(StateError):
        emission_create(laser=laser, by=lso, wavelength_m="1064 nm", temporal_mode="cw", average_power_W="1 W")
    laser.refresh_from_db()
    emission.refresh_from_db()
    assert laser.description == ""
    assert emission.average_power_W == 0.01
    assert laser.emissions.count() == 1
    assert (laser.history.count(), emission.history.count()) == history


def test_retiring_a_laser_closes_every_authorization_on_it(lso: factories.Person) -> None:
    laser = factories.LaserFactory.create()
    decided = {"decided_by": lso, "decided_at": timezone.now()}
    approved = factories.AuthorizationFactory.create(laser=laser, status="approved", **decided)
    requested = factories.AuthorizationFactory.create(laser=laser, status="requested")
    withdrawn = factories.AuthorizationFactory.create(laser=laser, status="withdrawn", **decided)
    laser_retire(laser=laser, by=lso, status="disposed", reason="Cracked rod, not worth repairing.")
    for record in (approved, requested, withdrawn):
        record.refresh_from_db()
    assert (approved.status, requested.status, withdrawn.status) == ("revoked", "refused", "withdrawn")
    assert approved.decision_reason == f"{laser.asset_tag} was disposed: Cracked rod, not worth repairing."
    assert approved.history.first().history_user == lso.user
