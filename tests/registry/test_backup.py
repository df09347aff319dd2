"""backup_register and restore_register: the demo campus survives the round trip, and bad restores are refused.

Run on SQLite by default and on PostgreSQL with DATABASE_URL (DEVELOPERS.md, "Tests").
"""
from __future__ import annotations

import hashlib
import io
import json
import tarfile
from collections.abc import Callable
from io import StringIO
from pathlib import Path
from typing import Any

import pytest
from django.contrib.auth import get_user_model
from django.core import serializers
from django.core.files.base import ContentFile
from django.core.management import CommandError, call_command
from django.db import connection
from django.db.migrations.recorder import MigrationRecorder
from pytest_django.fixtures import Settings

from registry.models import SOP, Laser, Person
from registry.services import sop_approve, sop_create
from registry.services.backup import archived_models, register_backup
from registry.services.campus import campus_load, campus_read
from tests import factories

Snapshot = dict[str, list[dict[str, Any]]]


@pytest.fixture
def media(settings: Settings, tmp_path: Path) -> Path:
    root = tmp_path / "media"
    settings.MEDIA_ROOT = root
    return root


def snapshot() -> Snapshot:
    """Every archived row, foreign keys to accounts and permissions by natural key (their ids may differ)."""
    return {model._meta.label_lower: serializers.serialize(
        "python", model._base_manager.order_by("pk"), use_natural_foreign_keys=True) for model in archived_models()}


def files_under(root: Path) -> dict[str, str]:
    return {path.relative_to(root).as_posix(): hashlib.sha256(path.read_bytes()).hexdigest()
            for path in root.rglob("*") if path.is_file()}


def with_sop_documents() -> None:
    """Two versions of an SOP with uploaded documents, the first superseded by the second."""
    lso = Person.objects.get(user__username="lso")
    laser = Laser.objects.get(asset_tag="FV-0001")
    first = sop_create(laser=laser, title="Oscillator start-up", by=lso,
                       document=ContentFile(b"%PDF-1.4 first version\n", name="oscillator.pdf"))
    sop_approve(sop=first, by=lso)
    second = sop_create(laser=laser, title="Oscillator start-up", by=lso,
                        document=ContentFile(b"%PDF-1.4 second version\n", name="oscillator.pdf"))
    sop_approve(sop=second, by=lso)


def test_the_demo_campus_survives_a_backup_and_a_restore_into_an_empty_database(
        transactional_db: None, media: Path, tmp_path: Path) -> None:
    campus_load(data=campus_read(), set_demo_passwords=True)
    with_sop_documents()
    before, files = snapshot(), files_under(media)
    assert len(files) == 2
    assert len(before["registry.historicalsop"]) > 0 and len(before["registry.historicalaudit_lasers"]) > 0
    archive = tmp_path / "campus.tar.gz"
    out = StringIO()
    call_command("backup_register", str(archive), stdout=out)
    assert out.getvalue().startswith(f"{archive}: ")
    assert out.getvalue().endswith(f" and 2 files ({sum(path.stat().st_size for path in media.rglob('*.pdf'))} bytes).\n")
    assert archive.stat().st_mode & 0o777 == 0o600

    call_command("flush", interactive=False, verbosity=0)
    for path in media.rglob("*"):
        if path.is_file():
            path.unlink()
    assert not Laser.objects.exists()
    empty = snapshot()

    def one_laser_more(member: tarfile.TarInfo, data: bytes) -> tuple[tarfile.TarInfo, bytes]:
        if member.name != "manifest.json":
            return member, data
        manifest = json.loads(data)
        manifest["records"]["registry.laser"] += 1
        return member, json.dumps(manifest).encode()

    # Found only once every row is in: the whole load is undone.
    lasers = len(campus_read()["lasers"])
    with pytest.raises(CommandError, match=rf"do not match the archive's manifest \(registry.laser: {lasers} of {lasers + 1}\)"):
        call_command("restore_register", str(rewritten(archive, one_laser_more)), stdout=StringIO())
    assert snapshot() == empty
    assert files_under(media) == {}

    out = StringIO()
    call_command("restore_register", str(archive), stdout=out)
    assert out.getvalue().endswith(" and 2 files.\n")
    after = snapshot()
    assert after.keys() == before.keys()
    for label in before:
        assert after[label] == before[label], label
    assert files_under(media) == files
    first = SOP.objects.exclude(document="").order_by("version").first()
    assert (first.status, first.document.read()) == ("superseded", b"%PDF-1.4 first version\n")

    with pytest.raises(CommandError, match="is not empty: it holds .* A backup is restored only into a new"):
        call_command("restore_register", str(archive), stdout=StringIO())
    assert snapshot() == after

    # Accounts keep their passwords, and new rows get fresh keys (the sequences moved past the restored ones).
    assert get_user_model().objects.get(username="lso").check_password("lso-demo")
    assert factories.LocationFactory.create().pk > max(row["pk"] for row in before["registry.location"])


@pytest.fixture
def small_archive(db: None, media: Path, tmp_path: Path) -> Path:
    """An archive of a register with one SOP document, written inside the test's transaction."""
    sop = factories.SOPFactory.create()
    sop.document.save("routine.pdf", ContentFile(b"%PDF-1.4 routine\n"))
    archive = tmp_path / "small.tar.gz"
    register_backup(out=archive)
    return archive


def rewritten(archive: Path, change: Callable[[tarfile.TarInfo, bytes], tuple[tarfile.TarInfo, bytes] | None],
              extra: list[tuple[str, bytes]] | None = None) -> Path:
    """A copy of ``archive`` with each member passed through ``change`` (None drops it), plus ``extra`` members."""
    target = archive.with_name("changed.tar.gz")
    with tarfile.open(archive, "r:gz") as source, tarfile.open(target, "w:gz") as copy:
        for member in source.getmembers():
            handle = source.extractfile(member)
            assert handle is not None
            changed = change(member, handle.read())
            if changed is not None:
                info, data = changed
                info.size = len(data)
                copy.addfile(info, io.BytesIO(data))
        for name, data in extra or []:
            info = tarfile.TarInfo(name)
            info.size = len(data)
            copy.addfile(info, io.BytesIO(data))
    return target


def test_the_archive_holds_a_manifest_the_records_and_the_files(small_archive: Path) -> None:
    with tarfile.open(small_archive, "r:gz") as tar:
        names = tar.getnames()
        manifest = json.loads(tar.extractfile("manifest.json").read())  # type: ignore[union-attr]
    assert names[:2] == ["manifest.json", "records.jsonl"]
    assert names[2].startswith("media/sops/routine")
    assert manifest["format"] == "beamkeeper-register-backup" and manifest["version"] == 1
    assert manifest["records"]["registry.sop"] == 1 and manifest["records"]["registry.laser"] == 1
    assert manifest["migrations"]["registry"] == sorted(MigrationRecorder(connection).migration_qs.filter(
        app="registry").values_list("name", flat=True))
    assert set(manifest["files"]) == {names[2].removeprefix("media/")}
    assert "auth.permission" not in manifest["records"] and "authtoken.token" not in manifest["records"]


def test_a_restore_into_a_database_that_holds_records_is_refused(small_archive: Path, media: Path) -> None:
    before = snapshot()
    with pytest.raises(CommandError, match=r"is not empty: it holds [a-z_.]+ \(\d+ rows\)"):
        call_command("restore_register", str(small_archive), stdout=StringIO())
    assert snapshot() == before


def _damage_file(member: tarfile.TarInfo, data: bytes) -> tuple[tarfile.TarInfo, bytes]:
    return member, (data + b"tampered" if member.name.startswith("media/") else data)


def _keep(member: tarfile.TarInfo, data: bytes) -> tuple[tarfile.TarInfo, bytes]:
    return member, data


def _drop_records(member: tarfile.TarInfo, data: bytes) -> tuple[tarfile.TarInfo, bytes] | None:
    return None if member.name == "records.jsonl" else (member, data)


@pytest.mark.parametrize(("change", "extra", "message"), [
    (_damage_file, None, r"media/sops/routine.*\.pdf does not match its checksum; the archive is damaged"),
    (_keep, [("../outside.txt", b"x")], r"holds '../outside.txt', which no register backup holds"),
    (_keep, [("media/unlisted.pdf", b"x")], "the files in the archive are not the files its manifest lists"),
    (_drop_records, None, "is not a register backup: it has no manifest.json or records.jsonl"),
])
def test_a_damaged_or_foreign_archive_is_refused_before_anything_is_written(
        small_archive: Path, media: Path, change: Callable[..., Any], extra: list[tuple[str, bytes]] | None,
        message: str) -> None:
    before, files = snapshot(), files_under(media)
    with pytest.raises(CommandError, match=message):
        call_command("restore_register", str(rewritten(small_archive, change, extra)), stdout=StringIO())
    assert snapshot() == before
    assert files_under(media) == files


def test_a_file_that_is_not_an_archive_is_refused(tmp_path: Path, db: None) -> None:
    fake = tmp_path / "notes.tar.gz"
    fake.write_text("not an archive")
    with pytest.raises(CommandError, match="is not a gzipped tar archive"):
        call_command("restore_register", str(fake), stdout=StringIO())
    with pytest.raises(CommandError, match="missing.tar.gz: no such file"):
        call_command("restore_register", str(tmp_path / "missing.tar.gz"), stdout=StringIO())


def test_an_archive_from_other_migrations_is_refused(small_archive: Path, media: Path) -> None:
    applied = sorted(MigrationRecorder(connection).migration_qs.filter(app="registry").values_list("name", flat=True))

    def one_migration_behind(member: tarfile.TarInfo, data: bytes) -> tuple[tarfile.TarInfo, bytes]:
        if member.name != "manifest.json":
            return member, data
        manifest = json.loads(data)
        manifest["migrations"]["registry"] = applied[:-1]
        return member, json.dumps(manifest).encode()

    before = snapshot()
    with pytest.raises(CommandError) as raised:
        call_command("restore_register", str(rewritten(small_archive, one_migration_behind)), stdout=StringIO())
    assert str(raised.value) == (
        f"The archive was written by another version of the register (registry: archive at {applied[-2]}, "
        f"database at {applied[-1]}). Restore it with the version that wrote it, then upgrade.")
    assert snapshot() == before
