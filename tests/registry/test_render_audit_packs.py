"""manage.py render_audit_packs, through call_command."""
from __future__ import annotations

import datetime
import io
from io import StringIO
from pathlib import Path

import pytest
from django.core.management import CommandError, call_command
from django.test import TestCase
from pypdf import PdfReader

from registry import services
from tests.registry.documents_world import DocumentsWorld, build_documents_world

SIGNED_OFF_AT = datetime.datetime(2026, 6, 10, 15, 0, tzinfo=datetime.timezone.utc)


class RenderAuditPacksTests(TestCase):
    world: DocumentsWorld

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_documents_world()

    @pytest.fixture(autouse=True)
    def folder(self, tmp_path: Path) -> None:
        self.output = tmp_path / "packs"

    def run_command(self, *args: str) -> tuple[str, str]:
        stdout, stderr = StringIO(), StringIO()
        call_command("render_audit_packs", "--output", str(self.output), *args, stdout=stdout, stderr=stderr)
        return stdout.getvalue(), stderr.getvalue()

    def test_it_renders_the_report_of_each_audit_signed_off_in_the_period(self) -> None:
        services.audit_sign_off(audit=self.world.audit, by=self.world.lso, at=SIGNED_OFF_AT)
        out, err = self.run_command("--closed-from", "2026-06-01", "--closed-to", "2026-06-30",
                                    "--generated-at", "2026-07-01T08:00:00+00:00")
        report = self.output / "aud-lab-1-report.pdf"
        pages = len(PdfReader(io.BytesIO(report.read_bytes())).pages)
        self.assertEqual(out, f"Rendered 1 audit report ({pages} pages) into {self.output}.\n")
        # Not a terminal: no progress bar.
        self.assertEqual(err, "")
        self.assertEqual(sorted(path.name for path in self.output.iterdir()), ["aud-lab-1-report.pdf"])
        self.assertIn("AUD-LAB-1", PdfReader(io.BytesIO(report.read_bytes())).pages[0].extract_text())

        first = report.read_bytes()
        self.run_command("--closed-from", "2026-06-01", "--closed-to", "2026-06-30",
                         "--generated-at", "2026-07-01T08:00:00+00:00")
        self.assertEqual(report.read_bytes(), first)

    def test_an_audit_signed_off_outside_the_period_is_left_out(self) -> None:
        services.audit_sign_off(audit=self.world.audit, by=self.world.lso, at=SIGNED_OFF_AT)
        out, _ = self.run_command("--closed-from", "2026-06-11", "--closed-to", "2026-06-30")
        self.assertEqual(out, f"Rendered 0 audit reports (0 pages) into {self.output}.\n")
        self.assertEqual(list(self.output.iterdir()), [])

    def test_due_renders_the_pre_audit_pack_of_each_room_due_for_audit(self) -> None:
        # lab-1 holds class 4 and 3B lasers and has never had an audit signed off: it is overdue.
        out, _ = self.run_command("--due", "--paper", "letter")
        self.assertTrue(out.startswith("Rendered 1 pre-audit pack ("))
        pack = PdfReader(io.BytesIO((self.output / "lab-1-pre-audit.pdf").read_bytes()))
        self.assertEqual(float(pack.pages[0].mediabox.width), 612.0)
        self.assertIn("Pre-audit pack", pack.pages[0].extract_text())

    def test_user_mistakes_are_command_errors(self) -> None:
        self.output.parent.mkdir(parents=True, exist_ok=True)
        a_file = self.output.parent / "not-a-folder"
        a_file.write_text("")
        cases = [
            ((), "Give either --closed-from"),
            (("--due", "--closed-from", "2026-01-01"), "Give either --closed-from"),
            (("--due", "--closed-to", "2026-01-01"), "--closed-to goes with --closed-from"),
            (("--closed-from", "2026-06-30", "--closed-to", "2026-06-01"), "is before --closed-from"),
            (("--closed-from", "2026-13-01"), "is not a date"),
            (("--due", "--generated-at", "soon"), "is not a date and time"),
            (("--due", "--within-days", "-1"), "cannot be negative"),
            (("--due", "--paper", "a3"), "invalid choice"),
        ]
        for args, message in cases:
            with self.subTest(args=args), self.assertRaisesMessage(CommandError, message):
                self.run_command(*args)
        with self.assertRaisesMessage(CommandError, "exists and is not a folder"):
            call_command("render_audit_packs", "--output", str(a_file), "--due", stdout=StringIO())
        self.assertFalse(self.output.exists())
