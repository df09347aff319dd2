"""The whole register in one archive, and back into an empty database.

``register_backup`` writes a gzipped tar (the format is in DEVELOPERS.md, "Backup archive"):

    manifest.json   format and version, when, the database's migrations, rows per model, checksums
    records.jsonl   every row of every model, history included, as Django's JSON-lines serialization
    media/...       every file under MEDIA_ROOT (the uploaded SOP documents)

Rows keep their primary keys, so the history rows' references stay true; accounts, groups,
permissions and content types are referred to by natural key, because a new database numbers
its permissions and content types its own way. ``register_restore`` checks the archive
(checksums, migrations) and refuses any database that is not empty before loading a row, and
loads every row and file or none.

For a large site the database's own tools (pg_dump, sqlite3 .backup) are faster; see README.
"""
from __future__ import annotations

import datetime
import hashlib
import io
import json
import os
import shutil
import tarfile
import tempfile
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path, PurePosixPath
from typing import Any

from django.apps import apps
from django.conf import settings
from django.core import serializers
from django.core.management.color import no_style
from django.core.serializers.json import DjangoJSONEncoder
from django.db import DEFAULT_DB_ALIAS, connection, models, transaction
from django.db.migrations.executor import MigrationExecutor
from django.db.migrations.recorder import MigrationRecorder
from django.utils import timezone

from registry.services._logging import service_action

FORMAT = "beamkeeper-register-backup"
VERSION = 1
MANIFEST = "manifest.json"
RECORDS = "records.jsonl"
MEDIA = "media"

# Rebuilt by ``migrate`` in any database (content types, permissions), short-lived (sessions),
# or credentials a restore should not bring back to life (API tokens: clients sign in again).
NOT_ARCHIVED = frozenset({"contenttypes.contenttype", "auth.permission", "sessions.session", "authtoken.token"})

_CHUNK = 1 << 20


class _ExactJSONEncoder(DjangoJSONEncoder):
    """DjangoJSONEncoder cuts times to milliseconds; a backup keeps them to the microsecond, as stored."""

    def default(self, o: Any) -> Any:
        if isinstance(o, datetime.datetime | datetime.time):
            return o.isoformat()
        return super().default(o)


class BackupError(Exception):
    """The archive cannot be written or restored; the message says why and what to do."""


@dataclass(frozen=True)
class BackupSummary:
    path: Path
    records: dict[str, int]
    files: int
    file_bytes: int


@dataclass(frozen=True)
class RestoreSummary:
    records: dict[str, int]
    files: int


def archived_models() -> list[type[models.Model]]:
    """Every model whose rows a backup holds, in an order that loads: models with natural keys first."""
    app_list = []
    for app_config in apps.get_app_configs():
        chosen = [model for model in app_config.get_models()
                  if model._meta.managed and not model._meta.proxy and model._meta.label_lower not in NOT_ARCHIVED]
        if chosen:
            app_list.append((app_config, chosen))
    return serializers.sort_dependencies(app_list, allow_cycles=True)


def _applied_migrations() -> dict[str, list[str]]:
    applied: dict[str, list[str]] = {}
    for app, name in sorted(MigrationRecorder(connection).applied_migrations()):
        applied.setdefault(app, []).append(name)
    return applied


def _sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for chunk in iter(lambda: handle.read(_CHUNK), b""):
            digest.update(chunk)
    return digest.hexdigest()


def _media_files(root: Path) -> list[tuple[str, Path]]:
    """Regular files under ``root`` as (archive path relative to media/, file); links are not followed."""
    if not root.is_dir():
        return []
    found = []
    for directory, _, names in os.walk(root):
        for name in names:
            path = Path(directory) / name
            if path.is_file() and not path.is_symlink():
                found.append((path.relative_to(root).as_posix(), path))
    return sorted(found)


def _rows(chosen: list[type[models.Model]]) -> Iterator[models.Model]:
    for model in chosen:
        # The base manager: every row, whatever a default manager would hide.
        yield from model._base_manager.order_by("pk").iterator(chunk_size=2000)


@service_action
def register_backup(*, out: Path) -> BackupSummary:
    """Write every record (with its history) and every file under MEDIA_ROOT to the archive ``out``.

    The archive is written beside ``out`` and renamed into place when complete, readable by its
    owner only (it holds password hashes); an older archive of the same name is replaced.
    """
    chosen = archived_models()
    with tempfile.TemporaryDirectory() as scratch:
        records_path = Path(scratch) / RECORDS
        outermost = not connection.in_atomic_block
        with transaction.atomic():
            if connection.vendor == "postgresql" and outermost:
                # One snapshot for every table, so rows written during the backup cannot half appear.
                with connection.cursor() as cursor:
                    cursor.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY")
            counts = {model._meta.label_lower: model._base_manager.count() for model in chosen}
            with records_path.open("w", encoding="utf-8") as handle:
                serializers.serialize("jsonl", _rows(chosen), use_natural_foreign_keys=True, stream=handle,
                                      cls=_ExactJSONEncoder)
            migrations = _applied_migrations()
        files = _media_files(Path(settings.MEDIA_ROOT))
        manifest = {
            "format": FORMAT, "version": VERSION, "created_at": timezone.now().isoformat(),
            "database": connection.vendor, "migrations": migrations, "records": counts,
            "records_sha256": _sha256(records_path),
            "files": {name: {"size": path.stat().st_size, "sha256": _sha256(path)} for name, path in files},
        }
        out.parent.mkdir(parents=True, exist_ok=True)
        descriptor, partial = tempfile.mkstemp(dir=out.parent, prefix=f".{out.name}.", suffix=".partial")
        try:
            with os.fdopen(descriptor, "wb") as raw, tarfile.open(fileobj=raw, mode="w:gz") as tar:
                _add_bytes(tar, MANIFEST, json.dumps(manifest, indent=2, sort_keys=True).encode())
                tar.add(records_path, arcname=RECORDS)
                for name, path in files:
                    tar.add(path, arcname=f"{MEDIA}/{name}", recursive=False)
            os.replace(partial, out)
        except BaseException:
            Path(partial).unlink(missing_ok=True)
            raise
    return BackupSummary(path=out, records=counts, files=len(files),
                         file_bytes=sum(entry["size"] for entry in manifest["files"].values()))


def _add_bytes(tar: tarfile.TarFile, name: str, data: bytes) -> None:
    info = tarfile.TarInfo(name)
    info.size = len(data)
    info.mtime = int(timezone.now().timestamp())
    info.mode = 0o600
    tar.addfile(info, io.BytesIO(data))


@service_action
def register_restore(*, archive: Path) -> RestoreSummary:
    """Load ``archive`` into this database, which must be migrated to the same migrations and empty.

    Checked before any row is written: the archive's members and checksums, the migrations, and
    that no archived table holds a row. Then every row and file goes in, or (on any error) none.
    """
    with tempfile.TemporaryDirectory() as scratch_name:
        scratch = Path(scratch_name)
        manifest = _unpack(archive, scratch)
        _require_same_migrations(manifest["migrations"])
        _require_empty()
        targets = _media_targets(manifest["files"], scratch)
        written: list[Path] = []
        try:
            with transaction.atomic():
                _load(scratch / RECORDS)
                _require_counts(manifest["records"])
                for source, target in targets:
                    target.parent.mkdir(parents=True, exist_ok=True)
                    shutil.copyfile(source, target)
                    written.append(target)
        except BaseException:
            for target in written:
                target.unlink(missing_ok=True)
            raise
    return RestoreSummary(records=manifest["records"], files=len(manifest["files"]))


def _unpack(archive: Path, scratch: Path) -> dict[str, Any]:
    """The manifest, with records and files extracted to ``scratch`` and their checksums verified."""
    try:
        tar = tarfile.open(archive, mode="r:gz")
    except (OSError, tarfile.TarError) as error:
        raise BackupError(f"{archive} is not a gzipped tar archive: {error}") from None
    with tar:
        members = {member.name: member for member in tar.getmembers()}
        for name, member in members.items():
            path = PurePosixPath(name)
            allowed = name in (MANIFEST, RECORDS) or (path.parts[:1] == (MEDIA,) and len(path.parts) > 1)
            if not member.isfile() or not allowed or path.is_absolute() or ".." in path.parts:
                raise BackupError(f"{archive} holds {name!r}, which no register backup holds; it is not restored.")
        if MANIFEST not in members or RECORDS not in members:
            raise BackupError(f"{archive} is not a register backup: it has no {MANIFEST} or {RECORDS}.")
        try:
            manifest: dict[str, Any] = json.loads(_read_member(tar, members[MANIFEST]))
        except ValueError as error:
            raise BackupError(f"{archive}: its {MANIFEST} cannot be read: {error}") from None
        if not isinstance(manifest, dict) or manifest.get("format") != FORMAT or manifest.get("version") != VERSION:
            raise BackupError(f"{archive} is not a register backup of version {VERSION}.")
        _extract(tar, members[RECORDS], scratch / RECORDS, manifest["records_sha256"], archive=archive)
        media = {name.removeprefix(f"{MEDIA}/") for name in members if name.startswith(f"{MEDIA}/")}
        if media != set(manifest["files"]):
            raise BackupError(f"{archive}: the files in the archive are not the files its manifest lists.")
        for name, described in manifest["files"].items():
            _extract(tar, members[f"{MEDIA}/{name}"], scratch / MEDIA / name, described["sha256"], archive=archive)
    return manifest


def _read_member(tar: tarfile.TarFile, member: tarfile.TarInfo) -> bytes:
    handle = tar.extractfile(member)
    assert handle is not None  # members were checked to be regular files
    return handle.read()


def _extract(tar: tarfile.TarFile, member: tarfile.TarInfo, target: Path, sha256: str, *, archive: Path) -> None:
    target.parent.mkdir(parents=True, exist_ok=True)
    handle = tar.extractfile(member)
    assert handle is not None
    digest = hashlib.sha256()
    with target.open("wb") as out:
        for chunk in iter(lambda: handle.read(_CHUNK), b""):
            digest.update(chunk)
            out.write(chunk)
    if digest.hexdigest() != sha256:
        raise BackupError(f"{archive}: {member.name} does not match its checksum; the archive is damaged.")


def _require_same_migrations(archived: dict[str, list[str]]) -> None:
    executor = MigrationExecutor(connection)
    if executor.migration_plan(executor.loader.graph.leaf_nodes()):
        raise BackupError("This database is not fully migrated: run manage.py migrate first, then restore.")
    here = _applied_migrations()
    differing = sorted(app for app in set(here) | set(archived) if here.get(app, []) != archived.get(app, []))
    if differing:
        details = "; ".join(f"{app}: archive at {(archived.get(app) or ['none'])[-1]}, database at "
                            f"{(here.get(app) or ['none'])[-1]}" for app in differing)
        raise BackupError(f"The archive was written by another version of the register ({details}). Restore it "
                          "with the version that wrote it, then upgrade.")


def _require_empty() -> None:
    holding = [f"{model._meta.label_lower} ({model._base_manager.count()} rows)" for model in archived_models()
               if model._base_manager.exists()]
    if holding:
        name = connection.settings_dict["NAME"]
        raise BackupError(f"The database {name} is not empty: it holds {', '.join(holding[:5])}"
                          f"{' and more' if len(holding) > 5 else ''}. A backup is restored only into a new, "
                          "migrated database, so that nothing in it is overwritten or mixed.")


def _media_targets(files: dict[str, Any], scratch: Path) -> list[tuple[Path, Path]]:
    """(extracted file, its place under MEDIA_ROOT) for each file not there already; a different file is refused."""
    root = Path(settings.MEDIA_ROOT).resolve()
    targets = []
    for name, described in files.items():
        target = (root / name).resolve()
        if not target.is_relative_to(root):
            raise BackupError(f"The archive's file {name!r} would land outside MEDIA_ROOT; it is not restored.")
        if target.exists():
            if _sha256(target) != described["sha256"]:
                raise BackupError(f"MEDIA_ROOT already holds a different {name}; move it away and restore again.")
            continue
        targets.append((scratch / MEDIA / name, target))
    return targets


def _load(records: Path) -> None:
    """Every row as it was saved, with the checks ``loaddata`` makes (deferred foreign keys, then sequences)."""
    loaded: set[type[models.Model]] = set()
    deferred = []
    with connection.constraint_checks_disabled(), records.open(encoding="utf-8") as handle:
        for row in serializers.deserialize("jsonl", handle, handle_forward_references=True):
            # Raw saves write no history; this also stops simple-history from adding a history row
            # when a restored record's many-to-many relations are set.
            row.object.skip_history_when_saving = True  # type: ignore[attr-defined]
            row.save(using=DEFAULT_DB_ALIAS)
            loaded.add(type(row.object))
            if row.deferred_fields:
                deferred.append(row)
        for row in deferred:
            row.save_deferred_fields(using=DEFAULT_DB_ALIAS)
    connection.check_constraints(table_names=[model._meta.db_table for model in loaded])
    with connection.cursor() as cursor:
        for statement in connection.ops.sequence_reset_sql(no_style(), list(loaded)):
            cursor.execute(statement)


def _require_counts(expected: dict[str, int]) -> None:
    found = {model._meta.label_lower: model._base_manager.count() for model in archived_models()}
    differing = sorted(label for label in set(found) | set(expected) if found.get(label, 0) != expected.get(label, 0))
    if differing:
        raise BackupError("The restored rows do not match the archive's manifest (" + ", ".join(
            f"{label}: {found.get(label, 0)} of {expected.get(label, 0)}" for label in differing) + "); nothing was "
            "restored.")
