"""manage.py render_audit_packs: audit reports of a period, or pre-audit packs of due rooms, as PDF files."""
from __future__ import annotations

import argparse
import datetime
from collections.abc import Callable
from functools import partial
from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.utils import timezone
from tqdm import tqdm

from registry import selectors
from registry.documents import Document, Paper, render_audit_report, render_pre_audit_pack
from registry.services.scheduled import single_run


def _date(text: str) -> datetime.date:
    try:
        return datetime.date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a date; write it as YYYY-MM-DD.") from None


def _moment(text: str) -> datetime.datetime:
    try:
        moment = datetime.datetime.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{text!r} is not a date and time; write it as YYYY-MM-DDTHH:MM[:SS][+HH:MM].") from None
    return moment if timezone.is_aware(moment) else timezone.make_aware(moment)


class Command(BaseCommand):
    help = ("Render, into a folder, the PDF report of every audit signed off in a period (--closed-from/--closed-to) "
            "or the pre-audit pack of every room with a class 3B or 4 laser that is due or overdue for audit (--due). "
            "Shows a progress bar on a terminal. A run started while another is under way renders nothing.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--output", type=Path, required=True,
                            help="Folder the PDF files are written to (created if missing; files of the same name "
                                 "are replaced).")
        parser.add_argument("--closed-from", type=_date, default=None,
                            help="First day (YYYY-MM-DD) of the period in which the audits were signed off.")
        parser.add_argument("--closed-to", type=_date, default=None,
                            help="Last day (YYYY-MM-DD) of that period, inclusive; default: today.")
        parser.add_argument("--due", action="store_true",
                            help="Render the pre-audit pack of every room due for audit instead of closed reports.")
        parser.add_argument("--within-days", type=int, default=30,
                            help="With --due: also rooms that fall due within this many days (default 30).")
        parser.add_argument("--paper", choices=[choice.value for choice in Paper], default=Paper.A4.value,
                            help="Sheet size: a4 (default) or letter (US Letter).")
        parser.add_argument("--generated-at", type=_moment, default=None,
                            help="Date and time printed on every document and written as its PDF creation date "
                                 "(default: now); the same value gives byte-identical files.")

    def handle(self, *args: Any, **options: Any) -> None:
        closed_from: datetime.date | None = options["closed_from"]
        if options["due"] == (closed_from is not None):
            raise CommandError("Give either --closed-from (reports of audits signed off in a period) or --due "
                               "(pre-audit packs of rooms due for audit).")
        if options["due"] and options["closed_to"] is not None:
            raise CommandError("--closed-to goes with --closed-from, not with --due.")
        if options["within_days"] < 0:
            raise CommandError("--within-days cannot be negative.")
        output: Path = options["output"]
        if output.exists() and not output.is_dir():
            raise CommandError(f"{output} exists and is not a folder.")
        # Every server's cron may start it: one run renders, the others stop here.
        with single_run("render_audit_packs") as acquired:
            if not acquired:
                self.stdout.write("Another render_audit_packs is running; nothing rendered by this one.")
                return
            self._render(options, closed_from=closed_from, output=output)

    def _render(self, options: dict[str, Any], *, closed_from: datetime.date | None, output: Path) -> None:
        generated_at = options["generated_at"] or timezone.now()
        paper = Paper(options["paper"])

        records: list[Any]
        render: Callable[[Any], Document]
        if closed_from is None:  # --due, as checked above
            due = selectors.audits_due(today=timezone.localdate(generated_at), within_days=options["within_days"])
            records = [item.location for item in due]
            render = partial(render_pre_audit_pack, generated_at=generated_at, paper=paper)
            what = "pre-audit pack"
        else:
            closed_to = options["closed_to"] or timezone.localdate()
            if closed_to < closed_from:
                raise CommandError(f"--closed-to {closed_to} is before --closed-from {closed_from}.")
            records = list(selectors.audits_signed_off_between(closed_from, closed_to))
            render = partial(render_audit_report, generated_at=generated_at, paper=paper)
            what = "audit report"

        output.mkdir(parents=True, exist_ok=True)
        pages = 0
        # The bar goes to the terminal only: redirected output and call_command() get the summary line alone.
        # tqdm writes to the raw stream, since Django's wrapper would end each redraw with a newline.
        with tqdm(records, desc=f"{what}s", unit="pdf", file=self.stderr._out,
                  disable=not self.stderr.isatty()) as progress:
            for record in progress:
                document = render(record)
                pdf = document.to_pdf()
                (output / document.filename).write_bytes(pdf.data)
                pages += pdf.pages
        self.stdout.write(f"Rendered {len(records)} {what}{'s' if len(records) != 1 else ''} "
                          f"({pages} page{'s' if pages != 1 else ''}) into {output}.")
