"""manage.py restore_register: a backup_register archive into an empty, migrated database."""
from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.db import DatabaseError

from registry.services.backup import BackupError, register_restore


class Command(BaseCommand):
    help = ("Load an archive written by backup_register into this database, which must be new: migrated "
            "(manage.py migrate) and holding no records. Every row and file goes in, or none does.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("archive", type=Path, metavar="IN.tar.gz", help="The archive backup_register wrote.")

    def handle(self, *args: Any, **options: Any) -> None:
        archive: Path = options["archive"]
        if not archive.is_file():
            raise CommandError(f"{archive}: no such file.")
        try:
            summary = register_restore(archive=archive)
        except BackupError as error:
            raise CommandError(str(error)) from None
        except DatabaseError as error:
            raise CommandError(f"{archive}: the database refused a row, so nothing was restored: {error}") from None
        total = sum(summary.records.values())
        self.stdout.write(f"{archive}: restored {total} rows from {len(summary.records)} tables and "
                          f"{summary.files} files.")
