"""/healthz: 200 when the database answers and every migration is applied, 503 otherwise;
open to anyone and giving no register data."""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path
from unittest import mock

import pytest
from django.db.migrations.executor import MigrationExecutor
from django.test import Client

ROOT = Path(__file__).resolve().parents[2]

pytestmark = pytest.mark.django_db


def test_it_answers_200_to_anyone_when_the_database_is_migrated() -> None:
    response = Client().get("/healthz")
    assert response.status_code == 200
    assert response.content == b"ok\n"
    assert response["Content-Type"] == "text/plain; charset=utf-8"
    assert "no-cache" in response["Cache-Control"]
    assert "Set-Cookie" not in response


def test_it_answers_503_while_a_migration_is_not_applied(caplog: pytest.LogCaptureFixture) -> None:
    pending = [(mock.Mock(__str__=lambda self: "registry.0099_later"), False)]
    with mock.patch.object(MigrationExecutor, "migration_plan", return_value=pending):
        response = Client().get("/healthz")
    assert response.status_code == 503
    assert response.content == b"migrations not applied\n"
    assert "1 migrations not applied (first: registry.0099_later)" in caplog.text


def test_it_refuses_anything_but_get_and_head() -> None:
    assert Client().head("/healthz").status_code == 200
    assert Client().post("/healthz").status_code == 405


def _healthz_in_a_process(database_url: str) -> subprocess.CompletedProcess[str]:
    """GET /healthz in a fresh process whose DATABASE_URL is ``database_url``."""
    script = ("import django; django.setup(); from django.test.utils import setup_test_environment; "
              "setup_test_environment(); from django.test import Client; r = Client().get('/healthz'); "
              "print(r.status_code, r.content.decode().strip())")
    environment = {name: value for name, value in os.environ.items() if name not in {"BEAMKEEPER_ENV", "DEBUG"}}
    environment.update(DATABASE_URL=database_url, DJANGO_SETTINGS_MODULE="registry.settings")
    return subprocess.run([sys.executable, "-c", script], cwd=ROOT, env=environment, capture_output=True,
                          text=True, timeout=120)


def test_it_answers_503_for_a_database_that_was_never_migrated(tmp_path: Path) -> None:
    result = _healthz_in_a_process(f"sqlite:///{tmp_path / 'empty.sqlite3'}")
    assert result.stdout.strip() == "503 migrations not applied", result.stderr


def test_it_answers_503_when_the_database_does_not_answer(tmp_path: Path) -> None:
    result = _healthz_in_a_process(f"sqlite:///{tmp_path / 'missing-folder' / 'db.sqlite3'}")
    assert result.stdout.strip() == "503 database not answering", result.stderr
    assert "the database does not answer" in result.stderr
