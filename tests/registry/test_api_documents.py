"""The document routes of issue 11: answers, query parameters and errors (who may call them is in
test_api_permissions)."""
from __future__ import annotations

import io

from django.test import TestCase
from pypdf import PdfReader
from rest_framework.test import APIClient

from hazards.caution import CAUTION
from tests.registry.documents_world import DocumentsWorld, build_documents_world

V = "/api/v1"


class DocumentRouteTests(TestCase):
    world: DocumentsWorld

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_documents_world()

    def setUp(self) -> None:
        self.client = APIClient()
        self.client.force_authenticate(user=self.world.lso.user)

    def test_the_sign_is_a_pdf_named_after_the_room_in_the_paper_asked_for(self) -> None:
        response = self.client.get(f"{V}/locations/{self.world.room.pk}/sign.pdf?paper=letter")
        self.assertEqual(response.status_code, 200)
        self.assertEqual(response["Content-Type"], "application/pdf")
        self.assertEqual(response["Content-Disposition"], 'inline; filename="door-sign-lab-1.pdf"')
        page = PdfReader(io.BytesIO(response.content)).pages[0]
        self.assertEqual((float(page.mediabox.width), float(page.mediabox.height)), (612.0, 792.0))
        self.assertIn("DANGER", page.extract_text())

    def test_a_client_may_ask_for_pdf_by_accept_header_and_still_gets_errors_as_json(self) -> None:
        ok = self.client.get(f"{V}/lasers/{self.world.yag.pk}/label.pdf", HTTP_ACCEPT="application/pdf")
        self.assertEqual((ok.status_code, ok["Content-Type"]), (200, "application/pdf"))
        missing = self.client.get(f"{V}/lasers/999999/label.pdf", HTTP_ACCEPT="application/pdf")
        self.assertEqual((missing.status_code, missing["Content-Type"]), (404, "application/json"))
        self.assertIn("detail", missing.json())

    def test_the_label_qr_code_points_to_the_laser_page_on_this_host(self) -> None:
        response = self.client.get(f"{V}/lasers/{self.world.yag.pk}/label.pdf", HTTP_HOST="127.0.0.1")
        text = PdfReader(io.BytesIO(response.content)).pages[0].extract_text()
        self.assertIn(f"http://127.0.0.1/lasers/{self.world.yag.pk}/", text.replace("\n", ""))

    def test_a_bad_paper_or_date_is_a_400_naming_the_parameter(self) -> None:
        for query, field in (("paper=a3", "paper"), ("generated_at=yesterday", "generated_at")):
            with self.subTest(query=query):
                response = self.client.get(f"{V}/audits/{self.world.audit.pk}/report.pdf?{query}")
                self.assertEqual(response.status_code, 400)
                self.assertIn(field, response.json())

    def test_the_same_generated_at_gives_the_same_report_file(self) -> None:
        url = f"{V}/audits/{self.world.audit.pk}/report.pdf?generated_at=2026-11-30T08:00:00Z"
        self.assertEqual(self.client.get(url).content, self.client.get(url).content)

    def test_the_report_json_carries_every_section_with_si_figures_and_flags(self) -> None:
        response = self.client.get(f"{V}/audits/{self.world.audit.pk}/report.json")
        self.assertEqual(response.status_code, 200)
        report = response.json()
        self.assertEqual((report["reference"], report["status"], report["limits"]),
                         ("AUD-LAB-1", "in_progress", "icnirp2013"))
        self.assertEqual([laser["asset_tag"] for laser in report["lasers"]], ["DIO-1", "YAG-1"])
        yag = next(row for row in report["hazards"] if row["asset_tag"] == "YAG-1")
        self.assertAlmostEqual(yag["wavelength_m"], 1064e-9)
        self.assertIs(yag["assessed"], True)
        self.assertGreater(yag["od_required"], 0)
        self.assertEqual([row["person"]["name"] for row in report["people"]], ["Lars Fenn", "Cora Mill"])
        self.assertEqual(report["rooms"][0]["location"]["code"], "lab-1")
        self.assertEqual({line["wavelength_m"] for line in report["rooms"][0]["lines"]}, {808e-9, 1064e-9})
        failed = [item for item in report["checklist"] if item["answer"] == "fail"]
        self.assertEqual([(item["control"], item["laser"]) for item in failed],
                         [("beams_terminated", self.world.yag.pk)])
        self.assertEqual(report["findings"][0]["checklist_item"],
                         self.world.audit.checklist.get(answer="fail").pk)
        self.assertEqual(report["caution"], CAUTION)

    def test_the_report_json_flags_training_expired_on_the_day_asked_for(self) -> None:
        day = self.world.training_expires_on.replace(year=self.world.training_expires_on.year + 1)
        response = self.client.get(f"{V}/audits/{self.world.audit.pk}/report.json?generated_at={day}T12:00:00Z")
        flags = {row["person"]["name"]: row["flags"] for row in response.json()["people"]}
        self.assertEqual(flags, {"Lars Fenn": [f"training expired on {self.world.training_expires_on:%Y-%m-%d}"],
                                 "Cora Mill": []})
