"""Standard operating procedures per laser, and who has read them."""
from __future__ import annotations

import zipfile
from dataclasses import dataclass
from typing import IO, Any

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import ComplianceRecord, free_text
from registry.models.laser import Laser
from registry.models.people import Person


@dataclass(frozen=True)
class DocumentKind:
    content_type: str
    extension: str


PDF = DocumentKind("application/pdf", ".pdf")
DOCX = DocumentKind("application/vnd.openxmlformats-officedocument.wordprocessingml.document", ".docx")
ODT = DocumentKind("application/vnd.oasis.opendocument.text", ".odt")


def document_kind(file: IO[bytes]) -> DocumentKind | None:
    """What an SOP document is, read from its bytes (never its name or the type the client
    claims): a PDF, a Word (.docx) or an OpenDocument (.odt) text; None for anything else,
    HTML and plain text among them. Reads only the head and the archive's table of contents,
    never unpacks, and leaves the file at its start."""
    file.seek(0)
    head = file.read(8)
    try:
        if head.startswith(b"%PDF-"):
            return PDF
        if not head.startswith(b"PK\x03\x04"):
            return None
        file.seek(0)
        with zipfile.ZipFile(file) as archive:
            names = archive.namelist()
            if "[Content_Types].xml" in names and "word/document.xml" in names:
                return DOCX
            # OpenDocument puts its type, uncompressed, in a first entry named "mimetype".
            if names[:1] == ["mimetype"] and archive.getinfo("mimetype").file_size < 100:
                return ODT if archive.read("mimetype") == ODT.content_type.encode() else None
        return None
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, ValueError):
        return None
    finally:
        file.seek(0)


def validate_sop_document(document: Any) -> None:
    """An SOP document coming in (API, admin, services): at most SOP_DOCUMENT_MAX_BYTES, and a
    PDF or office text by its content. A document already stored was checked when it came."""
    if getattr(document, "_committed", False):
        return
    limit = settings.SOP_DOCUMENT_MAX_BYTES
    if document.size > limit:
        raise ValidationError(
            _("The document is %(size)s MB; at most %(limit)s MB is accepted."),
            code="too_large", params={"size": f"{document.size / 2**20:.1f}", "limit": f"{limit / 2**20:g}"})
    if document_kind(document) is None:
        raise ValidationError(_("The document must be a PDF, a Word (.docx) or an OpenDocument (.odt) text; "
                                "its content is none of these."), code="type")


class SOPStatus(models.TextChoices):
    DRAFT = "draft", _("draft")
    APPROVED = "approved", _("approved")
    SUPERSEDED = "superseded", _("superseded")


class SOP(ComplianceRecord):
    laser = models.ForeignKey(Laser, on_delete=models.PROTECT, related_name="sops", verbose_name=_("laser"))
    title = models.CharField(_("title"), max_length=200)
    version = models.PositiveIntegerField(_("version"))
    status = models.CharField(_("status"), max_length=20, choices=SOPStatus.choices, default=SOPStatus.DRAFT)
    summary = free_text(_("summary"), blank=True)
    document = models.FileField(_("document"), upload_to="sops/", blank=True, validators=[validate_sop_document])
    approved_on = models.DateField(_("approved on"), null=True, blank=True)
    approved_by = models.ForeignKey(Person, on_delete=models.PROTECT, null=True, blank=True,
                                    related_name="approved_sops", verbose_name=_("approved by"))
    review_due = models.DateField(_("review due"), null=True, blank=True)

    history = HistoricalRecords()

    class Meta:
        ordering = ["laser", "-version"]
        verbose_name = _("SOP")
        verbose_name_plural = _("SOPs")
        constraints = [
            models.UniqueConstraint(fields=["laser", "version"], name="registry_sop_unique_version"),
            models.CheckConstraint(condition=models.Q(version__gte=1), name="registry_sop_version_positive",
                violation_error_message=_("SOP versions start at 1.")),
            models.CheckConstraint(
                condition=models.Q(status__in=[choice.value for choice in SOPStatus]),
                name="registry_sop_status_valid",
            ),
            models.CheckConstraint(
                condition=models.Q(status=SOPStatus.DRAFT)
                | (models.Q(approved_on__isnull=False) & models.Q(approved_by__isnull=False)),
                name="registry_sop_approved_has_approver",
                violation_error_message=_("An approved or superseded SOP needs its approval date and approver."),
            ),
            # Only one version of a laser's SOP is in force at a time.
            models.UniqueConstraint(fields=["laser"], condition=models.Q(status=SOPStatus.APPROVED),
                                    name="registry_sop_one_approved_per_laser"),
        ]

    def __str__(self) -> str:
        return f"{self.title} v{self.version}"


class SOPAcknowledgement(ComplianceRecord):
    """A person's statement that they have read and will follow one version of an SOP."""

    sop = models.ForeignKey(SOP, on_delete=models.PROTECT, related_name="acknowledgements", verbose_name=_("SOP"))
    person = models.ForeignKey(Person, on_delete=models.PROTECT, related_name="sop_acknowledgements",
                               verbose_name=_("person"))
    acknowledged_at = models.DateTimeField(_("acknowledged at"))

    history = HistoricalRecords()

    class Meta:
        ordering = ["sop", "person"]
        verbose_name = _("SOP acknowledgement")
        verbose_name_plural = _("SOP acknowledgements")
        constraints = [
            models.UniqueConstraint(fields=["sop", "person"], name="registry_sopacknowledgement_once_per_person"),
        ]

    def __str__(self) -> str:
        return f"{self.person} read {self.sop}"
