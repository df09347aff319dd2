"""Selectors load what their callers display in a fixed number of queries."""
from __future__ import annotations

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from registry.selectors import audit_list, laser_list, location_eyewear_matrix
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
