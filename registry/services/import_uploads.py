"""The spreadsheet import in the browser: a dry run of the uploaded file, then its confirmation.

The confirmation imports the file the dry run read, never rows echoed back by the browser. The
upload is kept on the server in ``settings.IMPORT_UPLOAD_DIR`` under a random token (mode 0600),
and the token is remembered in the uploader's session with the file's name, its SHA-256, the
options and the fingerprint of what the dry run showed. A confirmation is refused when the token
is not waiting in this session for this person (another person's, or confirmed already), when the
dry run is older than ``STAGED_IMPORT_MAX_AGE``, or when the file on disk is gone or changed. When
the register moved since the dry run, so that the import would now do something else, nothing is
written and the new dry run is shown, to be confirmed again.

Files rather than the session or a table: a pending upload is no record of the register (no
history, no backup), and a sheet of megabytes in the session would be decoded on every request.
Every process serving the pages must see the same IMPORT_UPLOAD_DIR (one host, or a shared folder).
"""
from __future__ import annotations

import hashlib
import io
import os
import secrets
import time
from collections.abc import MutableMapping
from dataclasses import dataclass
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any, BinaryIO

from django.conf import settings
from django.core.exceptions import ValidationError
from django.utils import timezone

from registry.models import Person, Role
from registry.services._common import require_role
from registry.services.laser_import import ImportReport, TableError, laser_import, laser_table_read

STAGED_IMPORT_MAX_AGE = timedelta(minutes=30)
# About 30,000 rows of a register; a larger file is refused before it is read.
MAX_UPLOAD_BYTES = 5 * 1024 * 1024
_SESSION_KEY = "staged_laser_imports"


class StagedImportRefused(Exception):
    """The confirmation cannot go ahead; nothing was written. The message says what to do."""


@dataclass(frozen=True)
class StagedImport:
    """A dry run shown to the LSO; ``token`` confirms it, None when it found problems (nothing to confirm)."""

    report: ImportReport
    token: str | None


def laser_import_stage(*, stream: BinaryIO, name: str, size: int, by: Person, create_locations: bool,
                       session: MutableMapping[str, Any]) -> StagedImport:
    """Dry-run the uploaded sheet and, when it has no problem, keep it for ``laser_import_confirm``.

    A file too large or unreadable is a ValidationError keyed ``file``.
    """
    require_role(by, Role.LSO, action="import lasers")
    if size > MAX_UPLOAD_BYTES:
        raise ValidationError({"file": f"{name} is {size / 1e6:.1f} MB; a sheet may be at most "
                                       f"{MAX_UPLOAD_BYTES / 1e6:.0f} MB. Split it and import each part."})
    content = stream.read(MAX_UPLOAD_BYTES + 1)
    try:
        table = laser_table_read(io.BytesIO(content), name=name)
    except TableError as error:
        raise ValidationError({"file": str(error)}) from None
    report = laser_import(table=table, by=by, dry_run=True, create_locations=create_locations)
    _discard_old_files()
    if report.problems:
        return StagedImport(report, None)
    token = secrets.token_urlsafe(24)
    path = _path(token)
    path.parent.mkdir(parents=True, exist_ok=True, mode=0o700)
    descriptor = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    with os.fdopen(descriptor, "wb") as handle:
        handle.write(content)
    staged = _staged(session)
    staged[token] = {"name": name, "sha256": hashlib.sha256(content).hexdigest(), "by": by.pk,
                     "create_locations": create_locations, "fingerprint": report.fingerprint(),
                     "staged_at": timezone.now().isoformat()}
    session[_SESSION_KEY] = staged
    return StagedImport(report, token)


def laser_import_confirm(*, token: str, by: Person, session: MutableMapping[str, Any]) -> ImportReport:
    """Import the sheet staged under ``token``, all rows or none, if it still does what its dry run showed.

    Raises StagedImportRefused for a token not waiting here, a stale dry run or a file gone or changed.
    The report's ``moved_since_dry_run`` says the register changed in between: nothing was written,
    and the token now confirms the report returned.
    """
    require_role(by, Role.LSO, action="import lasers")
    staged = _staged(session)
    entry = staged.get(token)
    if entry is None or entry["by"] != by.pk:
        raise StagedImportRefused("This upload is not waiting for your confirmation: it was imported already, or "
                                  "uploaded in another session. Upload the file again.")
    if timezone.now() - datetime.fromisoformat(entry["staged_at"]) > STAGED_IMPORT_MAX_AGE:
        _forget(session, token)
        minutes = int(STAGED_IMPORT_MAX_AGE.total_seconds() // 60)
        raise StagedImportRefused(f"The dry run of {entry['name']} is more than {minutes} minutes old and the register "
                                  "may have changed since. Upload the file again to see what it would do now.")
    try:
        content = _path(token).read_bytes()
    except OSError:
        content = b""
    if hashlib.sha256(content).hexdigest() != entry["sha256"]:
        _forget(session, token)
        raise StagedImportRefused(f"The upload of {entry['name']} is no longer on the server as it was. "
                                  "Upload the file again.")
    table = laser_table_read(io.BytesIO(content), name=entry["name"])
    report = laser_import(table=table, by=by, create_locations=entry["create_locations"],
                         expected=entry["fingerprint"])
    if report.moved_since_dry_run:
        staged[token] = {**entry, "fingerprint": report.fingerprint(), "staged_at": timezone.now().isoformat()}
        session[_SESSION_KEY] = staged
        # Kept as long as the new dry run may be confirmed (_discard_old_files goes by the file's age).
        os.utime(_path(token))
    else:
        _forget(session, token)
    return report


def _staged(session: MutableMapping[str, Any]) -> dict[str, dict[str, Any]]:
    return dict(session.get(_SESSION_KEY, {}))


def _forget(session: MutableMapping[str, Any], token: str) -> None:
    staged = _staged(session)
    staged.pop(token, None)
    session[_SESSION_KEY] = staged
    _path(token).unlink(missing_ok=True)


def _path(token: str) -> Path:
    return Path(settings.IMPORT_UPLOAD_DIR) / f"{token}.upload"


def _discard_old_files() -> None:
    """Remove uploads nobody confirmed (sessions that ended, dry runs left) once they can no longer be confirmed."""
    folder = Path(settings.IMPORT_UPLOAD_DIR)
    if not folder.is_dir():
        return
    oldest = time.time() - STAGED_IMPORT_MAX_AGE.total_seconds()
    for path in folder.glob("*.upload"):
        try:
            if path.stat().st_mtime < oldest:
                path.unlink()
        except OSError:
            continue
