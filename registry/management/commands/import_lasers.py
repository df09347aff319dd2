"""manage.py import_lasers: lasers and emissions from a CSV or XLSX sheet, all rows or none."""
from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.exceptions import PermissionDenied
from django.core.management.base import BaseCommand, CommandError, CommandParser

from registry.models import Person, Role
from registry.selectors import people_with_role, person_list
from registry.services.laser_import import ImportReport, TableError, laser_import, laser_table_read


class Command(BaseCommand):
    help = ("Import lasers and their emissions from a spreadsheet (.csv or .xlsx), one row per emission. "
            "All rows or none: every bad row is reported with its line and column, and then nothing is written.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("file", type=Path,
                            help="The .csv (UTF-8) or .xlsx file (its first worksheet); the first row names the "
                                 "columns.")
        parser.add_argument("--dry-run", action="store_true",
                            help="Report what would be created, updated or left unchanged, and write nothing.")
        parser.add_argument("--create-locations", action="store_true",
                            help="Create the rooms (building and room) the register does not have yet, instead of "
                                 "reporting them.")
        parser.add_argument("--as", dest="acting", metavar="USERNAME", default=None,
                            help="The laser safety officer the import acts as, recorded in the history of every "
                                 "record it writes; default: the register's only LSO.")

    def handle(self, *args: Any, **options: Any) -> None:
        path: Path = options["file"]
        by = self._acting_lso(options["acting"])
        try:
            with path.open("rb") as stream:
                table = laser_table_read(stream, name=path.name)
        except OSError as error:
            raise CommandError(f"cannot read {path}: {error.strerror}") from None
        except TableError as error:
            raise CommandError(str(error)) from None
        try:
            report = laser_import(table=table, by=by, dry_run=options["dry_run"],
                                  create_locations=options["create_locations"])
        except PermissionDenied as error:
            raise CommandError(str(error)) from None
        if report.problems:
            for problem in report.problems:
                self.stderr.write(str(problem))
            raise CommandError(f"{len(report.problems)} problems on {len(report.bad_lines)} lines of {path.name}; "
                               "nothing was written.")
        self._write_outcomes(report)

    def _acting_lso(self, username: str | None) -> Person:
        if username is not None:
            person = person_list().filter(user__username=username).first()
            if person is None:
                raise CommandError(f"--as {username}: no person in the register has that username.")
            return person
        lsos = list(people_with_role(role=Role.LSO))
        if len(lsos) != 1:
            names = ", ".join(sorted(person.user.username for person in lsos)) or "none"
            raise CommandError(f"the register has {len(lsos)} laser safety officers ({names}); name the one the "
                               "import acts as with --as USERNAME.")
        return lsos[0]

    def _write_outcomes(self, report: ImportReport) -> None:
        for outcome in report.lasers:
            if outcome.action == "unchanged":
                continue
            lines = ", ".join(str(line) for line in outcome.lines)
            changes = "; ".join(outcome.changes)
            self.stdout.write(f"  {outcome.action:<7} {outcome.asset_tag}  (line {lines})" +
                              (f": {changes}" if changes else ""))
        for location in report.locations_created:
            self.stdout.write(f"  create  location {location}")
        for note in report.notes:
            self.stdout.write(f"  note    {note}")
        created, updated, unchanged = (report.count(action) for action in ("create", "update", "unchanged"))
        rooms = len(report.locations_created)
        if report.dry_run:
            self.stdout.write(f"Dry run of {report.source}, nothing written. Lasers: {created} to create, {updated} "
                              f"to update, {unchanged} unchanged. Locations to create: {rooms}.")
        else:
            self.stdout.write(f"{report.source}: lasers created {created}, updated {updated}, unchanged {unchanged}; "
                              f"locations created {rooms}.")
