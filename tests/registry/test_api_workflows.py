"""The register's workflows driven over HTTP, end to end, each step's saved state checked."""
from __future__ import annotations

import datetime
import shutil
import tempfile

from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import TestCase, override_settings
from rest_framework.test import APIClient

from registry import services
from registry.models import SOP, Audit, Authorization, Finding, Laser, Person, TrainingRecord


def _client(person: Person) -> APIClient:
    client = APIClient()
    client.force_authenticate(user=person.user)
    return client


class WorkflowTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        optics = services.research_group_create(slug="optics", name="Beam Optics Group")
        cls.lso = services.person_create(username="ada", role="lso")
        cls.researcher = services.person_create(username="rhea", role="researcher", research_group=optics)
        cls.user = services.person_create(username="uma", role="user", research_group=optics)
        cls.room = services.location_create(code="w-1", site="W", building="Alder Hall", room="1", by=cls.lso)

    def setUp(self) -> None:
        self.media = tempfile.mkdtemp()
        self.addCleanup(shutil.rmtree, self.media)
        self.lso_client = _client(self.lso)
        self.researcher_client = _client(self.researcher)

    def _register_and_approve(self) -> Laser:
        created = self.researcher_client.post("/api/v1/lasers/", {
            "asset_tag": "W-0001", "laser_type": "solid_state", "labelled_class": "4", "location": self.room.pk},
            format="json")
        self.assertEqual(created.status_code, 201, created.content)
        laser = Laser.objects.get(pk=created.json()["id"])
        emission = self.researcher_client.post("/api/v1/emissions/", {
            "laser": laser.pk, "wavelength": "532 nm", "temporal_mode": "cw", "average_power": "2 W",
            "beam_diameter": "2 mm", "divergence": "1 mrad"}, format="json")
        self.assertEqual(emission.status_code, 201, emission.content)
        self.assertEqual(self.lso_client.post(f"/api/v1/lasers/{laser.pk}/approve/", {}, format="json").status_code,
                         200)
        laser.refresh_from_db()
        return laser

    def test_a_registration_is_pending_owned_by_the_researcher_then_returned_resubmitted_and_approved(self) -> None:
        created = self.researcher_client.post("/api/v1/lasers/", {
            "asset_tag": "W-0002", "laser_type": "gas", "labelled_class": "3B", "location": self.room.pk},
            format="json")
        self.assertEqual(created.status_code, 201)
        self.assertEqual(created.json()["status"], "pending_review")
        laser = Laser.objects.get(pk=created.json()["id"])
        self.assertEqual(laser.owner, self.researcher)
        self.assertEqual(laser.history.first().history_user, self.researcher.user)
        url = f"/api/v1/lasers/{laser.pk}/"

        # Approval needs an emission: refused with the reason, nothing changes.
        refused = self.lso_client.post(f"{url}approve/", {}, format="json")
        self.assertEqual(refused.status_code, 400)
        self.assertIn("emissions", refused.json())
        returned = self.lso_client.post(f"{url}return/", {"comments": "Add the 633 nm line."}, format="json")
        self.assertEqual(returned.status_code, 200)
        laser.refresh_from_db()
        self.assertEqual((laser.status, laser.review_comments), ("returned", "Add the 633 nm line."))

        self.researcher_client.post("/api/v1/emissions/", {
            "laser": laser.pk, "wavelength": "632.8 nm", "temporal_mode": "cw", "average_power": "20 mW",
            "beam_diameter": "0.8 mm", "divergence": "1.2 mrad"}, format="json")
        self.assertEqual(self.researcher_client.post(f"{url}submit/", {"note": "Line added."},
                                                     format="json").status_code, 200)
        approved = self.lso_client.post(f"{url}approve/", {"note": "Reviewed."}, format="json")
        self.assertEqual(approved.status_code, 200)
        laser.refresh_from_db()
        self.assertEqual(laser.status, "active")
        self.assertEqual(approved["ETag"], self.lso_client.get(url)["ETag"])
        statuses = list(laser.history.order_by("history_id").values_list("status", flat=True))
        self.assertEqual(statuses, ["pending_review", "returned", "pending_review", "active"])
        changes = self.lso_client.get(f"{url}history/").json()
        self.assertEqual(changes[0]["changed_by"], "ada")
        self.assertIn({"field": "status", "old": "pending_review", "new": "active"}, changes[0]["changes"])

    def test_an_illegal_step_is_a_409_that_names_the_allowed_ones(self) -> None:
        laser = self._register_and_approve()
        response = self.lso_client.post(f"/api/v1/lasers/{laser.pk}/approve/", {}, format="json")
        self.assertEqual(response.status_code, 409)
        self.assertIn("cannot go from 'active'", response.json()["status"][0])
        laser.refresh_from_db()
        self.assertEqual(laser.status, "active")

    def test_an_authorization_waits_for_training_and_the_sop_then_is_approved(self) -> None:
        laser = self._register_and_approve()
        requested = self.researcher_client.post("/api/v1/authorizations/", {"person": self.user.pk,
                                                                           "laser": laser.pk}, format="json")
        self.assertEqual(requested.status_code, 201, requested.content)
        url = f"/api/v1/authorizations/{requested.json()['id']}/"
        self.assertEqual(requested.json()["requested_by"], self.researcher.pk)

        refused = self.lso_client.post(f"{url}approve/", {}, format="json")
        self.assertEqual(refused.status_code, 409)
        self.assertEqual(len(refused.json()["person"]), 2)  # no training, no approved SOP
        self.assertEqual(len(self.lso_client.get(f"{url}prerequisites/").json()["missing"]), 2)

        trained = self.lso_client.post("/api/v1/training-records/", {
            "person": self.user.pk, "course": "general", "completed_on": "2026-11-20",
            "valid_until": "2028-11-20", "evidence": "Course 26-11", "verified_by": self.lso.pk}, format="json")
        self.assertEqual(trained.status_code, 201, trained.content)
        self.assertTrue(TrainingRecord.objects.filter(person=self.user, evidence="Course 26-11").exists())

        with override_settings(MEDIA_ROOT=self.media):
            uploaded = self.researcher_client.post("/api/v1/sops/", {
                "laser": laser.pk, "title": "Operating W-0001",
                "document": SimpleUploadedFile("sop.pdf", b"%PDF-1.4\n1. Wear the goggles.\n", content_type="application/pdf")},
                format="multipart")
        self.assertEqual(uploaded.status_code, 201, uploaded.content)
        sop = SOP.objects.get(pk=uploaded.json()["id"])
        self.assertEqual((sop.status, sop.version), ("draft", 1))
        self.assertEqual(self.lso_client.post(f"/api/v1/sops/{sop.pk}/approve/", {"review_due": "2027-11-30"},
                                              format="json").status_code, 200)
        self.assertEqual(len(self.lso_client.get(f"{url}prerequisites/").json()["missing"]), 1)
        self.assertEqual(_client(self.user).post(f"/api/v1/sops/{sop.pk}/acknowledge/").status_code, 201)
        self.assertEqual(self.lso_client.get(f"{url}prerequisites/").json(), {"missing": []})

        approved = self.lso_client.post(f"{url}approve/", {"valid_until": "2027-12-31"}, format="json")
        self.assertEqual(approved.status_code, 200, approved.content)
        authorization = Authorization.objects.get(pk=requested.json()["id"])
        self.assertEqual((authorization.status, authorization.decided_by), ("approved", self.lso))
        self.assertEqual(_client(self.user).get("/api/v1/authorizations/").json()["count"], 1)

        revoked = self.lso_client.post(f"{url}revoke/", {"reason": "Moved to another group."}, format="json")
        self.assertEqual(revoked.status_code, 200)
        authorization.refresh_from_db()
        self.assertEqual((authorization.status, authorization.decision_reason), ("revoked", "Moved to another group."))
        retired = self.lso_client.post(f"{url}retire/", {"reason": "Closed after revocation."}, format="json")
        self.assertEqual(retired.status_code, 200)
        self.assertIsNotNone(retired.json()["retired_at"])
        self.assertTrue(Authorization.objects.filter(pk=authorization.pk).exists())

    def test_a_refusal_needs_its_reason(self) -> None:
        laser = self._register_and_approve()
        authorization = services.authorization_request(person=self.user, laser=laser, by=self.researcher)
        url = f"/api/v1/authorizations/{authorization.pk}/refuse/"
        self.assertEqual(self.lso_client.post(url, {"reason": " "}, format="json").status_code, 400)
        refused = self.lso_client.post(url, {"reason": "No supervisor on the late shift."}, format="json")
        self.assertEqual(refused.status_code, 200)
        authorization.refresh_from_db()
        self.assertEqual((authorization.status, authorization.decision_reason),
                         ("refused", "No supervisor on the late shift."))

    def test_an_audit_is_started_answered_given_findings_signed_off_and_its_finding_closed(self) -> None:
        laser = self._register_and_approve()
        planned = self.lso_client.post("/api/v1/audits/", {
            "reference": "W-AUD-1", "scope": "lasers", "lasers": [laser.pk], "auditor": self.lso.pk,
            "planned_on": "2026-12-01", "questions": ["Is the door sign posted?", "Are beam dumps in place?"]},
            format="json")
        self.assertEqual(planned.status_code, 201, planned.content)
        url = f"/api/v1/audits/{planned.json()['id']}/"
        self.assertEqual([item["question"] for item in planned.json()["checklist"]],
                         ["Is the door sign posted?", "Are beam dumps in place?"])

        early = self.lso_client.post(f"{url}answer/", {"position": 1, "answer": "pass"}, format="json")
        self.assertEqual(early.status_code, 400)
        started = self.lso_client.post(f"{url}start/", {"conducted_on": "2026-12-01"}, format="json")
        self.assertEqual(started.status_code, 200)
        # The class 4 laser's control measures follow the plan's two questions: the room's, then the laser's.
        self.assertEqual([item["control"] for item in started.json()["checklist"]], [
            "", "", "signs_posted", "entry_controls_tested", "eyewear_adequate", "registered", "labelled",
            "sop_current", "users_authorized", "beams_terminated", "key_controlled"])
        failed_without_finding = self.lso_client.post(f"{url}answer/", {
            "position": 10, "answer": "fail", "comment": "The idler runs off the table."}, format="json")
        self.assertEqual(failed_without_finding.status_code, 400)
        self.assertIn("corrective_action", failed_without_finding.json()["finding"][0])
        failed = self.lso_client.post(f"{url}answer/", {
            "position": 10, "answer": "fail", "comment": "The idler runs off the table.", "finding": {
                "severity": "major", "corrective_action": "Fit a beam dump at the table edge.",
                "owner": self.researcher.pk, "due_on": "2026-12-20"}}, format="json")
        self.assertEqual(failed.status_code, 200, failed.content)
        from_failure = Finding.objects.get(checklist_item_id=failed.json()["id"])
        self.assertEqual((from_failure.severity, from_failure.laser, from_failure.owner, from_failure.due_on),
                         ("major", laser, self.researcher, datetime.date(2026, 12, 20)))
        for position in (3, 4, 5, 6, 7, 8, 9, 11):
            self.assertEqual(self.lso_client.post(f"{url}answer/", {"position": position, "answer": "pass"},
                                                  format="json").status_code, 200)
        self.assertEqual(self.lso_client.post(f"{url}answer/", {"position": 1, "answer": "pass"},
                                              format="json").status_code, 200)
        unanswered = self.lso_client.post(f"{url}sign-off/", {}, format="json")
        self.assertEqual(unanswered.status_code, 400)
        self.assertIn("#2", unanswered.json()["checklist"][0])
        self.assertEqual(self.lso_client.post(f"{url}answer/", {"position": 2, "answer": "n/a",
                                                                "comment": "No free beams."},
                                              format="json").status_code, 200)
        self.assertEqual(self.lso_client.post(f"{url}answer/", {"position": 99, "answer": "pass"},
                                              format="json").status_code, 404)
        raised = self.lso_client.post(f"{url}findings/", {
            "severity": "minor", "description": "Beam dump missing on table 2.", "owner": self.researcher.pk,
            "laser": laser.pk, "due_on": "2026-12-15"}, format="json")
        self.assertEqual(raised.status_code, 201, raised.content)
        signed = self.lso_client.post(f"{url}sign-off/", {"summary": "One minor finding."}, format="json")
        self.assertEqual(signed.status_code, 200)
        audit = Audit.objects.get(pk=planned.json()["id"])
        self.assertEqual((audit.status, audit.signed_off_by), ("signed_off", self.lso))

        finding_url = f"/api/v1/findings/{raised.json()['id']}/close/"
        self.assertEqual(self.researcher_client.post(finding_url, {"evidence": ""}, format="json").status_code, 400)
        closed = self.researcher_client.post(finding_url, {"evidence": "Dump fitted; photo in lab log p. 9."},
                                             format="json")
        self.assertEqual(closed.status_code, 200)
        finding = Finding.objects.get(pk=raised.json()["id"])
        self.assertEqual((finding.status, finding.closed_by), ("closed", self.researcher))
        self.assertEqual(self.researcher_client.post(finding_url, {"evidence": "again"}, format="json").status_code,
                         409)
