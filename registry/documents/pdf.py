"""One render function per printed document, each from its template ``templates/pdf/<name>.html``.

A render function returns the HTML (what tests read) and turns it into PDF with WeasyPrint on
request. ``generated_at`` is printed on the document and written as the PDF's creation and
modification dates, so the same register and the same ``generated_at`` give byte-identical
files.
"""
from __future__ import annotations

import datetime
import gc
from dataclasses import dataclass
from typing import Any

import segno
from django.conf import settings
from django.db import models
from django.template.loader import render_to_string
from django.utils.safestring import mark_safe
from django.utils.text import slugify
from django.utils.translation import gettext_lazy as _

from hazards.limits.limit_set import load_limit_set
from registry.documents import content
from registry.models import Audit, Laser, Location


class Paper(models.TextChoices):
    """Sheet sizes for signs and reports (the ``paper`` query parameter)."""

    A4 = "a4", _("A4 (210 x 297 mm)")
    LETTER = "letter", _("US Letter (8.5 x 11 in)")


# CSS @page sizes.
_PAGE_SIZES = {Paper.A4: "A4", Paper.LETTER: "letter"}


@dataclass(frozen=True)
class Pdf:
    data: bytes
    pages: int


@dataclass(frozen=True)
class Document:
    html: str
    filename: str

    def to_pdf(self) -> Pdf:
        # Imported here: WeasyPrint takes most of a second to import, and only rendering needs it.
        from weasyprint import HTML

        # WeasyPrint lays a site's report out in millions of objects that all live until the PDF
        # is written. The cycle collector would walk them again at each of its full passes as
        # they pile up, a quarter to a third of the PDF's time, to find almost nothing: reference
        # counting frees the rest. It is off for the render and on again after, unless it was off
        # before (another render in this process, or the caller's choice).
        collecting = gc.isenabled()
        gc.disable()
        try:
            laid_out = HTML(string=self.html, base_url=str(settings.BASE_DIR)).render()
            return Pdf(data=laid_out.write_pdf(), pages=len(laid_out.pages))
        finally:
            if collecting:
                gc.enable()


def _render(name: str, filename: str, *, generated_at: datetime.datetime, paper: Paper | None,
            **context: Any) -> Document:
    html = render_to_string(f"pdf/{name}.html", {
        **context, "generated_at": generated_at, "page_size": _PAGE_SIZES.get(paper) if paper else None,
    })
    return Document(html=html, filename=filename)


def _limit_set_title(name: str) -> str:
    return f"{load_limit_set(name).title} ({name})"


def render_door_sign(location: Location, *, generated_at: datetime.datetime, paper: Paper = Paper.A4,
                     limits: str | None = None) -> Document:
    """The door sign of a laser controlled area (``templates/pdf/door_sign.html``)."""
    sign = content.door_sign(location, limits=limits)
    return _render("door_sign", f"door-sign-{location.code}.pdf", generated_at=generated_at, paper=paper,
                   sign=sign, limit_set_title=_limit_set_title(sign.limits))


def render_laser_label(laser: Laser, *, page_url: str, generated_at: datetime.datetime) -> Document:
    """The equipment label of a laser, 100 x 62 mm, with a QR code of ``page_url``
    (``templates/pdf/laser_label.html``). ``laser`` must be loaded by ``selectors.laser_list()``."""
    label = content.laser_label(laser, page_url=page_url)
    qr_code = segno.make(page_url, error="m").svg_inline(omitsize=True, border=2)
    return _render("laser_label", f"label-{slugify(laser.asset_tag)}.pdf", generated_at=generated_at, paper=None,
                   label=label, qr_code=mark_safe(qr_code))


def render_audit_report(audit: Audit, *, generated_at: datetime.datetime, paper: Paper = Paper.A4,
                        limits: str | None = None) -> Document:
    """An audit's report as on the day of ``generated_at`` (``templates/pdf/audit_report.html``)."""
    report = content.audit_report(audit, as_of=generated_at.date(), limits=limits)
    return _render("audit_report", f"{slugify(audit.reference)}-report.pdf", generated_at=generated_at,
                   paper=paper, report=report, limit_set_title=_limit_set_title(report.limits))


def render_pre_audit_pack(location: Location, *, generated_at: datetime.datetime, paper: Paper = Paper.A4,
                          limits: str | None = None) -> Document:
    """A due room's pre-audit pack: the report's sections with the checklist still to answer
    (the audit report's template)."""
    report = content.pre_audit_pack(location, as_of=generated_at.date(), limits=limits)
    return _render("audit_report", f"{location.code}-pre-audit.pdf", generated_at=generated_at, paper=paper,
                   report=report, limit_set_title=_limit_set_title(report.limits))
