"""SOP documents: bounded in size, a PDF or office text by their content (never HTML, whatever
the name), checked the same way through the API, the admin and the services, and served only
through /api/v1/sops/{id}/document/ to whoever may read the SOP."""
from __future__ import annotations

import io
import zipfile
from pathlib import Path
from typing import Any

import pytest
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import Client
from rest_framework.test import APIClient

from registry.models import SOP, Person
from registry.models.sop import DOCX, ODT, PDF, document_kind
from registry.services import person_create, sop_create
from tests import factories

pytestmark = pytest.mark.django_db

PDF_BYTES = b"%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\n%%EOF\n"
HTML_BYTES = b"<!doctype html><html><body><script>alert(document.cookie)</script></body></html>"


def _zip(entries: dict[str, bytes]) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        for name, data in entries.items():
            archive.writestr(name, data)
    return buffer.getvalue()


DOCX_BYTES = _zip({"[Content_Types].xml": b"<Types/>", "word/document.xml": b"<w:document/>"})
ODT_BYTES = _zip({"mimetype": ODT.content_type.encode(), "content.xml": b"<office:document-content/>"})


@pytest.mark.parametrize(("data", "kind"), [
    (PDF_BYTES, PDF),
    (DOCX_BYTES, DOCX),
    (ODT_BYTES, ODT),
    (HTML_BYTES, None),
    (b"1. Wear the goggles.\n", None),
    (_zip({"index.html": HTML_BYTES}), None),
    (_zip({"mimetype": b"application/vnd.oasis.opendocument.spreadsheet"}), None),
    (b"PK\x03\x04 not really an archive", None),
    (b"", None),
])
def test_the_kind_of_a_document_is_read_from_its_bytes(data: bytes, kind: Any) -> None:
    file = io.BytesIO(data)
    assert document_kind(file) == kind
    assert file.tell() == 0


@pytest.fixture(autouse=True)
def media(settings: Any, tmp_path: Path) -> Path:
    settings.MEDIA_ROOT = tmp_path
    return tmp_path


@pytest.fixture
def lso() -> Person:
    return person_create(username="holloway", role="lso")


@pytest.fixture
def owner() -> Person:
    return person_create(username="okafor", role="researcher")


def _api(person: Person) -> APIClient:
    client = APIClient()
    client.force_authenticate(user=person.user)
    return client


def _upload(client: APIClient, laser: Any, name: str, data: bytes, content_type: str = "application/pdf") -> Any:
    return client.post("/api/v1/sops/", {"laser": laser.pk, "title": "Alignment",
                                         "document": SimpleUploadedFile(name, data, content_type=content_type)},
                       format="multipart")


def test_the_size_limit_is_20_mb_unless_set(settings: Any) -> None:
    assert settings.SOP_DOCUMENT_MAX_BYTES == 20 * 2**20


def test_a_document_over_the_limit_is_a_400_naming_the_field(settings: Any, owner: Person, media: Path) -> None:
    settings.SOP_DOCUMENT_MAX_BYTES = 1024
    laser = factories.LaserFactory.create(owner=owner)
    response = _upload(_api(owner), laser, "long.pdf", PDF_BYTES + b"0" * 1024)
    assert response.status_code == 400
    assert "MB is accepted" in str(response.json()["document"])
    assert not SOP.objects.exists()
    assert list(media.rglob("*.pdf")) == []
    # One byte under the limit is taken.
    accepted = _upload(_api(owner), laser, "short.pdf", PDF_BYTES.ljust(1024, b"\n"))
    assert accepted.status_code == 201, accepted.content


@pytest.mark.parametrize(("name", "content_type"), [("procedure.pdf", "application/pdf"),
                                                    ("procedure.html", "text/html"),
                                                    ("procedure.docx", DOCX.content_type)])
def test_html_is_refused_whatever_its_name_or_claimed_type(owner: Person, media: Path, name: str,
                                                           content_type: str) -> None:
    laser = factories.LaserFactory.create(owner=owner)
    response = _upload(_api(owner), laser, name, HTML_BYTES, content_type)
    assert response.status_code == 400
    assert "is none of these" in str(response.json()["document"])
    assert not SOP.objects.exists()
    assert [path for path in media.rglob("*") if path.is_file()] == []


def test_a_replacement_document_is_checked_too(owner: Person) -> None:
    laser = factories.LaserFactory.create(owner=owner)
    sop = sop_create(laser=laser, title="Alignment", by=owner, document=ContentFile(PDF_BYTES, name="a.pdf"))
    client = _api(owner)
    etag = client.get(f"/api/v1/sops/{sop.pk}/")["ETag"]
    response = client.patch(f"/api/v1/sops/{sop.pk}/", {"document": SimpleUploadedFile("b.pdf", HTML_BYTES)},
                            format="multipart", HTTP_IF_MATCH=etag)
    assert response.status_code == 400
    assert "is none of these" in str(response.json()["document"])
    sop.refresh_from_db()
    with sop.document.open("rb") as document:
        assert document.read() == PDF_BYTES


def test_the_services_refuse_what_the_api_refuses(owner: Person) -> None:
    laser = factories.LaserFactory.create(owner=owner)
    with pytest.raises(ValidationError) as refused:
        sop_create(laser=laser, title="Alignment", by=owner, document=ContentFile(HTML_BYTES, name="a.pdf"))
    assert "document" in refused.value.message_dict
    assert not SOP.objects.exists()


def test_the_admin_refuses_html_on_the_form(client: Client, lso: Person) -> None:
    sop = factories.SOPFactory.create()
    client.force_login(lso.user)
    response = client.post(f"/admin/registry/sop/{sop.pk}/change/", {
        "laser": sop.laser.pk, "title": sop.title, "version": sop.version, "summary": "",
        "document": SimpleUploadedFile("routine.pdf", HTML_BYTES, content_type="application/pdf"),
        "acknowledgements-TOTAL_FORMS": "0", "acknowledgements-INITIAL_FORMS": "0"})
    assert response.status_code == 200
    assert "is none of these" in str(response.context["adminform"].form.errors["document"])
    sop.refresh_from_db()
    assert not sop.document


@pytest.fixture
def sop_with_document(owner: Person) -> SOP:
    laser = factories.LaserFactory.create(owner=owner, asset_tag="FV-0101")
    return sop_create(laser=laser, title="Alignment", by=owner, document=ContentFile(PDF_BYTES, name="x.html"))


@pytest.mark.parametrize("reader", ["lso", "inspector", "owner", "authorized user"])
def test_a_reader_of_the_sop_gets_its_document_as_a_safe_attachment(reader: str, lso: Person, owner: Person,
                                                                    sop_with_document: SOP) -> None:
    people = {"lso": lso, "owner": owner, "inspector": person_create(username="abbott", role="inspector")}
    if reader == "authorized user":
        people[reader] = person_create(username="dunmore", role="user")
        factories.AuthorizationFactory.create(person=people[reader], laser=sop_with_document.laser)
    client = _api(people[reader])
    listed = client.get(f"/api/v1/sops/{sop_with_document.pk}/").json()["document"]
    assert listed == f"http://testserver/api/v1/sops/{sop_with_document.pk}/document/"
    response = client.get(listed)
    assert response.status_code == 200
    assert response["Content-Type"] == "application/pdf"
    assert response["Content-Disposition"] == 'attachment; filename="sop-FV-0101-v1.pdf"'
    assert response["X-Content-Type-Options"] == "nosniff"
    assert b"".join(response.streaming_content) == PDF_BYTES


def test_someone_not_allowed_the_sop_gets_404_and_anonymous_401(sop_with_document: SOP) -> None:
    stranger = person_create(username="dunmore", role="user")
    url = f"/api/v1/sops/{sop_with_document.pk}/document/"
    assert _api(stranger).get(url).status_code == 404
    assert APIClient().get(url).status_code == 401


def test_an_sop_without_a_document_answers_404(owner: Person) -> None:
    sop = sop_create(laser=factories.LaserFactory.create(owner=owner), title="Alignment", by=owner)
    response = _api(owner).get(f"/api/v1/sops/{sop.pk}/document/")
    assert response.status_code == 404
    assert response.json()["detail"] == "This SOP has no document."
    assert _api(owner).get(f"/api/v1/sops/{sop.pk}/").json()["document"] is None
