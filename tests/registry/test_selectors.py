"""Selectors load what their callers display in a fixed number of queries."""
from __future__ import annotations

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from registry.selectors import audit_list, laser_list
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
