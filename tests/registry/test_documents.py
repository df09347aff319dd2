"""Printed documents: what the HTML says before conversion, and what the PDF says after (pypdf).

The hazard figures printed here are the ones the register stored for each emission; these
tests check that each document prints them (and the cautions) faithfully. Whether the
figures themselves are right is checked against the published limits in tests/hazards and
tests/registry/test_hazards.py.
"""
from __future__ import annotations

import datetime
import gc
import hashlib
import io
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from django.conf import settings
from django.test import SimpleTestCase, TestCase, override_settings
from pypdf import PageObject, PdfReader

from hazards.caution import CAUTION
from hazards.units import format_for_people
from registry import selectors
from registry.documents import Document, Paper, render_audit_report, render_door_sign, render_laser_label, render_pre_audit_pack
from registry.models import HazardResult
from tests import factories
from tests.registry.documents_world import DocumentsWorld, build_documents_world

GENERATED_AT = datetime.datetime(2026, 12, 1, 9, 30, tzinfo=datetime.timezone.utc)
ARTIFACTS = Path(settings.BASE_DIR) / "artifacts" / "documents"

# PDF page boxes in points: A4 is 210 x 297 mm, US Letter 8.5 x 11 in.
A4_POINTS = (595.28, 841.89)
LETTER_POINTS = (612.0, 792.0)


def pdf_text(data: bytes) -> tuple[str, int]:
    reader = PdfReader(io.BytesIO(data))
    return "\n".join(page.extract_text() for page in reader.pages), len(reader.pages)


def page_size(data: bytes) -> tuple[float, float]:
    box = PdfReader(io.BytesIO(data)).pages[0].mediabox
    return round(float(box.width), 2), round(float(box.height), 2)


def page_head(page: PageObject) -> str:
    """The text above the report's top margin (16 mm): its reference and the room at the top of the page."""
    top = float(page.mediabox.height) - 16 / 25.4 * 72
    parts: list[str] = []

    def visit(text: str, cm: list[float], tm: list[float], font: object, size: float) -> None:
        if text.strip() and tm[5] * cm[3] + cm[5] > top:
            parts.append(text.strip())

    page.extract_text(visitor_text=visit)
    return " ".join(parts)


def digest(data: bytes) -> str:
    """Compared instead of the bytes themselves, so that a failure prints two lines, not two PDFs."""
    return hashlib.sha256(data).hexdigest()


def flat(text: str) -> str:
    """Text with runs of white space made one space, and words hyphenated at a line end joined again:
    extraction breaks lines where the layout does."""
    return re.sub(r"\s+", " ", text).replace("- ", "-")


def add_laser_not_assessed(world: DocumentsWorld) -> None:
    """A 905 nm diode in the world's room whose data sheet gives no divergence: the engine cannot
    assess its beam, so emission_create saves it without results."""
    from registry import services

    laser = services.laser_register(by=world.owner, asset_tag="DIO-2", laser_type="diode", labelled_class="3B",
                                    owner=world.owner, location=world.room, manufacturer="Holm Photonics",
                                    model_name="D-905")
    services.emission_create(laser=laser, by=world.owner, label="output", wavelength_m="905 nm", temporal_mode="cw",
                             average_power_W="200 mW", beam_diameter_m="2 mm")


class RenderTests(SimpleTestCase):
    """Document.to_pdf keeps the cycle collector off while WeasyPrint works (see the comment there)."""

    # Twenty rows: enough objects for the collector to run several times if it were on.
    document = Document(html="<table>" + "<tr><td>Laser</td><td>Room</td></tr>" * 20 + "</table>",
                        filename="rows.pdf")

    def test_no_cycle_collection_runs_during_a_render_and_the_collector_is_on_again_after(self) -> None:
        generations: list[int] = []

        def count(phase: str, info: dict[str, int]) -> None:
            if phase == "start":
                generations.append(info["generation"])

        gc.callbacks.append(count)
        try:
            pdf = self.document.to_pdf()
        finally:
            gc.callbacks.remove(count)
        self.assertEqual((generations, pdf.pages), ([], 1))
        self.assertIs(gc.isenabled(), True)

    def test_a_collector_that_was_off_stays_off(self) -> None:
        gc.disable()
        try:
            self.document.to_pdf()
            self.assertIs(gc.isenabled(), False)
        finally:
            gc.enable()


class DoorSignTests(TestCase):
    world: DocumentsWorld

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_documents_world()

    def result(self, asset_tag: str) -> HazardResult:
        return HazardResult.objects.get(emission__laser__asset_tag=asset_tag, limits=selectors.register_limits())

    def test_a_room_with_a_class_4_nd_yag_and_a_class_3b_diode_shows_the_class_4_word_and_eyewear_for_both(self) -> None:
        document = render_door_sign(self.world.room, generated_at=GENERATED_AT)
        html = flat(document.html)
        # BEAMKEEPER_SIGNAL_WORDS default: 4=DANGER (common practice, no source for the mapping itself).
        self.assertIn('<div class="signal-word">DANGER</div>', html)
        self.assertIn("Class 4 laser:", html)
        yag, diode = self.result("YAG-1"), self.result("DIO-1")
        for wavelength, result, goggles in (("808 nm", diode, "EW-808"), ("1064 nm", yag, "EW-1064")):
            with self.subTest(wavelength=wavelength):
                row = re.search(rf"<tr>\s*<td>{re.escape(wavelength)}</td>(.*?)</tr>", html).group(1)
                self.assertIn(f"OD {result.od_required:g}", row)
                self.assertIn(result.en207_marking, row)
                self.assertIn(goggles, row)
        # The Nd:YAG's pulse: 100 mJ in 10 ns; the diode's 300 mW.
        self.assertIn("100 mJ", html)
        self.assertIn("10 ns", html)
        self.assertIn("300 mW", html)
        self.assertIn(format_for_people(max(yag.nohd_m, diode.nohd_m), "m"), html)
        for instruction in ("authorized personnel only", "opening it stops the laser", "warning light is lit"):
            self.assertIn(instruction, html)
        self.assertIn("Ada Quill", html)
        self.assertIn("+00 100 200", html)
        self.assertIn(CAUTION, html)

        text, pages = pdf_text(document.to_pdf().data)
        text = flat(text)
        self.assertEqual(pages, 1)
        for expected in ("DANGER", "1064 nm", "808 nm", f"OD {yag.od_required:g}", f"OD {diode.od_required:g}",
                         "EW-1064", "EW-808", "Ada Quill", CAUTION[:60]):
            self.assertIn(expected, text)

    def test_the_signal_word_follows_the_setting(self) -> None:
        with override_settings(SIGNAL_WORDS={**settings.SIGNAL_WORDS, "4": "WARNING"}):
            html = render_door_sign(self.world.room, generated_at=GENERATED_AT).html
        self.assertIn('<div class="signal-word">WARNING</div>', html)

    def test_a_room_whose_classes_call_for_no_signal_word_says_so(self) -> None:
        room = factories.LocationFactory.create(code="quiet-1")
        factories.LaserFactory.create(labelled_class="1", location=room)
        html = flat(render_door_sign(room, generated_at=GENERATED_AT).html)
        self.assertIn('<div class="signal-word">LASER</div>', html)
        self.assertIn("No class in this room calls for a warning sign", html)
        self.assertIn("Class 1 laser product: safe in normal use.", html)

    def test_a_sign_comes_on_a4_and_on_us_letter_on_one_page(self) -> None:
        for paper, size in ((Paper.A4, A4_POINTS), (Paper.LETTER, LETTER_POINTS)):
            with self.subTest(paper=paper):
                pdf = render_door_sign(self.world.room, generated_at=GENERATED_AT, paper=paper).to_pdf()
                self.assertEqual((page_size(pdf.data), pdf.pages), (size, 1))

    def test_a_wavelength_without_adequate_eyewear_in_the_room_sends_people_to_the_lso(self) -> None:
        from registry import services

        services.record_retire(record=self.world.goggles_808, by=self.world.lso, reason="Filter cracked.")
        html = flat(render_door_sign(self.world.room, generated_at=GENERATED_AT).html)
        row = re.search(r"<tr>\s*<td>808 nm</td>(.*?)</tr>", html).group(1)
        self.assertIn("none in this room: ask the LSO", row)

    def test_a_wavelength_not_assessed_shows_no_figures_and_sends_people_to_the_lso(self) -> None:
        add_laser_not_assessed(self.world)
        html = flat(render_door_sign(self.world.room, generated_at=GENERATED_AT).html)
        row = re.search(r"<tr>\s*<td>905 nm</td>(.*?)</tr>", html).group(1)
        self.assertIn("not computed", row)
        self.assertIn("none in this room: ask the LSO", row)

    def test_the_same_generated_at_gives_the_same_bytes_and_another_does_not(self) -> None:
        first = render_door_sign(self.world.room, generated_at=GENERATED_AT).to_pdf().data
        again = render_door_sign(self.world.room, generated_at=GENERATED_AT).to_pdf().data
        later = render_door_sign(self.world.room, generated_at=GENERATED_AT + datetime.timedelta(days=1)).to_pdf().data
        self.assertEqual(digest(first), digest(again))
        self.assertNotEqual(digest(first), digest(later))
        self.assertEqual(PdfReader(io.BytesIO(first)).metadata.creation_date, GENERATED_AT)

    def test_a_sign_reads_the_register_in_six_queries(self) -> None:
        # lasers in the room; their emissions; the emissions' results; eyewear; their markings
        # (selectors.location_eyewear_matrix), then the LSOs to contact.
        with self.assertNumQueries(6):
            render_door_sign(self.world.room, generated_at=GENERATED_AT)


class LaserLabelTests(TestCase):
    world: DocumentsWorld

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_documents_world()

    def test_the_label_shows_tag_class_wavelengths_owner_and_a_qr_code_of_the_laser_page(self) -> None:
        laser = selectors.laser_list().get(pk=self.world.yag.pk)
        url = f"https://register.example/lasers/{laser.pk}/"
        document = render_laser_label(laser, page_url=url, generated_at=GENERATED_AT)
        html = flat(document.html)
        for expected in ("YAG-1", "Class 4", "1064 nm", "Rhea Tallis", url, CAUTION):
            self.assertIn(expected, html)
        self.assertIn('<svg viewBox="0 0 ', html)
        self.assertIn('class="qrline"', html)
        text, pages = pdf_text(document.to_pdf().data)
        self.assertEqual(pages, 1)
        for expected in ("YAG-1", "Class 4", "1064 nm", "Rhea Tallis"):
            self.assertIn(expected, flat(text))


class AuditReportTests(TestCase):
    world: DocumentsWorld

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_documents_world()

    def test_the_report_has_every_section_with_figures_answers_findings_and_page_numbers(self) -> None:
        document = render_audit_report(self.world.audit, generated_at=GENERATED_AT)
        html = flat(document.html)
        yag = HazardResult.objects.get(emission__laser=self.world.yag, limits="icnirp2013")
        for expected in ("AUD-LAB-1", "Alder Hall 101", "Register snapshot", "Hazards per emission",
                         "Authorization and training", "Eyewear adequacy per room", "Checklist", "Findings",
                         "Cautions", yag.en207_marking, f"OD {yag.od_required:g}", "Is the lab log kept up to date?",
                         "Second harmonic dump missing on table 2.", "Fit a water-cooled beam dump.",
                         "ICNIRP 2013", CAUTION, "Not signed off"):
            self.assertIn(expected, html)
        self.assertIn('counter(page) " of " counter(pages)', document.html)

        text, pages = pdf_text(document.to_pdf().data)
        text = flat(text)
        self.assertGreaterEqual(pages, 2)
        self.assertIn("page 1 of", text)
        self.assertIn(f"page {pages} of {pages}", text)
        for expected in ("YAG-1", "DIO-1", "1064 nm", "808 nm", yag.en207_marking, "major",
                         "Fit a water-cooled beam dump.", CAUTION[:60]):
            self.assertIn(expected, text)

    def test_the_report_flags_an_expired_training_record(self) -> None:
        after_expiry = GENERATED_AT.replace(year=GENERATED_AT.year + 3)
        lapsed_on = self.world.training_expires_on
        document = render_audit_report(self.world.audit, generated_at=after_expiry)
        html = flat(document.html)
        people = re.search(r"<tr><td>YAG-1</td>\s*<td>(.*?)</td>\s*<td class=\"flag\">(.*?)</td></tr>", html)
        self.assertIn("Lars Fenn: approved, training " + f"{lapsed_on:%Y-%m-%d}", people.group(1))
        self.assertEqual(people.group(2), f"Lars Fenn: training expired on {lapsed_on:%Y-%m-%d}")
        self.assertIn(f"training expired on {lapsed_on:%Y-%m-%d}", flat(pdf_text(document.to_pdf().data)[0]))
        # Before it lapses nothing is flagged.
        self.assertNotIn("training expired", render_audit_report(self.world.audit, generated_at=GENERATED_AT).html)

    def test_the_snapshot_names_each_room_once_above_its_lasers(self) -> None:
        html = flat(render_audit_report(self.world.audit, generated_at=GENERATED_AT).html)
        snapshot = html[html.index("1. Register snapshot"):html.index("2. Hazards per emission")]
        self.assertEqual(re.findall(r"<th colspan=\"3\">(.*?)</th>", snapshot),
                         ["Alder Hall 101 (Pulsed laser laboratory), North Site (2 lasers)"])
        self.assertEqual(re.findall(r"<tr[^>]*><td>(.*?)</td><td>(.*?)</td><td>(.*?)</td></tr>", snapshot),
                         [("DIO-1, class 3B, active", "Holm Photonics D-808", "Rhea Tallis"),
                          ("YAG-1, class 4, active", "Holm Photonics QX-10", "Rhea Tallis")])

    def test_an_emission_is_one_row_with_its_beam_its_figures_and_the_eyewear_it_needs(self) -> None:
        yag = HazardResult.objects.get(emission__laser=self.world.yag, limits="icnirp2013")
        html = flat(render_audit_report(self.world.audit, generated_at=GENERATED_AT).html)
        mpe, nohd, eyewear = re.search(r"<tr><td>YAG-1 fundamental: 1064 nm, 1 W; 100 mJ in 10 ns</td><td>(.*?)</td>"
                                       r"<td class=\"figure\">(.*?)</td><td>(.*?)</td></tr>", html).groups()
        self.assertIn(f"{format_for_people(yag.eye_mpe_per_pulse_J_m2, 'J/m2')} per pulse", mpe)
        self.assertEqual(nohd, format_for_people(yag.nohd_m, "m"))
        self.assertEqual(eyewear, f"OD {yag.od_required:g}; {yag.en207_marking}")

    def test_a_page_that_starts_among_a_rooms_lasers_names_the_room_at_its_head(self) -> None:
        room = factories.LocationFactory.create(site="South Site", building="Birch Hall", room="12")
        factories.LaserFactory.create_batch(60, location=room, owner=self.world.owner)
        pages = PdfReader(io.BytesIO(render_pre_audit_pack(room, generated_at=GENERATED_AT).to_pdf().data)).pages
        # Page 2 opens the snapshot, with the room's own row; page 3 goes on among its 60 lasers.
        self.assertIn("Birch Hall 12, South Site (60 lasers)", pages[1].extract_text())
        self.assertNotIn("Birch Hall 12", page_head(pages[1]))
        self.assertNotIn("(60 lasers)", pages[2].extract_text())
        self.assertIn("Birch Hall 12, South Site", page_head(pages[2]))

    def test_an_emission_not_assessed_is_printed_without_figures_and_said_why(self) -> None:
        add_laser_not_assessed(self.world)
        html = flat(render_audit_report(self.world.audit, generated_at=GENERATED_AT).html)
        hazards = re.search(r"<tr><td>DIO-2 output: 905 nm, 200 mW</td>(.*?)</tr>", html).group(1)
        # Eye MPE, NOHD and OD.
        self.assertEqual(hazards.count("not computed"), 3)
        eyewear = re.search(r"<tr><td>905 nm</td>(.*?)</tr>", html).group(1)
        self.assertIn('<span class="flag">not assessed</span>', eyewear)
        self.assertIn("Not assessed: full-angle divergence (rad): needed to assess the hazard of DIO-2", html)

    def test_a_signed_off_report_names_who_signed_it(self) -> None:
        from registry import services

        services.audit_sign_off(audit=self.world.audit, by=self.world.lso, summary="One beam dump to fit.",
                                at=GENERATED_AT)
        html = flat(render_audit_report(self.world.audit, generated_at=GENERATED_AT).html)
        self.assertIn("Signed off by <strong>Ada Quill</strong> on 2026-12-01 09:30", html)
        self.assertIn("One beam dump to fit.", html)

    def test_the_report_on_us_letter_is_reproducible(self) -> None:
        first = render_audit_report(self.world.audit, generated_at=GENERATED_AT, paper=Paper.LETTER).to_pdf()
        again = render_audit_report(self.world.audit, generated_at=GENERATED_AT, paper=Paper.LETTER).to_pdf()
        self.assertEqual(digest(first.data), digest(again.data))
        self.assertEqual(page_size(first.data), LETTER_POINTS)

    def test_the_report_reads_the_register_in_queries_that_grow_with_rooms_not_lasers(self) -> None:
        # The audit (room, auditor and signatory joined); the scope's lasers, their emissions, the
        # emissions' results; the checklist; the findings (owner, account, laser, room joined); the
        # authorizations (person and account joined); general training; the LSOs; then the room's
        # eyewear and its markings.
        with self.assertNumQueries(11):
            render_audit_report(self.world.audit, generated_at=GENERATED_AT)

    def test_a_pre_audit_pack_lists_the_checks_the_room_calls_for_unanswered(self) -> None:
        html = flat(render_pre_audit_pack(self.world.room, generated_at=GENERATED_AT).html)
        self.assertIn("Pre-audit pack", html)
        for heading in ("Signs", "Entry controls", "Eyewear", "Registered", "SOP", "Key"):
            self.assertIn(f"<th>{heading}</th>", html)
        self.assertIn("\u2610", html)
        # The finding the audit raised is still open, so the pack carries it.
        self.assertIn("Fit a water-cooled beam dump.", html)


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="needs poppler's pdftoppm")
class DocumentPicturesTests(TestCase):
    """Writes the main documents and their pages as PNG to artifacts/documents/, to look at."""

    world: DocumentsWorld

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_documents_world()

    def test_each_main_document_renders_to_png_pages(self) -> None:
        ARTIFACTS.mkdir(parents=True, exist_ok=True)
        laser = selectors.laser_list().get(pk=self.world.yag.pk)
        documents = [
            render_door_sign(self.world.room, generated_at=GENERATED_AT),
            render_door_sign(self.world.room, generated_at=GENERATED_AT, paper=Paper.LETTER),
            render_laser_label(laser, page_url="https://register.example/lasers/1/", generated_at=GENERATED_AT),
            render_audit_report(self.world.audit, generated_at=GENERATED_AT),
        ]
        for index, document in enumerate(documents):
            stem = ARTIFACTS / f"{index}-{Path(document.filename).stem}"
            pdf = document.to_pdf()
            stem.with_suffix(".pdf").write_bytes(pdf.data)
            for old in ARTIFACTS.glob(f"{stem.name}-*.png"):
                old.unlink()
            subprocess.run(["pdftoppm", "-png", "-r", "60", str(stem.with_suffix(".pdf")), str(stem)], check=True)
            pictures = sorted(ARTIFACTS.glob(f"{stem.name}-*.png"))
            self.assertEqual(len(pictures), pdf.pages)
            self.assertTrue(all(picture.stat().st_size > 1000 for picture in pictures))
