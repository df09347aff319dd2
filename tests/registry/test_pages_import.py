"""The import page (/lasers/import/): the dry run of an uploaded sheet, then its confirmation.

The sheets are those of test_laser_import.py, written by the tests as CSV and XLSX. The page runs
the import service the command runs; these tests check what the page adds: the dry run shown with
every bad row, nothing written before the confirmation, the confirmation importing the file kept
on the server (never rows sent back by the browser), and the refusals of a confirmation that no
longer holds.
"""
from __future__ import annotations

import datetime
from pathlib import Path

import pytest
import time_machine
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import Client
from django.utils import timezone

from registry.models import Laser, Location, Person
from registry.services import import_uploads
from tests import factories
# The command's tests' people, room and sheet writers are the page's too (fixtures imported
# by name: lso, owner, room, write_sheet).
from tests.registry.test_laser_import import (  # noqa: F401
    HEADER,
    SheetWriter,
    history_rows,
    lso,
    messy_rows,
    owner,
    register_rows,
    room,
    row,
    write_csv,
    write_sheet,
)

pytestmark = pytest.mark.django_db


@pytest.fixture(autouse=True)
def upload_dir(settings: object, tmp_path: Path) -> Path:
    folder = tmp_path / "imports"
    settings.IMPORT_UPLOAD_DIR = folder  # type: ignore[attr-defined]
    return folder


def signed_in(person: Person) -> Client:
    client = Client()
    client.force_login(person.user)
    return client


def upload(client: Client, path: Path, **fields: object) -> object:
    return client.post("/lasers/import/", {"file": SimpleUploadedFile(path.name, path.read_bytes()), **fields})


def assert_no_inline_script_or_style(html: str) -> None:
    # As every page (test_pages.py): a strict Content-Security-Policy needs no exception.
    for forbidden in ("<script", "<style", " style=", " onclick=", " onsubmit=", " onload="):
        assert forbidden not in html


def clean_sheet(tmp_path: Path, write_sheet: SheetWriter = write_csv) -> Path:
    return write_sheet(tmp_path / "clean", [HEADER, *messy_rows(fixed=True)[2:]])


def test_the_dry_run_of_the_messy_sheet_names_every_bad_row_and_writes_nothing(
        tmp_path: Path, write_sheet: SheetWriter, lso: Person, owner: Person, room: Location, upload_dir: Path) -> None:
    before, history = register_rows(), history_rows()
    response = upload(signed_in(lso), write_sheet(tmp_path / "messy", messy_rows(fixed=False)))
    assert response.status_code == 200
    report = response.context["report"]
    assert [(problem.line, problem.column) for problem in report.problems] == [(6, "Class"), (8, "Average Power")]
    html = response.content.decode()
    assert "2 problems on 2 lines: nothing can be imported." in html
    assert '<tr><td class="number">6</td><td>Class</td><td>asset tag MSY-2 is on line 5 with Class &#x27;4&#x27;, ' \
           'here &#x27;3B&#x27;' in html
    assert '<tr><td class="number">8</td><td>Average Power</td><td>5 has no unit' in html
    assert_no_inline_script_or_style(html)
    # Nothing to confirm, nothing kept, nothing written.
    assert response.context["token"] is None
    assert "/lasers/import/confirm/" not in html
    assert not upload_dir.exists() or list(upload_dir.iterdir()) == []
    assert register_rows() == before
    assert history_rows() == history


def test_a_clean_sheet_is_written_once_on_confirmation_and_a_second_import_changes_nothing(
        tmp_path: Path, write_sheet: SheetWriter, lso: Person, owner: Person, room: Location, upload_dir: Path) -> None:
    client = signed_in(lso)
    sheet = clean_sheet(tmp_path, write_sheet)
    before = register_rows()

    dry_run = upload(client, sheet)
    assert dry_run.status_code == 200
    assert [(outcome.asset_tag, outcome.action) for outcome in dry_run.context["report"].lasers] == [
        ("MSY-1", "create"), ("MSY-2", "create"), ("MSY-3", "create"), ("MSY-4", "create")]
    assert "<strong>4</strong> to create" in dry_run.content.decode()
    assert_no_inline_script_or_style(dry_run.content.decode())
    assert register_rows() == before
    token = dry_run.context["token"]
    assert [path.name for path in upload_dir.iterdir()] == [f"{token}.upload"]

    confirmed = client.post("/lasers/import/confirm/", {"token": token}, follow=True)
    assert confirmed.redirect_chain == [("/lasers/", 302)]
    assert f"{sheet.name} imported: lasers created 4, updated 0, unchanged 0" in confirmed.content.decode()
    assert sorted(Laser.objects.values_list("asset_tag", flat=True)) == ["MSY-1", "MSY-2", "MSY-3", "MSY-4"]
    assert list(upload_dir.iterdir()) == []
    written, history = register_rows(), history_rows()

    # The same confirmation again is refused: the token was used.
    again = client.post("/lasers/import/confirm/", {"token": token})
    assert again.status_code == 409
    assert (register_rows(), history_rows()) == (written, history)

    # The same sheet again: a dry run of four unchanged lasers, and a confirmation that writes nothing.
    second = upload(client, sheet)
    assert {outcome.action for outcome in second.context["report"].lasers} == {"unchanged"}
    assert client.post("/lasers/import/confirm/", {"token": second.context["token"]}).status_code == 302
    assert (register_rows(), history_rows()) == (written, history)


@pytest.mark.parametrize("role", ["researcher", "inspector", "user"])
def test_only_the_lso_opens_the_page_uploads_or_confirms(tmp_path: Path, lso: Person, owner: Person,
                                                          room: Location, role: str) -> None:
    token = upload(signed_in(lso), clean_sheet(tmp_path)).context["token"]
    client = signed_in(factories.PersonFactory.create(role=role))
    before = register_rows()
    assert client.get("/lasers/import/").status_code == 403
    assert upload(client, clean_sheet(tmp_path)).status_code == 403
    assert client.post("/lasers/import/confirm/", {"token": token}).status_code == 403
    assert register_rows() == before
    anonymous = Client().get("/lasers/import/")
    assert (anonymous.status_code, anonymous["Location"]) == (302, "/login/?next=/lasers/import/")


def test_a_token_staged_in_another_session_is_refused(tmp_path: Path, lso: Person, owner: Person,
                                                      room: Location) -> None:
    token = upload(signed_in(lso), clean_sheet(tmp_path)).context["token"]
    other_lso = factories.PersonFactory.create(role="lso", research_group=None)
    before = register_rows()
    for other in (signed_in(lso), signed_in(other_lso)):
        refused = other.post("/lasers/import/confirm/", {"token": token})
        assert refused.status_code == 409
        assert "not waiting for your confirmation" in refused.content.decode()
    assert register_rows() == before


def test_a_stale_dry_run_or_a_changed_file_is_refused(tmp_path: Path, lso: Person, owner: Person, room: Location,
                                                      upload_dir: Path) -> None:
    client = signed_in(lso)
    before = register_rows()
    with time_machine.travel(timezone.now(), tick=False) as clock:
        token = upload(client, clean_sheet(tmp_path)).context["token"]
        clock.shift(import_uploads.STAGED_IMPORT_MAX_AGE + datetime.timedelta(seconds=1))
        stale = client.post("/lasers/import/confirm/", {"token": token})
    assert stale.status_code == 409
    assert "is more than 30 minutes old" in stale.content.decode()
    assert list(upload_dir.iterdir()) == []

    token = upload(client, clean_sheet(tmp_path)).context["token"]
    (upload_dir / f"{token}.upload").write_bytes(b"asset tag\nSNEAK-1\n")
    changed = client.post("/lasers/import/confirm/", {"token": token})
    assert changed.status_code == 409
    assert "no longer on the server as it was" in changed.content.decode()
    assert register_rows() == before


def test_a_register_changed_since_the_dry_run_writes_nothing_and_shows_the_new_dry_run(
        tmp_path: Path, lso: Person, owner: Person, room: Location) -> None:
    client = signed_in(lso)
    token = upload(client, clean_sheet(tmp_path)).context["token"]
    # Meanwhile, in another session, one of the sheet's lasers is imported with another class.
    interfering = write_csv(tmp_path / "other", [HEADER, row("MSY-3", "4", "main", "cw", "405 nm", "5 mW")])
    other_session: dict[str, object] = {}
    with interfering.open("rb") as stream:
        staged = import_uploads.laser_import_stage(stream=stream, name=interfering.name,
                                                   size=interfering.stat().st_size, by=lso, create_locations=False,
                                                   session=other_session)
    assert staged.token is not None
    assert import_uploads.laser_import_confirm(token=staged.token, by=lso, session=other_session).written
    before, history = register_rows(), history_rows()

    moved = client.post("/lasers/import/confirm/", {"token": token})
    assert moved.status_code == 200
    assert "The register changed since the dry run, so nothing was written." in moved.content.decode()
    report = moved.context["report"]
    assert report.moved_since_dry_run is True
    assert [(outcome.asset_tag, outcome.action, outcome.changes) for outcome in report.lasers][2] == (
        "MSY-3", "update", ["class: 4 -> 3B"])
    assert (register_rows(), history_rows()) == (before, history)

    # The new dry run, confirmed, is written.
    assert moved.context["token"] == token
    assert client.post("/lasers/import/confirm/", {"token": token}).status_code == 302
    assert Laser.objects.get(asset_tag="MSY-3").labelled_class == "3B"
    assert Laser.objects.count() == 4


@pytest.mark.parametrize(("name", "content", "message"), [
    ("notes.txt", b"asset tag\nA-1\n", "expected a .csv or .xlsx file"),
    ("register.xlsx", b"not a workbook", "cannot be read as an XLSX workbook"),
    ("register.csv", b"", "is empty"),
])
def test_a_file_that_is_not_a_sheet_is_refused_beside_the_field(lso: Person, name: str, content: bytes,
                                                                 message: str) -> None:
    response = signed_in(lso).post("/lasers/import/", {"file": SimpleUploadedFile(name, content)})
    assert response.status_code == 200
    assert response.context["report"] is None
    assert message in " ".join(response.context["form"].errors["file"])


def test_a_file_over_the_size_limit_is_refused_unread(lso: Person, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(import_uploads, "MAX_UPLOAD_BYTES", 10)
    response = signed_in(lso).post("/lasers/import/", {"file": SimpleUploadedFile("big.csv", b"asset tag\n" * 3)})
    assert "a sheet may be at most" in " ".join(response.context["form"].errors["file"])
    assert response.context["report"] is None
