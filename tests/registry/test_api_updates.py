"""Field updates over the API: If-Match on the new endpoints, fields an update may not set,
and changes the record's state refuses (409 with the reason, nothing saved)."""
from __future__ import annotations

import datetime
import shutil
import tempfile
from typing import Any

from django.core.files.uploadedfile import SimpleUploadedFile
from django.db.models import Model
from django.test import TestCase, override_settings
from rest_framework.response import Response

from registry import services
from registry.models import SOPStatus
from tests.registry.api_world import World, build_world, register_state

V = "/api/v1"


class UpdateTestCase(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def patch(self, persona: str, url: str, body: dict[str, Any], *, etag: str | None = None) -> Response:
        client = self.world.client(persona)
        if etag is None:
            etag = client.get(url)["ETag"]
        response: Response = client.patch(url, body, format="json", HTTP_IF_MATCH=etag)
        return response

    def assertRefusedUnchanged(self, persona: str, url: str, body: dict[str, Any], record: Model,
                               *, status: int) -> Response:
        """The PATCH is answered ``status`` and neither the record nor any row count changes."""
        etag = self.world.client(persona).get(url)["ETag"]
        before_rows = register_state()
        before = {field.attname: getattr(record, field.attname) for field in record._meta.concrete_fields}
        response = self.patch(persona, url, body, etag=etag)
        self.assertEqual(response.status_code, status, response.content[:400])
        record.refresh_from_db()
        self.assertEqual({field.attname: getattr(record, field.attname) for field in record._meta.concrete_fields},
                         before)
        self.assertEqual(register_state(), before_rows)
        self.assertEqual(self.world.client(persona).get(url)["ETag"], etag)
        return response


class IfMatchOnNewEndpointsTests(UpdateTestCase):
    def test_a_training_correction_without_if_match_gets_428_and_changes_nothing(self) -> None:
        url = f"{V}/training-records/{self.world.training.pk}/"
        before = register_state()
        response = self.world.client("lso").patch(url, {"evidence": "Certificate GS-1"}, format="json")
        self.assertEqual(response.status_code, 428)
        self.world.training.refresh_from_db()
        self.assertEqual(self.world.training.evidence, "")
        self.assertEqual(register_state(), before)

    def test_the_second_of_two_edits_of_a_finding_from_the_same_copy_gets_412(self) -> None:
        url = f"{V}/findings/{self.world.finding.pk}/"
        etag = self.world.client("lso").get(url)["ETag"]
        first = self.patch("lso", url, {"corrective_action": "Fit a beam dump."}, etag=etag)
        self.assertEqual(first.status_code, 200)
        self.assertEqual(first.json()["corrective_action"], "Fit a beam dump.")
        self.assertNotEqual(first["ETag"], etag)
        history = self.world.finding.history.count()
        second = self.patch("lso", url, {"corrective_action": "Move the mirror."}, etag=etag)
        self.assertEqual(second.status_code, 412)
        self.world.finding.refresh_from_db()
        self.assertEqual(self.world.finding.corrective_action, "Fit a beam dump.")
        self.assertEqual(self.world.finding.history.count(), history)

    def test_the_answer_of_an_sop_edit_carries_the_etag_of_the_saved_draft(self) -> None:
        url = f"{V}/sops/{self.world.draft_sop.pk}/"
        response = self.patch("owner", url, {"title": "Alignment, revised", "review_due": "2027-05-01"})
        self.assertEqual(response.status_code, 200)
        self.assertEqual(response["ETag"], self.world.client("owner").get(url)["ETag"])
        self.world.draft_sop.refresh_from_db()
        self.assertEqual(self.world.draft_sop.title, "Alignment, revised")
        self.assertEqual(self.world.draft_sop.review_due, datetime.date(2027, 5, 1))
        self.assertEqual(self.world.draft_sop.status, SOPStatus.DRAFT)
        self.assertEqual(self.world.draft_sop.history.latest().history_user, self.world.owner.user)


class SOPDocumentTests(UpdateTestCase):
    def test_the_owner_replaces_a_drafts_document_with_a_multipart_patch(self) -> None:
        media = tempfile.mkdtemp()
        self.addCleanup(shutil.rmtree, media)
        url = f"{V}/sops/{self.world.draft_sop.pk}/"
        client = self.world.client("owner")
        etag = client.get(url)["ETag"]
        with override_settings(MEDIA_ROOT=media):
            response = client.patch(url, {"document": SimpleUploadedFile(
                "alignment.pdf", b"%PDF-1.4\n1. Close the enclosure before aligning.\n", content_type="application/pdf")},
                format="multipart", HTTP_IF_MATCH=etag)
            self.assertEqual(response.status_code, 200, response.content[:400])
            self.world.draft_sop.refresh_from_db()
            with self.world.draft_sop.document.open() as document:
                self.assertEqual(document.read(), b"%PDF-1.4\n1. Close the enclosure before aligning.\n")
        self.assertEqual(response.json()["document"], f"http://testserver{url}document/")


class FieldsAnUpdateCannotSetTests(UpdateTestCase):
    def test_a_status_sent_in_a_patch_is_refused_naming_it_not_ignored(self) -> None:
        url = f"{V}/findings/{self.world.finding.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"status": "closed", "due_on": "2027-01-31"},
                                               self.world.finding, status=400)
        self.assertEqual(list(response.json()), ["status"])
        self.assertIn("read-only", response.json()["status"][0])

    def test_the_representation_read_back_with_one_change_is_accepted(self) -> None:
        client = self.world.client("lso")
        url = f"{V}/locations/{self.world.room.pk}/"
        read = client.get(url)
        body = dict(read.json(), name="Optics bay, north half")
        response = client.put(url, body, format="json", HTTP_IF_MATCH=read["ETag"])
        self.assertEqual(response.status_code, 200, response.content[:400])
        self.world.room.refresh_from_db()
        self.assertEqual(self.world.room.name, "Optics bay, north half")
        # The same body with a read-only field changed is refused, naming only that field.
        body = dict(response.json(), code="tst-elsewhere")
        refused = client.put(url, body, format="json", HTTP_IF_MATCH=response["ETag"])
        self.assertEqual((refused.status_code, list(refused.json())), (400, ["code"]))

    def test_lasers_and_emissions_refuse_read_only_and_unknown_fields_too(self) -> None:
        laser_url = f"{V}/lasers/{self.world.laser.pk}/"
        response = self.assertRefusedUnchanged("lso", laser_url, {"status": "disposed", "description": "x"},
                                               self.world.laser, status=400)
        self.assertEqual(set(response.json()), {"status"})
        emission_url = f"{V}/emissions/{self.world.emission.pk}/"
        response = self.assertRefusedUnchanged("lso", emission_url, {"power": "3 W", "laser": self.world.other_laser.pk},
                                               self.world.emission, status=400)
        self.assertEqual(set(response.json()), {"power", "laser"})
        self.assertIn("not a field", response.json()["power"][0])

    def test_identity_fields_are_read_only_in_updates(self) -> None:
        for url, body, record in (
            (f"{V}/locations/{self.world.room.pk}/", {"code": "tst-999"}, self.world.room),
            (f"{V}/eyewear/{self.world.eyewear.pk}/", {"inventory_tag": "TST-EW-9"}, self.world.eyewear),
            (f"{V}/incidents/{self.world.incident.pk}/", {"reference": "TST-INC-9"}, self.world.incident),
            (f"{V}/training-records/{self.world.training.pk}/", {"person": self.world.owner.pk},
             self.world.training),
        ):
            with self.subTest(url=url):
                response = self.assertRefusedUnchanged("lso", url, body, record, status=400)
                self.assertEqual(list(response.json()), list(body))

    def test_eyewear_markings_are_refused_in_an_update_they_have_their_own_action(self) -> None:
        url = f"{V}/eyewear/{self.world.eyewear.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"markings": []}, self.world.eyewear, status=400)
        self.assertEqual(list(response.json()), ["markings"])
        self.assertEqual(self.world.eyewear.markings.count(), 1)

    def test_the_closing_evidence_of_a_finding_is_not_an_update_field(self) -> None:
        url = f"{V}/findings/{self.world.finding.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"closure_evidence": "Fixed."}, self.world.finding,
                                               status=400)
        self.assertEqual(list(response.json()), ["closure_evidence"])


class StateRefusalTests(UpdateTestCase):
    def test_an_approved_sop_is_refused_with_409_and_the_way_forward(self) -> None:
        url = f"{V}/sops/{self.world.sop.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"title": "Quietly reworded"}, self.world.sop, status=409)
        self.assertIn("new draft version", response.json()["status"][0])
        self.assertEqual(self.world.sop.status, SOPStatus.APPROVED)

    def test_a_signed_off_audit_keeps_its_plan(self) -> None:
        audit = self.world.answered_audit
        services.audit_sign_off(audit=audit, by=self.world.lso, summary="In order.")
        url = f"{V}/audits/{audit.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"planned_on": "2027-03-01"}, audit, status=409)
        self.assertIn("signed off", response.json()["status"][0])

    def test_an_audit_in_progress_may_still_change_its_plan(self) -> None:
        audit = self.world.running_audit
        response = self.patch("lso", f"{V}/audits/{audit.pk}/", {"lasers": [self.world.laser.pk],
                                                                  "planned_on": "2026-12-24"})
        self.assertEqual(response.status_code, 200, response.content[:400])
        audit.refresh_from_db()
        self.assertEqual(audit.planned_on, datetime.date(2026, 12, 24))
        self.assertEqual(list(audit.lasers.values_list("pk", flat=True)), [self.world.laser.pk])
        self.assertEqual(response.json()["lasers"], [self.world.laser.pk])

    def test_a_closed_finding_keeps_its_follow_up(self) -> None:
        finding = services.finding_close(finding=self.world.finding, by=self.world.owner, evidence="Dump fitted.")
        url = f"{V}/findings/{finding.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"due_on": "2027-02-01"}, finding, status=409)
        self.assertIn("closed", response.json()["status"][0].lower())

    def test_the_reporter_corrects_an_open_incident_but_not_a_closed_one(self) -> None:
        incident = self.world.incident
        url = f"{V}/incidents/{incident.pk}/"
        response = self.patch("owner", url, {"description": "Reflection from mirror M3.",
                                             "people_involved": [self.world.user.pk]})
        self.assertEqual(response.status_code, 200, response.content[:400])
        incident.refresh_from_db()
        self.assertEqual(incident.description, "Reflection from mirror M3.")
        self.assertEqual(list(incident.people_involved.all()), [self.world.user])
        self.assertEqual(incident.reported_by, self.world.owner)
        services.incident_close(incident=incident, by=self.world.lso, follow_up="Mirror M3 shielded.")
        response = self.assertRefusedUnchanged("owner", url, {"description": "Rewritten later."}, incident, status=409)
        self.assertIn("closed", response.json()["status"][0])

    def test_a_retired_record_is_not_changed(self) -> None:
        services.record_retire(record=self.world.eyewear, by=self.world.lso, reason="Lost.")
        url = f"{V}/eyewear/{self.world.eyewear.pk}/"
        response = self.assertRefusedUnchanged("lso", url, {"quantity": 4}, self.world.eyewear, status=409)
        self.assertIn("retired", response.json()["retired_at"][0])


class FieldRuleTests(UpdateTestCase):
    def test_a_training_date_is_checked_against_the_stored_other_date(self) -> None:
        url = f"{V}/training-records/{self.world.training.pk}/"
        earlier = (self.world.training.completed_on - datetime.timedelta(days=1)).isoformat()
        response = self.assertRefusedUnchanged("lso", url, {"valid_until": earlier}, self.world.training, status=400)
        self.assertEqual(list(response.json()), ["valid_until"])

    def test_an_sop_draft_cannot_take_a_version_its_laser_already_has(self) -> None:
        url = f"{V}/sops/{self.world.draft_sop.pk}/"
        response = self.assertRefusedUnchanged("owner", url, {"version": self.world.sop.version},
                                               self.world.draft_sop, status=400)
        self.assertIn("version", str(response.json()).lower())

    def test_a_location_dimension_takes_units_and_is_stored_in_metres(self) -> None:
        url = f"{V}/locations/{self.world.room.pk}/"
        response = self.patch("lso", url, {"longest_dimension": "750 cm"})
        self.assertEqual(response.status_code, 200, response.content[:400])
        self.world.room.refresh_from_db()
        self.assertAlmostEqual(self.world.room.longest_dimension_m, 7.5)
        response = self.assertRefusedUnchanged("lso", url, {"longest_dimension": "3 s"}, self.world.room, status=400)
        self.assertEqual(list(response.json()), ["longest_dimension"])

    def test_a_role_change_moves_the_account_to_the_roles_group(self) -> None:
        person = self.world.user
        response = self.patch("lso", f"{V}/people/{person.pk}/", {"role": "inspector"})
        self.assertEqual(response.status_code, 200, response.content[:400])
        person.refresh_from_db()
        self.assertEqual(person.role, "inspector")
        self.assertEqual(list(person.user.groups.values_list("name", flat=True)), ["Inspectors"])
        self.assertIs(person.user.is_staff, True)
        # Fields not sent stay as they were (a PATCH is not a reset).
        self.assertEqual(person.supervisor, self.world.owner)
        self.assertEqual(person.research_group, self.world.owner.research_group)

    def test_an_account_field_of_a_person_is_refused(self) -> None:
        response = self.assertRefusedUnchanged("lso", f"{V}/people/{self.world.user.pk}/", {"email": "x@example.org"},
                                               self.world.user, status=400)
        self.assertEqual(list(response.json()), ["email"])
