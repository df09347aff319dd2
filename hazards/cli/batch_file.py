"""Reading the CSV files the ``--batch`` options take."""
from __future__ import annotations

import csv
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from hazards.errors import InputError


@contextmanager
def batch_rows(path: Path) -> Iterator[csv.DictReader[str]]:
    """The rows of a batch CSV by header; a file that cannot be read is an InputError naming "batch"."""
    try:
        handle = path.open(newline="", encoding="utf-8")
    except OSError as error:
        raise InputError("batch", f"cannot read {str(path)!r}: {error.strerror}") from None
    with handle:
        yield csv.DictReader(handle)
