"""manage.py backup_register: every record with its history, and the uploaded files, in one archive."""
from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser

from registry.services.backup import BackupError, register_backup


class Command(BaseCommand):
    help = ("Write the whole register (every record and its history, the accounts, and the uploaded SOP "
            "documents under MEDIA_ROOT) to one .tar.gz archive, which restore_register loads into an empty "
            "database. The archive holds password hashes: keep it as safe as the database.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("out", type=Path, metavar="OUT.tar.gz",
                            help="The archive to write; an existing file of that name is replaced once the new "
                                 "archive is complete.")

    def handle(self, *args: Any, **options: Any) -> None:
        try:
            summary = register_backup(out=options["out"])
        except (BackupError, OSError) as error:
            raise CommandError(str(error)) from None
        history = sum(count for label, count in summary.records.items() if ".historical" in label)
        total = sum(summary.records.values())
        self.stdout.write(f"{summary.path}: {total} rows ({history} of them history) from "
                          f"{len(summary.records)} tables, and {summary.files} files ({summary.file_bytes} bytes).")
