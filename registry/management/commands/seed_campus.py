"""manage.py seed_campus: load or refresh the fictional demo campus."""
from __future__ import annotations

import datetime
from pathlib import Path
from typing import Any

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError, CommandParser

from registry.services.campus import DEFAULT_CAMPUS_FILE, campus_load, campus_read


class Command(BaseCommand):
    help = ("Load the fictional demo campus (rooms, lasers, people, training, SOPs, eyewear, an audit). "
            "Safe to run again: existing rows are updated, never duplicated.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--file", type=Path, default=DEFAULT_CAMPUS_FILE,
                            help=f"Campus description in TOML (default: {DEFAULT_CAMPUS_FILE.name} in fixtures/).")
        parser.add_argument("--today", type=datetime.date.fromisoformat, default=None,
                            help="Date (YYYY-MM-DD) the file's relative dates count from; default: today.")

    def handle(self, *args: Any, **options: Any) -> None:
        path: Path = options["file"]
        try:
            data = campus_read(path)
        except OSError as error:
            raise CommandError(f"cannot read {path}: {error.strerror}") from None
        except ValueError as error:
            raise CommandError(f"{path} is not valid TOML: {error}") from None
        # Printed demo passwords exist only on a development install.
        demo = bool(settings.DEBUG)
        try:
            summary = campus_load(data=data, today=options["today"], set_demo_passwords=demo)
        except ValidationError as error:
            raise CommandError("; ".join(error.messages)) from None
        counts = ", ".join(f"{number} {name}" for name, number in summary.counts.items())
        self.stdout.write(f"{summary.site}: {counts} ({summary.saved_rows} rows written).")
        for emission, reason in summary.not_assessed:
            self.stderr.write(f"  not assessed: {emission}: {reason}")
        for login in summary.logins:
            if login.password is not None:
                self.stdout.write(f"  {login.role:<11} username {login.username:<11} password {login.password}")
            else:
                self.stdout.write(f"  {login.role:<11} username {login.username:<11} "
                                  f"(no demo password; set one with: manage.py changepassword {login.username})")
