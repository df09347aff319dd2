"""Authorization, SOP, audit, finding and incident workflows: prerequisites, illegal
transitions refused with a clear error, and the history each change leaves."""
from __future__ import annotations

import datetime

import pytest
from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import ProtectedError
from django.utils import timezone

from registry.models import (
    Audit,
    AuthorizationStatus,
    FindingStatus,
    Incident,
    Person,
    RecordRetainedError,
    SOPStatus,
    TrainingRecord,
)
from registry.services import (
    PrerequisiteError,
    StateError,
    TransitionError,
    audit_answer,
    audit_plan,
    audit_sign_off,
    audit_start,
    authorization_approve,
    authorization_refuse,
    authorization_request,
    authorization_revoke,
    authorization_withdraw,
    finding_close,
    finding_raise,
    incident_close,
    incident_investigate,
    incident_report,
    record_retire,
    sop_acknowledge,
    sop_approve,
    sop_create,
    training_record,
)
from tests import factories

pytestmark = pytest.mark.django_db

TODAY = timezone.localdate()


@pytest.fixture
def lso() -> Person:
    return factories.PersonFactory.create(role="lso", research_group=None)


@pytest.fixture
def researcher() -> Person:
    return factories.PersonFactory.create(role="researcher")


@pytest.fixture
def trainee(researcher: Person) -> Person:
    return factories.PersonFactory.create(role="user", research_group=researcher.research_group, supervisor=researcher)


def approved_sop(laser: factories.Laser, lso: Person) -> factories.SOP:
    return sop_approve(sop=sop_create(laser=laser, title="Routine operation", by=lso), by=lso)


class TestAuthorization:
    def test_approval_is_refused_while_training_and_sop_are_missing(self, lso: Person, researcher: Person,
                                                                    trainee: Person) -> None:
        laser = factories.LaserFactory.create(owner=researcher)
        request = authorization_request(person=trainee, laser=laser, by=researcher)
        with pytest.raises(PrerequisiteError) as raised:
            authorization_approve(authorization=request, by=lso)
        assert raised.value.message_dict["person"] == [
            f"Missing prerequisite: {trainee} has no valid general laser safety training.",
            f"Missing prerequisite: {laser.asset_tag} has no approved SOP.",
        ]
        request.refresh_from_db()
        assert request.status == AuthorizationStatus.REQUESTED

    def test_expired_training_and_an_unread_sop_are_both_missing(self, lso: Person, researcher: Person,
                                                                 trainee: Person) -> None:
        laser = factories.LaserFactory.create(owner=researcher)
        sop = approved_sop(laser, lso)
        factories.TrainingRecordFactory.create(person=trainee, completed_on=TODAY - datetime.timedelta(days=400),
                                               valid_until=TODAY - datetime.timedelta(days=1))
        request = authorization_request(person=trainee, laser=laser, by=researcher)
        with pytest.raises(PrerequisiteError) as raised:
            authorization_approve(authorization=request, by=lso)
        assert raised.value.missing == [f"{trainee} has no valid general laser safety training.",
                                        f"{trainee} has not acknowledged {sop}."]

    def test_approval_succeeds_once_trained_and_the_sop_is_acknowledged(self, lso: Person, researcher: Person,
                                                                        trainee: Person) -> None:
        laser = factories.LaserFactory.create(owner=researcher)
        sop = approved_sop(laser, lso)
        training_record(person=trainee, course="general", completed_on=TODAY, by=lso,
                        valid_until=TODAY + datetime.timedelta(days=365))
        sop_acknowledge(sop=sop, person=trainee)
        request = authorization_request(person=trainee, laser=laser, by=researcher)
        authorization_approve(authorization=request, by=lso, valid_until=TODAY + datetime.timedelta(days=180))
        request.refresh_from_db()
        assert (request.status, request.decided_by) == (AuthorizationStatus.APPROVED, lso)
        assert [row.status for row in request.history.order_by("history_date")] == ["requested", "approved"]

    def test_only_an_lso_approves(self, researcher: Person, trainee: Person) -> None:
        request = authorization_request(person=trainee, laser=factories.LaserFactory.create(), by=researcher)
        with pytest.raises(PermissionDenied):
            authorization_approve(authorization=request, by=researcher)
        request.refresh_from_db()
        assert request.status == AuthorizationStatus.REQUESTED

    def test_a_refusal_needs_a_reason_and_is_final(self, lso: Person, researcher: Person, trainee: Person) -> None:
        request = authorization_request(person=trainee, laser=factories.LaserFactory.create(), by=researcher)
        with pytest.raises(ValidationError) as raised:
            authorization_refuse(authorization=request, by=lso, reason="")
        assert raised.value.message_dict == {"decision_reason": ["A reason for the refusal is required."]}
        authorization_refuse(authorization=request, by=lso, reason="No SOP yet.")
        with pytest.raises(TransitionError) as raised_transition:
            authorization_approve(authorization=request, by=lso)
        assert "cannot go from 'refused' to 'approved'" in raised_transition.value.message_dict["status"][0]
        request.refresh_from_db()
        assert (request.status, request.decision_reason) == (AuthorizationStatus.REFUSED, "No SOP yet.")

    def test_a_withdrawn_request_frees_the_pair_for_a_new_one(self, researcher: Person, trainee: Person) -> None:
        laser = factories.LaserFactory.create()
        first = authorization_request(person=trainee, laser=laser, by=researcher)
        with pytest.raises(ValidationError):
            authorization_request(person=trainee, laser=laser, by=researcher)
        authorization_withdraw(authorization=first, by=researcher)
        second = authorization_request(person=trainee, laser=laser, by=researcher)
        assert second.pk != first.pk
        assert laser.authorizations.count() == 2

    def test_requests_are_for_active_lasers_only(self, researcher: Person, trainee: Person) -> None:
        laser = factories.LaserFactory.create(status="pending_review")
        with pytest.raises(ValidationError) as raised:
            authorization_request(person=trainee, laser=laser, by=researcher)
        assert "active lasers only" in raised.value.message_dict["laser"][0]

    def test_revoking_needs_an_approved_authorization(self, lso: Person, researcher: Person, trainee: Person) -> None:
        request = authorization_request(person=trainee, laser=factories.LaserFactory.create(), by=researcher)
        with pytest.raises(TransitionError):
            authorization_revoke(authorization=request, by=lso, reason="Left the group.")


class TestSOP:
    def test_approving_a_new_version_supersedes_the_old_one(self, lso: Person) -> None:
        laser = factories.LaserFactory.create()
        first = approved_sop(laser, lso)
        second = sop_create(laser=laser, title="Routine operation, revised", by=lso)
        assert second.version == 2
        sop_approve(sop=second, by=lso, review_due=TODAY + datetime.timedelta(days=365))
        first.refresh_from_db()
        second.refresh_from_db()
        assert (first.status, second.status) == (SOPStatus.SUPERSEDED, SOPStatus.APPROVED)

    def test_a_draft_cannot_be_acknowledged(self, lso: Person, trainee: Person) -> None:
        draft = sop_create(laser=factories.LaserFactory.create(), title="Draft", by=lso)
        with pytest.raises(ValidationError) as raised:
            sop_acknowledge(sop=draft, person=trainee)
        assert "only the approved version" in raised.value.message_dict["sop"][0]
        assert draft.acknowledgements.count() == 0

    def test_acknowledging_twice_keeps_one_acknowledgement(self, lso: Person, trainee: Person) -> None:
        sop = approved_sop(factories.LaserFactory.create(), lso)
        first = sop_acknowledge(sop=sop, person=trainee)
        assert sop_acknowledge(sop=sop, person=trainee) == first
        assert sop.acknowledgements.count() == 1

    def test_an_approved_sop_cannot_be_approved_again(self, lso: Person) -> None:
        sop = approved_sop(factories.LaserFactory.create(), lso)
        with pytest.raises(TransitionError):
            sop_approve(sop=sop, by=lso)


class TestAudit:
    @pytest.fixture
    def audit(self, lso: Person) -> Audit:
        return audit_plan(reference="AUD-1", scope="location", location=factories.LocationFactory.create(),
                          auditor=lso, planned_on=TODAY, by=lso,
                          questions=["Is the warning light working?", "Is eyewear available?"])

    def test_a_planned_audit_cannot_be_signed_off(self, audit: Audit, lso: Person) -> None:
        with pytest.raises(TransitionError) as raised:
            audit_sign_off(audit=audit, by=lso)
        assert "cannot go from 'planned' to 'signed_off'" in raised.value.message_dict["status"][0]

    def test_sign_off_waits_for_every_answer(self, audit: Audit, lso: Person) -> None:
        audit_start(audit=audit, by=lso)
        first, second = audit.checklist.order_by("position")
        audit_answer(item=first, answer="pass", by=lso)
        with pytest.raises(ValidationError) as raised:
            audit_sign_off(audit=audit, by=lso)
        assert raised.value.message_dict == {"checklist": ["AUD-1 has unanswered checklist items: #2."]}
        audit_answer(item=second, answer="fail", comment="Two goggles scratched.", by=lso,
                     finding={"severity": "minor", "corrective_action": "Replace both.", "owner": lso,
                              "due_on": TODAY})
        audit_sign_off(audit=audit, by=lso, summary="Fine apart from eyewear.")
        audit.refresh_from_db()
        assert audit.status == "signed_off"
        assert audit.signed_off_by == lso

    def test_findings_are_raised_during_the_audit_and_closed_with_evidence(self, audit: Audit, lso: Person,
                                                                           researcher: Person) -> None:
        with pytest.raises(ValidationError, match="only while it is in progress"):
            finding_raise(audit=audit, severity="minor", description="Scratched goggles.", owner=researcher, by=lso)
        audit_start(audit=audit, by=lso)
        finding = finding_raise(audit=audit, severity="minor", description="Scratched goggles.", owner=researcher,
                                by=lso)
        with pytest.raises(ValidationError) as raised:
            finding_close(finding=finding, by=researcher, evidence=" ")
        assert raised.value.message_dict == {"closure_evidence": ["Evidence of the correction is required."]}
        finding_close(finding=finding, by=researcher, evidence="Replaced; receipt in the lab file.")
        finding.refresh_from_db()
        assert (finding.status, finding.closed_by) == (FindingStatus.CLOSED, researcher)
        with pytest.raises(TransitionError):
            finding_close(finding=finding, by=researcher, evidence="again")
        assert finding.history.count() == 2


class TestIncident:
    def test_an_incident_is_investigated_then_closed_with_its_follow_up(self, lso: Person, trainee: Person) -> None:
        incident = incident_report(reference="INC-9", kind="near_miss", occurred_at=timezone.now(),
                                   description="Reflection off a watch.", reported_by=trainee,
                                   people_involved=[trainee])
        incident_investigate(incident=incident, by=lso)
        with pytest.raises(ValidationError):
            incident_close(incident=incident, by=lso, follow_up="")
        incident_close(incident=incident, by=lso, follow_up="Jewellery rule added to the SOP.")
        incident.refresh_from_db()
        assert incident.status == "closed"
        assert list(incident.people_involved.all()) == [trainee]
        with pytest.raises(TransitionError):
            incident_investigate(incident=incident, by=lso)


class TestRetirement:
    def test_compliance_records_are_retired_not_deleted(self, lso: Person, trainee: Person) -> None:
        record = factories.TrainingRecordFactory.create(person=trainee)
        with pytest.raises(RecordRetainedError):
            record.delete()
        with pytest.raises(RecordRetainedError):
            TrainingRecord.objects.all().delete()
        record_retire(record=record, by=lso, reason="Entered twice.")
        record.refresh_from_db()
        assert record.is_retired
        assert record.retirement_reason == "Entered twice."
        with pytest.raises(StateError, match="was retired on .*; a retired record is read-only"):
            record_retire(record=record, by=lso, reason="again")

    @pytest.mark.parametrize("factory_class", [
        factories.AuthorizationFactory, factories.SOPFactory, factories.AuditFactory, factories.FindingFactory,
        factories.IncidentFactory, factories.EyewearFactory, factories.SOPAcknowledgementFactory,
        factories.AuditChecklistItemFactory,
    ])
    def test_no_compliance_record_can_be_deleted(self, factory_class: type) -> None:
        record = factory_class.create()
        with pytest.raises(RecordRetainedError):
            record.delete()
        assert type(record).objects.filter(pk=record.pk).exists()

    def test_referenced_people_are_protected(self, trainee: Person) -> None:
        factories.TrainingRecordFactory.create(person=trainee)
        with pytest.raises(ProtectedError):
            trainee.delete()
        assert Person.objects.filter(pk=trainee.pk).exists()


def test_incident_history_records_who_reported(trainee: Person) -> None:
    incident_report(reference="INC-10", kind="exposure", occurred_at=timezone.now(), description="Brief glint.",
                    reported_by=trainee)
    row = Incident.history.get(reference="INC-10")
    assert (row.history_type, row.history_user) == ("+", trainee.user)
