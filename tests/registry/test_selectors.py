"""Selectors load what their callers display in a fixed number of queries."""
from __future__ import annotations

import datetime

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.utils import timezone

from registry.selectors import (
    audit_list,
    audits_due,
    eyewear_inspections_due,
    laser_list,
    location_eyewear_matrix,
    room_eyewear_needs,
    room_laser_classes,
    signal_word,
    training_expiring,
)
from tests import factories

pytestmark = pytest.mark.django_db


def _touch_lasers() -> int:
    with CaptureQueriesContext(connection) as queries:
        for laser in laser_list():
            _ = (laser.owner.user.username, laser.owner.research_group.name, laser.location.room)
            for emission in laser.current_emissions:
                _ = [result.nohd_m for result in emission.current_results]
    return len(queries)


@pytest.mark.parametrize("lasers", [2, 6])
def test_a_laser_list_costs_three_queries_however_long(lasers: int) -> None:
    for _ in range(lasers):
        emission = factories.EmissionFactory.create()
        factories.EmissionFactory.create(laser=emission.laser, wavelength_m=1064e-9)
        factories.HazardResultFactory.create(emission=emission)
    # 1: lasers joined to owner, account, group and location; 2: their emissions; 3: the
    # emissions' hazard results.
    assert _touch_lasers() == 3


def test_an_audit_list_prefetches_lasers_checklist_and_findings() -> None:
    for _ in range(3):
        audit = factories.AuditFactory.create()
        audit.lasers.add(factories.LaserFactory.create())
        factories.AuditChecklistItemFactory.create(audit=audit)
        factories.FindingFactory.create(audit=audit)
    with CaptureQueriesContext(connection) as queries:
        for audit in audit_list():
            _ = (audit.auditor.user.username, audit.location.room, [laser.asset_tag for laser in audit.lasers.all()],
                 [item.question for item in audit.checklist.all()],
                 [(finding.owner.user.username, finding.laser) for finding in audit.findings.all()])
    # audits; lasers; checklist; findings (with owner, account, laser and location joined).
    assert len(queries) == 4


def _q_switched_room() -> tuple[object, object]:
    """A room with a 1064 nm Q-switched laser (100 mJ, 10 ns, 10 Hz, 5 mm at 1/e) assessed by the engine."""
    from registry.services import emission_create

    laser = factories.LaserFactory.create(labelled_class="4")
    emission = emission_create(laser=laser, by=None, label="fundamental", wavelength_m="1064 nm",
                               temporal_mode="q_switched", average_power_W="1 W", pulse_energy_J="100 mJ",
                               pulse_duration_s="10 ns", prf_Hz="10 Hz", beam_diameter_m="5 mm",
                               divergence_rad="1 mrad", diameter_definition="1/e")
    return laser.location, emission


def test_the_room_matrix_judges_each_item_on_its_marked_bands() -> None:
    location, emission = _q_switched_room()
    # EN 207 for this beam (DGUV 203-042 section 5, as in tests/hazards/test_eyewear.py): D LB4 and R LB7.
    both = factories.EyewearFactory.create(location=location)
    factories.EyewearMarkingFactory.create(eyewear=both, wavelength_min_m=1064e-9, wavelength_max_m=1064e-9,
                                           optical_density=None, en207_conditions="D", en207_scale=5)
    factories.EyewearMarkingFactory.create(eyewear=both, wavelength_min_m=1064e-9, wavelength_max_m=1064e-9,
                                           optical_density=None, en207_conditions="IR", en207_scale=7)
    continuous_only = factories.EyewearFactory.create(location=location)
    factories.EyewearMarkingFactory.create(eyewear=continuous_only, wavelength_min_m=1064e-9,
                                           wavelength_max_m=1064e-9, optical_density=None, en207_conditions="D",
                                           en207_scale=7)
    green = factories.EyewearFactory.create(location=location)
    factories.EyewearMarkingFactory.create(eyewear=green)

    with CaptureQueriesContext(connection) as queries:
        matrix = location_eyewear_matrix(location=location, limits="icnirp2013")
    # lasers (joined); emissions; results; eyewear with its markings (two).
    assert len(queries) == 5
    assert matrix.emissions == [emission]
    assert matrix.cells[(emission.pk, both.pk)].status == "adequate"
    assert matrix.cells[(emission.pk, continuous_only.pk)].status == "inadequate"
    assert matrix.cells[(emission.pk, continuous_only.pk)].lb_shortfall == {"R": 7}
    assert matrix.cells[(emission.pk, green.pk)].status == "not_covered"
    assert matrix.unprotected == []


def test_damaged_eyewear_protects_nobody() -> None:
    location, emission = _q_switched_room()
    goggles = factories.EyewearFactory.create(location=location, condition="damaged")
    factories.EyewearMarkingFactory.create(eyewear=goggles, wavelength_min_m=900e-9, wavelength_max_m=1100e-9,
                                           optical_density=9.0)
    matrix = location_eyewear_matrix(location=location, limits="icnirp2013")
    assert matrix.cells[(emission.pk, goggles.pk)].status == "adequate"
    assert matrix.unprotected == [emission]


def test_an_emission_without_a_result_is_listed_as_not_assessed() -> None:
    location = factories.LocationFactory.create()
    laser = factories.LaserFactory.create(location=location)
    emission = factories.EmissionFactory.create(laser=laser)
    matrix = location_eyewear_matrix(location=location, limits="icnirp2013")
    assert matrix.not_assessed == [emission]
    assert matrix.emissions == []


def test_a_room_s_eyewear_needs_are_its_assessed_emissions_needing_eyewear_each_distinct_need_once() -> None:
    from registry.services import emission_create, laser_retire

    location, q_switched = _q_switched_room()
    result = q_switched.hazard_results.get(limits="icnirp2013")
    # A second laser of the same model asks the same of eyewear; a 405 nm one asks something else.
    for wavelength in ("1064 nm", "405 nm"):
        laser = factories.LaserFactory.create(labelled_class="4", location=location)
        emission_create(laser=laser, by=None, wavelength_m=wavelength, temporal_mode="q_switched",
                        average_power_W="1 W", pulse_energy_J="100 mJ", pulse_duration_s="10 ns", prf_Hz="10 Hz",
                        beam_diameter_m="5 mm", divergence_rad="1 mrad", diameter_definition="1/e")
    # Neither a laser that has left the register's care, nor one without figures, nor one that needs no eyewear.
    gone = factories.LaserFactory.create(labelled_class="4", location=location)
    emission_create(laser=gone, by=None, wavelength_m="532 nm", temporal_mode="cw", average_power_W="2 W",
                    beam_diameter_m="2 mm", divergence_rad="1 mrad")
    laser_retire(laser=gone, by=factories.PersonFactory.create(role="lso"), status="disposed", reason="Scrapped.")
    factories.EmissionFactory.create(laser=factories.LaserFactory.create(labelled_class="1", location=location))
    dim = factories.LaserFactory.create(labelled_class="1", embedded_class="3R", location=location)
    emission_create(laser=dim, by=None, wavelength_m="650 nm", temporal_mode="cw", average_power_W="1 uW",
                    beam_diameter_m="2 mm", divergence_rad="1 mrad")

    with CaptureQueriesContext(connection) as queries:
        needs = room_eyewear_needs(location=location, limits="icnirp2013")
    assert len(queries) == 1
    assert sorted(need.wavelength_m for need in needs) == pytest.approx([405e-9, 1064e-9])
    needing = next(need for need in needs if need.wavelength_m == pytest.approx(1064e-9))
    assert (needing.od_required, needing.en207_requirements) == (result.od_required, result.en207_requirements)
    # The classes of the lasers in its care: the embedded class where given; the disposed laser is gone.
    assert room_laser_classes(location=location) == {"4", "1", "3R"}


@pytest.mark.parametrize(("classes", "word"), [
    (["2", "3R"], "CAUTION"),
    (["3R", "3B"], "WARNING"),
    (["3B", "4", "2"], "DANGER"),
    (["1", "1M"], None),  # no sign needed
    ([], None),
])
def test_the_signal_word_follows_the_highest_class(classes: list[str], word: str | None) -> None:
    # Default mapping, common practice, no source: caution for 2/2M/3R, warning for 3B, danger for 4.
    assert signal_word(classes) == word


def test_the_signal_words_are_a_setting(settings: object) -> None:
    settings.SIGNAL_WORDS = {"3B": "DANGER", "4": "DANGER"}  # type: ignore[attr-defined]
    assert signal_word(["3B"]) == "DANGER"
    assert signal_word(["3R"]) is None


def test_a_room_with_a_class_4_laser_is_due_twelve_months_after_its_last_audit() -> None:
    today = datetime.date(2026, 12, 2)
    audited = factories.LaserFactory.create(labelled_class="4").location
    never = factories.LaserFactory.create(labelled_class="3B").location
    low_class = factories.LaserFactory.create(labelled_class="2").location
    recent = factories.LaserFactory.create(labelled_class="4").location
    factories.AuditFactory.create(scope="location", location=audited, status="signed_off",
                                  conducted_on=datetime.date(2025, 11, 20), signed_off_at=timezone.now(),
                                  signed_off_by=factories.PersonFactory.create(role="lso"))
    factories.AuditFactory.create(scope="location", location=recent, status="signed_off",
                                  conducted_on=datetime.date(2026, 6, 1), signed_off_at=timezone.now(),
                                  signed_off_by=factories.PersonFactory.create(role="lso"))
    planned = factories.AuditFactory.create(scope="location", location=never, status="planned")
    with CaptureQueriesContext(connection) as queries:
        due = audits_due(today=today)
    # locations; audits covering them (site or location scope)
    assert len(queries) == 2
    assert [(item.location, item.overdue, item.due_on) for item in due] == [
        (never, True, None), (audited, True, datetime.date(2026, 11, 20))]
    assert due[0].planned == planned and due[0].last is None
    assert low_class not in [item.location for item in due] and recent not in [item.location for item in due]
    # A month on from the June audit it is not yet within 30 days; late May next year it is.
    assert recent in [item.location for item in audits_due(today=datetime.date(2027, 5, 10))]


def test_a_site_wide_audit_covers_every_room_of_its_site() -> None:
    location = factories.LaserFactory.create(labelled_class="4").location
    factories.AuditFactory.create(scope="site", site=location.site, status="signed_off",
                                  conducted_on=datetime.date(2026, 10, 1), signed_off_at=timezone.now(),
                                  signed_off_by=factories.PersonFactory.create(role="lso"))
    assert audits_due(today=datetime.date(2026, 12, 2)) == []


def test_training_counts_as_expiring_until_a_later_record_renews_it() -> None:
    day = datetime.date(2031, 3, 10)
    person = factories.PersonFactory.create()
    old = factories.TrainingRecordFactory.create(person=person, completed_on=datetime.date(2029, 3, 1),
                                                 valid_until=datetime.date(2031, 3, 1))
    soon = factories.TrainingRecordFactory.create(completed_on=datetime.date(2030, 3, 1),
                                                  valid_until=datetime.date(2031, 3, 20))
    laser = factories.LaserFactory.create()
    equipment = factories.TrainingRecordFactory.create(person=person, course="equipment", laser=laser,
                                                       completed_on=datetime.date(2030, 3, 1),
                                                       valid_until=datetime.date(2031, 3, 25))
    assert set(training_expiring(within_days=30, on=day)) == {soon, equipment}
    assert set(training_expiring(within_days=30, on=day, include_expired=True)) == {old, soon, equipment}

    # A refresher renews general training; equipment training is renewed only on the same laser.
    factories.TrainingRecordFactory.create(person=person, course="refresher", completed_on=datetime.date(2031, 3, 2),
                                           valid_until=datetime.date(2032, 3, 2))
    factories.TrainingRecordFactory.create(person=person, course="equipment", laser=factories.LaserFactory.create(),
                                           completed_on=datetime.date(2031, 3, 2), valid_until=None)
    assert set(training_expiring(within_days=30, on=day, include_expired=True)) == {soon, equipment}
    factories.TrainingRecordFactory.create(person=person, course="equipment", laser=laser,
                                           completed_on=datetime.date(2031, 3, 9),
                                           valid_until=datetime.date(2032, 3, 9))
    assert set(training_expiring(within_days=30, on=day, include_expired=True)) == {soon}


def test_a_retired_renewal_renews_nothing() -> None:
    day = datetime.date(2031, 3, 10)
    old = factories.TrainingRecordFactory.create(completed_on=datetime.date(2029, 3, 1),
                                                 valid_until=datetime.date(2031, 3, 1))
    factories.TrainingRecordFactory.create(person=old.person, completed_on=datetime.date(2031, 3, 2),
                                           valid_until=datetime.date(2033, 3, 2), retired_at=timezone.now())
    assert list(training_expiring(within_days=30, on=day, include_expired=True)) == [old]


def test_an_eyewear_inspection_is_due_months_after_the_last_even_from_a_month_end(settings: object) -> None:
    settings.EYEWEAR_INSPECTION_MONTHS = 6  # type: ignore[attr-defined]
    # 31 August + 6 months is 28 February (2031 is not a leap year).
    month_end = factories.EyewearFactory.create(last_inspected_on=datetime.date(2030, 8, 31))
    recent = factories.EyewearFactory.create(last_inspected_on=datetime.date(2030, 9, 1))
    never = factories.EyewearFactory.create(last_inspected_on=None)
    retired = factories.EyewearFactory.create(last_inspected_on=None, retired_at=timezone.now())
    due = eyewear_inspections_due(today=datetime.date(2031, 1, 29), within_days=30)
    assert [(entry.eyewear, entry.due_on, entry.overdue) for entry in due] == [
        (never, None, True), (month_end, datetime.date(2031, 2, 28), False)]
    assert retired not in [entry.eyewear for entry in due] and recent not in [entry.eyewear for entry in due]
    assert [entry.eyewear for entry in eyewear_inspections_due(today=datetime.date(2031, 3, 2), within_days=0)] == [
        never, month_end, recent]


@pytest.mark.parametrize(("tags", "proposed"), [
    (["FV-0003", "FV-0028"], "FV-0029"),
    # Compared as numbers, whatever their width; the newest tag's width is kept.
    (["FV-100", "FV-0099"], "FV-0101"),
    (["FV-0024-G09970", "FV-0025-G00012", "FV-0025-G09971"], "FV-0025-G09972"),
    # The prefix is taken as it is written: neither a pattern nor in another case.
    (["AXB-9", "fv-0100", "A.B-7"], "A.B-8"),
    (["FV-0100", "fv-0002"], "fv-0003"),
    (["Z-000"], "Z-001"),
])
def test_the_proposed_asset_tag_follows_the_newest_tag_s_prefix_past_its_highest_number(
        tags: list[str], proposed: str) -> None:
    from registry.selectors import next_asset_tag

    for tag in tags:
        factories.LaserFactory.create(asset_tag=tag)
    with CaptureQueriesContext(connection) as queries:
        assert next_asset_tag() == proposed
    # The newest tag, then the highest number after its prefix.
    assert len(queries) == 2


def test_a_register_whose_newest_tag_has_no_number_proposes_the_default_tag() -> None:
    from registry.selectors import next_asset_tag

    factories.LaserFactory.create(asset_tag="LSR-0007")
    factories.LaserFactory.create(asset_tag="HELIUM NEON")
    assert next_asset_tag() == "LSR-0001"
