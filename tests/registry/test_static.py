"""Static files with DEBUG off: collected with hashed names and compressed copies, served by
WhiteNoise, so the pages' stylesheet and the offline API docs work on a production server."""
from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path

import pytest
from django.core.management import call_command
from django.test import Client, override_settings

pytestmark = pytest.mark.django_db

# What production uses (registry/settings.py), with DEBUG off as there.
PRODUCTION_STATIC = {
    "STORAGES": {"default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
                 "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage"}},
    "WHITENOISE_KEEP_ONLY_HASHED_FILES": True,
    "WHITENOISE_AUTOREFRESH": False,
    "DEBUG": False,
}


@pytest.fixture(scope="module")
def collected(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    root = tmp_path_factory.mktemp("static")
    with override_settings(STATIC_ROOT=root, **PRODUCTION_STATIC):
        call_command("collectstatic", interactive=False, verbosity=0)
        yield root


def _static_links(html: str) -> list[str]:
    return re.findall(r'(?:src|href)="(/static/[^"]+)"', html)


def test_a_page_links_its_stylesheet_by_hashed_name_served_compressed_for_a_year(collected: Path) -> None:
    client = Client()
    page = client.get("/login/")
    assert page.status_code == 200
    [stylesheet] = _static_links(page.content.decode())
    assert re.fullmatch(r"/static/registry/beamkeeper\.[0-9a-f]{12}\.css", stylesheet)
    response = client.get(stylesheet, HTTP_ACCEPT_ENCODING="gzip")
    assert response.status_code == 200
    assert response["Content-Encoding"] == "gzip"
    assert "immutable" in response["Cache-Control"]
    assert client.get("/static/registry/beamkeeper.css").status_code == 404  # only hashed names are kept


@pytest.mark.parametrize("docs", ["/api/v1/docs/", "/api/v1/docs/redoc/"])
def test_the_offline_api_docs_load_every_file_they_link(collected: Path, docs: str) -> None:
    client = Client()
    page = client.get(docs)
    assert page.status_code == 200
    links = _static_links(page.content.decode())
    assert any(link.endswith(".js") for link in links), links
    for link in links:
        assert client.get(link).status_code == 200, link


def test_documents_in_a_bucket_need_the_bucket_named() -> None:
    from tests.registry.test_settings import run_manage

    result = run_manage("check", MEDIA_STORAGE="s3")
    assert result.returncode != 0
    assert "The environment variable MEDIA_S3_BUCKET must be set." in result.stderr
