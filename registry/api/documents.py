"""What the document routes share: their query parameters, the PDF answer and its schema.

The routes themselves are viewset methods (``LocationViewSet.sign``, ``LaserViewSet.label``,
``AuditViewSet.report_pdf`` / ``report_json``, ``SOPViewSet.document``), so each document is
served under the policy of the record it shows; registry/api/urls.py maps them to the paths of issue 11
(``sign.pdf``, ``label.pdf``, ``report.pdf``, ``report.json``, without a trailing slash).
"""
from __future__ import annotations

import datetime
import json
from typing import Any

from django.http import FileResponse, HttpResponse
from django.utils import timezone
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, OpenApiResponse
from rest_framework import serializers
from rest_framework.exceptions import NotFound
from rest_framework.renderers import BaseRenderer, JSONRenderer
from rest_framework.request import Request

from registry.documents import Document, Paper
from registry.models import SOP
from registry.models.sop import DOCX, ODT, PDF, document_kind


class PdfRenderer(BaseRenderer):
    """Lets a client ask for ``Accept: application/pdf``; the documents themselves are answered
    as bytes, and an error answer stays JSON (with its own content type)."""

    media_type = "application/pdf"
    format = "pdf"
    charset = None
    render_style = "binary"

    def render(self, data: Any, accepted_media_type: str | None = None,
               renderer_context: dict[str, Any] | None = None) -> bytes:
        response = (renderer_context or {}).get("response")
        if response is not None:
            response["Content-Type"] = "application/json"
        return json.dumps(data).encode()


# JSON first: a client that accepts anything gets errors as JSON, like everywhere in the API.
PDF_RENDERERS = [JSONRenderer, PdfRenderer]


class DocumentQuerySerializer(serializers.Serializer):  # type: ignore[type-arg]
    generated_at = serializers.DateTimeField(
        required=False, default=None, allow_null=True,
        help_text="Date and time printed on the document and written as the PDF's creation date (default: now). "
                  "The same register and the same value give a byte-identical file.")


class PaperQuerySerializer(DocumentQuerySerializer):
    paper = serializers.ChoiceField(choices=Paper.choices, default=Paper.A4, help_text="Sheet size.")


GENERATED_AT = OpenApiParameter(
    "generated_at", OpenApiTypes.DATETIME, description=str(DocumentQuerySerializer().fields["generated_at"].help_text))
PAPER = OpenApiParameter("paper", OpenApiTypes.STR, enum=[choice.value for choice in Paper],
                         description="Sheet size: a4 (default) or letter (US Letter).")
PDF_RESPONSE = {(200, "application/pdf"): OpenApiResponse(OpenApiTypes.BINARY, description="The PDF document.")}


def document_query(request: Request, *, paper: bool) -> tuple[datetime.datetime, Paper]:
    """``generated_at`` (default now) and ``paper`` (A4 unless asked) from the query; a bad value is a 400."""
    serializer = (PaperQuerySerializer if paper else DocumentQuerySerializer)(data=request.query_params)
    serializer.is_valid(raise_exception=True)
    values = serializer.validated_data
    return values["generated_at"] or timezone.now(), Paper(values.get("paper", Paper.A4))


def pdf_response(document: Document) -> HttpResponse:
    response = HttpResponse(document.to_pdf().data, content_type="application/pdf")
    response["Content-Disposition"] = f'inline; filename="{document.filename}"'
    return response


SOP_DOCUMENT_RESPONSE = {
    **{(200, kind.content_type): OpenApiResponse(OpenApiTypes.BINARY, description="The document, as uploaded.")
       for kind in (PDF, DOCX, ODT)},
    404: OpenApiResponse(description="No such SOP for you, or it has no document."),
}


def sop_document_response(sop: SOP) -> FileResponse:
    """The SOP's document as an attachment, typed by its content (as checked on upload) and
    named by the register, so that nothing a client sent decides how a browser treats it."""
    if not sop.document:
        raise NotFound("This SOP has no document.")
    try:
        handle = sop.document.open("rb")
    except FileNotFoundError:
        raise NotFound("This SOP's document is missing from the file store.") from None
    kind = document_kind(handle)
    if kind is None:
        handle.close()
        # Stored before uploads were checked, or changed on disk since: not served as anything.
        raise NotFound("This SOP's document is not a PDF or office text, so it is not served.")
    return FileResponse(handle, as_attachment=True, content_type=kind.content_type,
                        filename=f"sop-{sop.laser.asset_tag}-v{sop.version}{kind.extension}")
