"""Scheduled commands that every server's cron may start at the same moment: one run does the
work, the others see it under way and stop.

``single_run(name)`` holds a lock named ``name`` for its block: on PostgreSQL a session-level
advisory lock (``pg_try_advisory_lock``), which every server sharing the database sees and which
the database drops if the process dies; on SQLite, whose database is a file on one machine, an
exclusive ``flock`` on a file beside it (the kernel drops it if the process dies). A run that
starts after another finished does its work again: the reminders are recorded per day
(``SentReminder``), so it sends nothing twice.
"""
from __future__ import annotations

import fcntl
import hashlib
import logging
import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from django.db import DatabaseError, connection

logger = logging.getLogger(__name__)


@contextmanager
def single_run(name: str) -> Iterator[bool]:
    """Yield True while this process holds the lock ``name``, or False at once when another
    holds it (the caller then does nothing). Released when the block ends."""
    if connection.vendor == "postgresql":
        lock = _advisory_lock(name)
    else:
        lock = _file_lock(name)
    with lock as acquired:
        if not acquired:
            logger.info("%s: another run holds the lock; this one does nothing", name)
        yield acquired


def _lock_key(name: str) -> int:
    """A signed 64-bit key for ``name`` (advisory locks are numbered, not named)."""
    return int.from_bytes(hashlib.sha256(f"beamkeeper:{name}".encode()).digest()[:8], "big", signed=True)


@contextmanager
def _advisory_lock(name: str) -> Iterator[bool]:
    key = _lock_key(name)
    with connection.cursor() as cursor:
        cursor.execute("SELECT pg_try_advisory_lock(%s)", [key])
        acquired = bool(cursor.fetchone()[0])
    try:
        yield acquired
    finally:
        if acquired:
            try:
                with connection.cursor() as cursor:
                    cursor.execute("SELECT pg_advisory_unlock(%s)", [key])
            except DatabaseError:
                # The connection is gone, and the lock with its session.
                logger.warning("%s: could not release the advisory lock; the database dropped it", name)


@contextmanager
def _file_lock(name: str) -> Iterator[bool]:
    database = str(connection.settings_dict["NAME"])
    if connection.is_in_memory_db():
        # The tests' in-memory database belongs to this process (its name is the same in every
        # process): a lock file of this process's own in the temporary folder stands in.
        folder, stem = Path(tempfile.gettempdir()), f"beamkeeper-memory-{os.getpid()}"
    else:
        folder, stem = Path(database).parent, Path(database).name
    path = folder / f".{stem}.{name}.lock"
    descriptor = os.open(path, os.O_RDWR | os.O_CREAT, 0o600)
    try:
        try:
            fcntl.flock(descriptor, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            yield False
            return
        try:
            yield True
        finally:
            fcntl.flock(descriptor, fcntl.LOCK_UN)
    finally:
        os.close(descriptor)
