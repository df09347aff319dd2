"""The database itself refuses rows that break the register's invariants.

Rows are written with Model.objects.create (through the factories), which skips
full_clean, so what is tested is the named CHECK/UNIQUE constraint in the schema, on
SQLite and on PostgreSQL alike. Both engines name the violated constraint in the error.
"""
from __future__ import annotations

from typing import Any

import pytest
from django.db import IntegrityError, transaction

from tests import factories

pytestmark = pytest.mark.django_db

# (factory, fields that break one rule, name of the constraint that must refuse the row)
REFUSED_ROWS: list[tuple[type[factories.factory.django.DjangoModelFactory], dict[str, Any], str]] = [
    (factories.EmissionFactory, {"average_power_W": 0.0}, "registry_emission_power_positive"),
    (factories.EmissionFactory, {"average_power_W": -0.005}, "registry_emission_power_positive"),
    (factories.EmissionFactory, {"pulse_energy_J": -1e-3, "temporal_mode": "single_pulse", "pulse_duration_s": 1e-8},
     "registry_emission_energy_positive"),
    (factories.EmissionFactory, {"temporal_mode": "q_switched", "pulse_duration_s": 0.0, "pulse_energy_J": 1e-3},
     "registry_emission_duration_positive"),
    (factories.EmissionFactory, {"prf_Hz": 0.0}, "registry_emission_prf_positive"),
    (factories.EmissionFactory, {"beam_diameter_m": -1e-3}, "registry_emission_diameter_positive"),
    (factories.EmissionFactory, {"divergence_rad": -1e-3}, "registry_emission_divergence_not_negative"),
    (factories.EmissionFactory, {"source_size_rad": -0.01}, "registry_emission_source_size_not_negative"),
    (factories.EmissionFactory, {"fibre_na": 1.2}, "registry_emission_fibre_na_in_range"),
    # The register's wavelength range is the limit sets' domain, 180 nm to 1 mm
    # (ICNIRP 2013, "Guidelines on limits of exposure to laser radiation of wavelengths
    # between 180 nm and 1,000 um", Health Phys. 105(3):271-295, scope).
    (factories.EmissionFactory, {"wavelength_m": 179e-9}, "registry_emission_wavelength_in_range"),
    (factories.EmissionFactory, {"wavelength_m": 1.001e-3}, "registry_emission_wavelength_in_range"),
    (factories.EmissionFactory, {"wavelength_max_m": 500e-9}, "registry_emission_wavelength_max_in_range"),
    # A 1 ms pulse cannot repeat at 10 kHz: the period is 0.1 ms.
    (factories.EmissionFactory, {"temporal_mode": "repetitive", "pulse_duration_s": 1e-3, "prf_Hz": 1e4,
                                 "pulse_energy_J": 1e-6}, "registry_emission_pulse_within_period"),
    (factories.EmissionFactory, {"temporal_mode": "q_switched", "pulse_duration_s": 1e-8, "average_power_W": None},
     "registry_emission_has_power_or_energy"),
    (factories.EmissionFactory, {"average_power_W": None, "pulse_energy_J": 1e-3},
     "registry_emission_cw_has_power"),
    (factories.EmissionFactory, {"temporal_mode": "q_switched", "pulse_energy_J": 1e-3},
     "registry_emission_pulsed_has_duration"),
    (factories.EmissionFactory, {"temporal_mode": "blinking"}, "registry_emission_temporal_mode_valid"),
    (factories.LaserFactory, {"labelled_class": "4", "owner": None}, "registry_laser_hazardous_has_owner_and_location"),
    (factories.LaserFactory, {"labelled_class": "3B", "location": None},
     "registry_laser_hazardous_has_owner_and_location"),
    (factories.LaserFactory, {"labelled_class": "1", "embedded_class": "4", "owner": None},
     "registry_laser_hazardous_has_owner_and_location"),
    (factories.LaserFactory, {"labelled_class": "5"}, "registry_laser_class_valid"),
    (factories.LaserFactory, {"status": "lost"}, "registry_laser_status_valid"),
    (factories.LaserFactory, {"retired_on": "2024-01-01"}, "registry_laser_retired_on_only_when_retired"),
    (factories.LocationFactory, {"longest_dimension_m": 0.0}, "registry_location_dimension_positive"),
    (factories.TrainingRecordFactory, {"completed_on": "2025-06-01", "valid_until": "2025-05-31"},
     "registry_trainingrecord_valid_after_completion"),
    (factories.TrainingRecordFactory, {"course": "equipment"}, "registry_trainingrecord_equipment_names_laser"),
    (factories.AuthorizationFactory, {"status": "approved"}, "registry_authorization_decision_has_decider"),
    (factories.SOPFactory, {"status": "approved"}, "registry_sop_approved_has_approver"),
    (factories.SentReminderFactory, {"kind": "weekly"}, "registry_sentreminder_kind_valid"),
    (factories.SOPFactory, {"version": 0}, "registry_sop_version_positive"),
    (factories.EyewearFactory, {"quantity": 0}, "registry_eyewear_quantity_positive"),
    (factories.EyewearMarkingFactory, {"optical_density": None}, "registry_eyewearmarking_has_od_or_lb"),
    (factories.EyewearMarkingFactory, {"wavelength_min_m": 600e-9}, "registry_eyewearmarking_band_in_range"),
    # EN 207:2017 scale numbers run LB1 to LB10.
    (factories.EyewearMarkingFactory, {"en207_conditions": "D", "en207_scale": 11},
     "registry_eyewearmarking_lb_scale_in_range"),
    (factories.EyewearMarkingFactory, {"en207_scale": 5}, "registry_eyewearmarking_lb_has_conditions"),
    (factories.FindingFactory, {"status": "closed"}, "registry_finding_closed_has_evidence"),
    (factories.AuditFactory, {"scope": "location", "location": None}, "registry_audit_location_scope_names_location"),
    (factories.AuditFactory, {"status": "signed_off"}, "registry_audit_signed_off_has_signatory"),
    (factories.IncidentFactory, {"status": "closed"}, "registry_incident_closed_has_follow_up"),
    (factories.HazardResultFactory, {"nohd_unbounded": True, "nohd_m": 12.0},
     "registry_hazardresult_unbounded_has_no_nohd"),
    (factories.HazardResultFactory, {"nohd_m": -1.0}, "registry_hazardresult_nohd_not_negative"),
    (factories.PersonFactory, {"role": "admin"}, "registry_person_role_valid"),
]


@pytest.mark.parametrize(("factory_class", "fields", "constraint"), REFUSED_ROWS,
                         ids=[case[2] + "-" + ",".join(case[1]) for case in REFUSED_ROWS])
def test_the_database_refuses_a_row_breaking_a_rule(
    factory_class: type[factories.factory.django.DjangoModelFactory], fields: dict[str, Any], constraint: str
) -> None:
    model = factory_class._meta.model
    before = model.objects.count()
    with pytest.raises(IntegrityError) as raised, transaction.atomic():
        factory_class.create(**fields)
    assert constraint in str(raised.value)
    assert model.objects.count() == before


# Rows exactly on an edge are legal: the checks are not stricter than the rules.
ACCEPTED_EDGE_ROWS: list[tuple[type[factories.factory.django.DjangoModelFactory], dict[str, Any]]] = [
    (factories.EmissionFactory, {"wavelength_m": 180e-9}),
    (factories.EmissionFactory, {"wavelength_m": 1e-3}),
    # A pulse as long as its period (duty cycle 1).
    (factories.EmissionFactory, {"temporal_mode": "repetitive", "pulse_duration_s": 1e-3, "prf_Hz": 1e3,
                                 "pulse_energy_J": 1e-5}),
    (factories.EmissionFactory, {"divergence_rad": 0.0}),
    (factories.LaserFactory, {"labelled_class": "4", "status": "disposed", "owner": None, "location": None,
                              "retired_on": "2024-01-01"}),
    (factories.LaserFactory, {"labelled_class": "2", "owner": None, "location": None}),
]


@pytest.mark.parametrize(("factory_class", "fields"), ACCEPTED_EDGE_ROWS)
def test_the_database_accepts_a_row_on_the_edge_of_a_rule(
    factory_class: type[factories.factory.django.DjangoModelFactory], fields: dict[str, Any]
) -> None:
    row = factory_class.create(**fields)
    row.refresh_from_db()
    for name, value in fields.items():
        stored = getattr(row, name)
        assert (str(stored) if name.endswith("_on") and stored else stored) == value


def test_two_lasers_cannot_share_an_asset_tag() -> None:
    factories.LaserFactory.create(asset_tag="T-DUP")
    with pytest.raises(IntegrityError) as raised, transaction.atomic():
        factories.LaserFactory.create(asset_tag="T-DUP")
    # SQLite names the column, PostgreSQL the index Django made for the field.
    assert "asset_tag" in str(raised.value)


def test_a_person_cannot_hold_two_open_authorizations_for_one_laser() -> None:
    first = factories.AuthorizationFactory.create()
    with pytest.raises(IntegrityError) as raised, transaction.atomic():
        factories.AuthorizationFactory.create(person=first.person, laser=first.laser, requested_by=first.requested_by)
    message = str(raised.value)
    # PostgreSQL names the partial unique index; SQLite names its columns.
    assert ("registry_authorization_one_open_per_person_laser" in message
            or "registry_authorization.person_id, registry_authorization.laser_id" in message)


def test_a_laser_has_only_one_approved_sop_at_a_time() -> None:
    approver = factories.PersonFactory.create(role="lso")
    first = factories.SOPFactory.create(status="approved", approved_on="2025-01-01", approved_by=approver)
    with pytest.raises(IntegrityError), transaction.atomic():
        factories.SOPFactory.create(laser=first.laser, status="approved", approved_on="2025-02-01",
                                    approved_by=approver)
    assert first.laser.sops.count() == 1


def test_one_hazard_result_per_emission_and_limit_set() -> None:
    result = factories.HazardResultFactory.create()
    with pytest.raises(IntegrityError), transaction.atomic():
        factories.HazardResultFactory.create(emission=result.emission, limits=result.limits)
    factories.HazardResultFactory.create(emission=result.emission, limits="eu2006")
    assert result.emission.hazard_results.count() == 2


def test_the_same_reminder_is_recorded_once_a_day() -> None:
    sent = factories.SentReminderFactory.create()
    with pytest.raises(IntegrityError) as raised, transaction.atomic():
        factories.SentReminderFactory.create(recipient=sent.recipient, kind=sent.kind, sent_on=sent.sent_on)
    message = str(raised.value)
    # PostgreSQL names the unique index; SQLite names its columns.
    assert ("registry_sentreminder_once_a_day" in message
            or "registry_sentreminder.recipient_id, registry_sentreminder.kind" in message)
    factories.SentReminderFactory.create(recipient=sent.recipient, kind="digest", sent_on=sent.sent_on)
    assert sent.recipient.reminders_received.count() == 2
