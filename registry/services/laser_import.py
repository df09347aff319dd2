"""Importing lasers from a spreadsheet (CSV or XLSX), one row per emission.

The command line (``manage.py import_lasers``) and any page call the same two functions:
``laser_table_read`` turns a file into a Table, ``laser_import`` applies it and returns an
ImportReport. The contract (headers, matching, units, atomicity) is in DEVELOPERS.md under
"Spreadsheet import".

This module reads the table, matches rows to records and reports; it validates nothing
itself. Every laser and emission goes through the services the API uses (laser_register,
laser_update, emission_create, emission_update and the status workflow), so a row is
refused for exactly the reasons a request would be. The only unit rule here is the
header's: "average power (mW)" puts mW on the bare numbers below it, and a bare number
under a header without a unit is refused rather than read in SI units.

A dry run executes the same code in a transaction that is rolled back, and so is an import
with any bad row: either every row is written or none is.
"""
from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import re
import zipfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO, Literal

from django.core.exceptions import PermissionDenied, ValidationError
from django.db import IntegrityError, models, transaction
from django.utils.text import slugify
from openpyxl import load_workbook
from openpyxl.utils.exceptions import InvalidFileException

from hazards.errors import InputError
from hazards.units import format_si, parse_quantity
from registry.models import (
    RETIRED_STATUSES,
    DiameterDefinition,
    Emission,
    Laser,
    LaserClass,
    LaserStatus,
    LaserType,
    Location,
    Person,
    Role,
    TemporalMode,
)
from registry.services._common import require_role
from registry.services._logging import service_action
from registry.services.eyewear import location_create
from registry.services.lasers import (
    EMISSION_QUANTITIES,
    emission_create,
    emission_update,
    emission_values,
    laser_approve,
    laser_register,
    laser_retire,
    laser_set_status,
    laser_submit,
    laser_update,
)
from registry.services.standings import room_standings_batch

Part = Literal["laser", "status", "owner", "place", "emission"]


@dataclass(frozen=True)
class Column:
    """One accepted header: its name in the contract, other names it goes by, and where its value goes."""

    name: str
    field: str
    part: Part
    choices: type[models.TextChoices] | None = None
    aliases: tuple[str, ...] = ()

    @property
    def unit(self) -> str | None:
        """The SI unit of a quantity column (the service's), None for any other column."""
        return EMISSION_QUANTITIES.get(self.field) if self.part == "emission" else None


# The contract's headers first (issue 12), then the extra columns an LSO's sheet may carry.
COLUMNS: tuple[Column, ...] = (
    Column("asset tag", "asset_tag", "laser"),
    Column("manufacturer", "manufacturer", "laser"),
    Column("model", "model_name", "laser", aliases=("model name",)),
    Column("serial number", "serial_number", "laser", aliases=("serial",)),
    Column("laser type", "laser_type", "laser", LaserType, aliases=("type",)),
    Column("class", "labelled_class", "laser", LaserClass, aliases=("laser class", "labelled class")),
    Column("status", "status", "status", LaserStatus),
    Column("building", "building", "place"),
    Column("room", "room", "place"),
    Column("owner", "owner", "owner"),
    Column("emission", "label", "emission", aliases=("emission label",)),
    Column("mode", "temporal_mode", "emission", TemporalMode, aliases=("temporal mode",)),
    Column("wavelength", "wavelength_m", "emission"),
    Column("average power", "average_power_W", "emission", aliases=("power",)),
    Column("pulse energy", "pulse_energy_J", "emission"),
    Column("pulse duration", "pulse_duration_s", "emission"),
    Column("prf", "prf_Hz", "emission", aliases=("pulse repetition frequency", "repetition rate")),
    Column("beam diameter", "beam_diameter_m", "emission"),
    Column("diameter at", "diameter_definition", "emission", DiameterDefinition),
    Column("divergence", "divergence_rad", "emission"),
    Column("gain medium", "gain_medium", "laser"),
    Column("embedded class", "embedded_class", "laser", LaserClass),
    Column("site", "site", "place"),
    Column("longest wavelength", "wavelength_max_m", "emission", aliases=("wavelength max",)),
)

# Columns the register's export adds after the import's (registry.exports): hazard figures under one
# limit set and the caution, for people to read. The import skips them, so that an exported sheet
# reads back; figures are computed from the emissions, never imported.
FIGURE_COLUMNS: tuple[str, ...] = ("nohd", "required od", "en 207 marking", "eye exposure duration", "limit set",
                                   "caution")

# A bare number: what a cell holds when its unit is missing. Anchored and without nested
# repetition, so it runs in linear time on any cell.
_BARE_NUMBER = re.compile(r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?")

# Floats compared for "unchanged": a value read again from the same text is equal to the
# stored one within parsing noise, never within a real correction.
_SAME_VALUE_TOLERANCE = 1e-12


def header_key(text: str) -> str:
    """How headers are compared: case-insensitively, underscores as spaces, runs of blanks as one."""
    return " ".join(text.replace("_", " ").casefold().split())


_COLUMNS_BY_KEY: dict[str, Column] = {
    header_key(name): column for column in COLUMNS for name in (column.name, *column.aliases)
}
_COLUMNS_BY_FIELD: dict[str, Column] = {column.field: column for column in COLUMNS}
_FIGURE_KEYS = frozenset(header_key(name) for name in FIGURE_COLUMNS)


# --- Reading a file --------------------------------------------------------------------


class TableError(ValueError):
    """The file cannot be read as a table at all (its format, its encoding, no header row)."""


@dataclass(frozen=True)
class Table:
    """A sheet as read: the header row and the non-blank rows below it, each with its line number.

    Line numbers are the row numbers a spreadsheet shows (the first row is line 1), counting
    blank rows, so a report points at the row the LSO sees.
    """

    source: str
    header_line: int
    header: list[str]
    rows: list[tuple[int, list[object]]]


def laser_table_read(stream: BinaryIO, *, name: str) -> Table:
    """Read a .csv (UTF-8, comma, semicolon or tab separated) or .xlsx file (its first worksheet)."""
    suffix = Path(name).suffix.casefold()
    if suffix == ".csv":
        lines = _csv_lines(stream, name=name)
    elif suffix == ".xlsx":
        lines = _xlsx_lines(stream, name=name)
    else:
        raise TableError(f"{name}: expected a .csv or .xlsx file, not {suffix or 'a file without an extension'}.")
    header_line, header, rows = 0, [], []
    for number, cells in lines:
        if all(_text(cell) == "" for cell in cells):
            continue
        if not header_line:
            header_line, header = number, [_text(cell) for cell in cells]
        else:
            rows.append((number, list(cells)))
    if not header_line:
        raise TableError(f"{name} is empty: the first non-blank row must name the columns.")
    return Table(source=name, header_line=header_line, header=header, rows=rows)


def _csv_lines(stream: BinaryIO, *, name: str) -> list[tuple[int, list[object]]]:
    try:
        # utf-8-sig drops the byte-order mark spreadsheet programs write at the start.
        text = stream.read().decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise TableError(f"{name} is not UTF-8 text (byte {error.start}); save it as CSV in UTF-8.") from None
    first = next((line for line in text.splitlines() if line.strip()), "")
    # Spreadsheets in many locales separate with semicolons; the header line shows which.
    delimiter = max((",", ";", "\t"), key=first.count)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    try:
        return [(number, list(cells)) for number, cells in enumerate(reader, start=1)]
    except csv.Error as error:
        raise TableError(f"{name}, line {reader.line_num}: {error}") from None


def _xlsx_lines(stream: BinaryIO, *, name: str) -> list[tuple[int, list[object]]]:
    try:
        # data_only: a formula cell gives the value the spreadsheet program last computed.
        workbook = load_workbook(stream, data_only=True)
    except (InvalidFileException, zipfile.BadZipFile, KeyError, OSError) as error:
        raise TableError(f"{name} cannot be read as an XLSX workbook: {error}") from None
    sheet = workbook.worksheets[0]
    # From row 1 explicitly: by default openpyxl starts at the first row holding data, which
    # would shift every line number after leading blank rows.
    rows = sheet.iter_rows(min_row=1, max_row=max(sheet.max_row, 1), min_col=1, values_only=True)
    return [(number, list(cells)) for number, cells in enumerate(rows, start=1)]


def _text(value: object) -> str:
    """A cell as text, trimmed; whole-number floats (how XLSX stores 5) lose their '.0'."""
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


# --- The report ------------------------------------------------------------------------


@dataclass(frozen=True)
class ImportProblem:
    """Why a row (or the header) cannot be imported; ``column`` is the header as written, "" for the whole row."""

    line: int
    column: str
    reason: str

    def __str__(self) -> str:
        where = f"line {self.line}" + (f", {self.column}" if self.column else "")
        return f"{where}: {self.reason}"


Action = Literal["create", "update", "unchanged"]


@dataclass
class LaserOutcome:
    """What the import does (or would do) to one laser; ``changes`` says what, in words."""

    asset_tag: str
    lines: list[int]
    action: Action = "unchanged"
    changes: list[str] = field(default_factory=list)


@dataclass
class ImportReport:
    source: str
    dry_run: bool
    lasers: list[LaserOutcome] = field(default_factory=list)
    locations_created: list[str] = field(default_factory=list)
    problems: list[ImportProblem] = field(default_factory=list)
    # Not errors: emissions saved without hazard figures, with the engine's reason.
    notes: list[ImportProblem] = field(default_factory=list)

    # A confirmed import whose changes were not those of the dry run it confirmed (see laser_import).
    moved_since_dry_run: bool = False

    @property
    def written(self) -> bool:
        return not self.dry_run and not self.problems and not self.moved_since_dry_run

    def fingerprint(self) -> str:
        """A digest of what the import does: each laser's action and changes, and the locations created.

        Two runs with the same fingerprint make the same changes, so a confirmation can check that it
        writes what its dry run showed.
        """
        done = {"lasers": [[outcome.asset_tag, outcome.action, outcome.changes] for outcome in self.lasers],
                "locations": self.locations_created}
        return hashlib.sha256(json.dumps(done, sort_keys=True).encode()).hexdigest()

    def count(self, action: Action) -> int:
        return sum(1 for outcome in self.lasers if outcome.action == action)

    @property
    def bad_lines(self) -> list[int]:
        return sorted({problem.line for problem in self.problems})


# --- Matching the sheet ----------------------------------------------------------------


@dataclass(frozen=True)
class _SheetColumn:
    index: int
    header: str
    column: Column
    unit: str | None


# Fields that describe the laser rather than one of its emissions.
_LASER_SIDE = frozenset(column.field for column in COLUMNS if column.part != "emission")


@dataclass
class _Row:
    line: int
    asset_tag: str
    laser: dict[str, str]
    status: str | None
    owner: str | None
    place: dict[str, str]
    emission: dict[str, str] | None
    # Fields of this row already reported as problems.
    bad: set[str] = field(default_factory=set)


@dataclass
class _SheetLaser:
    asset_tag: str
    rows: list[_Row]


class _Refused(Exception):
    """A cell the import cannot use; becomes an ImportProblem for the row."""

    def __init__(self, field_name: str, reason: str) -> None:
        super().__init__(reason)
        self.field_name = field_name
        self.reason = reason


class _Import:
    """One import run: reads the header and rows of ``table``, then applies each laser through the services.

    Every problem goes to ``report.problems`` as it is found, so that one run names them all.
    """

    def __init__(self, *, table: Table, by: Person, report: ImportReport, create_locations: bool) -> None:
        self.table = table
        self.by = by
        self.report = report
        self.create_locations = create_locations
        self.columns: dict[str, _SheetColumn] = {}
        self.owners: dict[str, Person] = {}
        self.places: dict[tuple[str, str, str], Location] = {}

    # Problems name the header as the sheet wrote it; a field the sheet has no column for
    # goes by its contract name; a rule over several fields is about the whole row.
    def header_of(self, field_name: str) -> str:
        column = _COLUMNS_BY_FIELD.get(field_name)
        if column is None:
            return ""
        given = self.columns.get(column.field)
        return given.header if given is not None else column.name

    def problem(self, line: int, field_name: str, reason: str) -> None:
        self.report.problems.append(ImportProblem(line, self.header_of(field_name), reason))

    def refusal(self, line: int, error: ValidationError | PermissionDenied | IntegrityError | _Refused) -> None:
        if isinstance(error, _Refused):
            self.problem(line, error.field_name, error.reason)
        elif isinstance(error, ValidationError) and hasattr(error, "error_dict"):
            for name, messages in error.message_dict.items():
                for message in messages:
                    self.problem(line, {"location": "room"}.get(name, name), message)
        elif isinstance(error, ValidationError):
            for message in error.messages:
                self.problem(line, "", message)
        elif isinstance(error, IntegrityError):
            # full_clean found nothing wrong, so another change was saved in the meantime.
            self.problem(line, "", f"the database refused the row, which another change saved at the same time "
                                   f"made invalid ({str(error).splitlines()[0]}); run the import again.")
        else:
            self.problem(line, "", str(error))

    # -- the header ------------------------------------------------------------------

    def read_header(self) -> None:
        line = self.table.header_line
        unnamed: list[int] = []
        for index, text in enumerate(self.table.header):
            if not text:
                unnamed.append(index)
                continue
            name, unit = _split_unit(text)
            if header_key(text) in _FIGURE_KEYS:
                continue
            column = _COLUMNS_BY_KEY.get(header_key(name))
            if column is None:
                accepted = ", ".join(known.name for known in COLUMNS)
                self.report.problems.append(ImportProblem(line, text, f"unknown column; the columns are: {accepted}."))
                continue
            if column.field in self.columns:
                self.report.problems.append(ImportProblem(
                    line, text, f"a second '{column.name}' column (the first is '{self.columns[column.field].header}')."))
                continue
            if unit is not None:
                self._check_header_unit(line, text, column, unit)
            self.columns[column.field] = _SheetColumn(index, text, column, unit)
        for index in unnamed:
            if any(index < len(cells) and _text(cells[index]) for _, cells in self.table.rows):
                self.report.problems.append(ImportProblem(line, f"column {index + 1}", "has values but no header."))
        if "asset_tag" not in self.columns:
            self.report.problems.append(ImportProblem(line, "", "the sheet needs an 'asset tag' column."))
        present = {"building", "room"} & set(self.columns)
        if (present and len(present) == 1) or ("site" in self.columns and not present):
            self.report.problems.append(ImportProblem(
                line, "", "a location is named by its 'building' and 'room' columns (and 'site', optionally): "
                          "give both."))

    def _check_header_unit(self, line: int, text: str, column: Column, unit: str) -> None:
        if column.unit is None:
            self.report.problems.append(ImportProblem(line, text, f"'{column.name}' takes no unit."))
            return
        try:
            parse_quantity(f"1 {unit}", field=text, unit=column.unit)
        except InputError as error:
            self.report.problems.append(ImportProblem(line, text, f"the unit in the header: {error.message}."))

    # -- the rows --------------------------------------------------------------------

    def read_rows(self) -> list[_SheetLaser]:
        lasers: dict[str, _SheetLaser] = {}
        for line, cells in self.table.rows:
            row = self.read_row(line, cells)
            if row is None:
                continue
            key = row.asset_tag.casefold()
            if key not in lasers:
                lasers[key] = _SheetLaser(row.asset_tag, [row])
                continue
            self.check_same_laser(lasers[key].rows[0], row)
            lasers[key].rows.append(row)
        for sheet_laser in lasers.values():
            self.check_emission_labels(sheet_laser)
        return list(lasers.values())

    def read_row(self, line: int, cells: Sequence[object]) -> _Row | None:
        values: dict[str, str] = {}
        bad: set[str] = set()
        for name, given in self.columns.items():
            raw = cells[given.index] if given.index < len(cells) else None
            try:
                values[name] = self.cell(given, raw)
            except _Refused as refused:
                self.problem(line, refused.field_name, refused.reason)
                bad.add(name)
        asset_tag = values.get("asset_tag", "")
        if not asset_tag:
            self.problem(line, "asset_tag", "every row needs the asset tag of its laser.")
            return None
        parts: dict[str, dict[str, str]] = {"laser": {}, "place": {}, "emission": {}}
        for name, value in values.items():
            part = self.columns[name].column.part
            if part in parts and name != "asset_tag":
                parts[part][name] = value
        has_emission = any(parts["emission"].values())
        return _Row(
            line=line, asset_tag=asset_tag, laser=parts["laser"], status=values.get("status") or None,
            owner=values.get("owner") if "owner" in self.columns else None, place=parts["place"],
            emission=parts["emission"] if has_emission else None, bad=bad,
        )

    def cell(self, given: _SheetColumn, raw: object) -> str:
        text = _text(raw)
        column = given.column
        if column.choices is not None:
            return _choice(text, column.choices)
        if column.unit is None or text == "":
            return text
        if isinstance(raw, (int, float)) and not isinstance(raw, bool) or _BARE_NUMBER.fullmatch(text):
            if given.unit is None:
                example = _example_unit(column)
                raise _Refused(column.field, f"{text} has no unit: write it with its unit ('{text} {example}') or "
                                             f"put the unit in the header ('{given.header} ({example})').")
            return f"{text} {given.unit}"
        return text

    def check_same_laser(self, first: _Row, row: _Row) -> None:
        """Rows of one asset tag are one laser: each must give the laser the same values."""
        mine: dict[str, str | None] = {**row.laser, **row.place, "status": row.status, "owner": row.owner}
        theirs: dict[str, str | None] = {**first.laser, **first.place, "status": first.status, "owner": first.owner}
        for name, value in mine.items():
            if _same_text(name, value, theirs[name]):
                continue
            shown = theirs[name] or "(blank)"
            self.problem(row.line, name, f"asset tag {first.asset_tag} is on line {first.line} with "
                                         f"{self.header_of(name)} '{shown}', here '{value or '(blank)'}': the rows of "
                                         "one laser give it the same values.")
            row.bad.add(name)

    def check_emission_labels(self, sheet_laser: _SheetLaser) -> None:
        seen: dict[str, _Row] = {}
        for row in sheet_laser.rows:
            if row.emission is None:
                continue
            label = row.emission.get("label", "").casefold()
            if label in seen:
                shown = row.emission.get("label") or "(no label)"
                self.problem(row.line, "label", f"{sheet_laser.asset_tag} already has emission '{shown}' on line "
                                                f"{seen[label].line}: give each emission of a laser its own name.")
                row.bad.add("label")
            else:
                seen[label] = row

    # -- references --------------------------------------------------------------------

    def owner(self, text: str) -> Person | None:
        if not text:
            return None
        key = text.casefold()
        if key not in self.owners:
            people = list(Person.objects.select_related("user").filter(user__username=text)[:1]) or list(
                Person.objects.select_related("user").filter(user__email__iexact=text)[:2])
            if not people:
                raise _Refused("owner", f"no person in the register has the username or e-mail '{text}'.")
            if len(people) > 1:
                raise _Refused("owner", f"more than one person has the e-mail '{text}'; give the username.")
            self.owners[key] = people[0]
        return self.owners[key]

    def place(self, place: Mapping[str, str]) -> Location | None:
        site, building, room = place.get("site", ""), place.get("building", ""), place.get("room", "")
        if not (site or building or room):
            return None
        if not building or not room:
            raise _Refused("room" if building else "building", "a location needs both its building and its room.")
        key = (site.casefold(), building.casefold(), room.casefold())
        if key not in self.places:
            self.places[key] = self.find_or_create_place(site, building, room)
        return self.places[key]

    def find_or_create_place(self, site: str, building: str, room: str) -> Location:
        found = Location.objects.filter(building__iexact=building, room__iexact=room)
        if site:
            found = found.filter(site__iexact=site)
        matches = list(found[:2])
        if len(matches) == 1:
            return matches[0]
        if matches:
            raise _Refused("room", f"{building} {room} is a room on more than one site; add a 'site' column.")
        where = f"{building} {room}" + (f" ({site})" if site else "")
        if not self.create_locations:
            raise _Refused("room", f"no location {where} in the register: add it first, or let the import create "
                                   "it (--create-locations).")
        if not site:
            sites = sorted(set(Location.objects.values_list("site", flat=True)))
            if len(sites) != 1:
                raise _Refused("room", f"to create {where}, name its site in a 'site' column (the register has "
                                       f"{len(sites)} sites).")
            site = sites[0]
        location = location_create(code=_free_location_code(building, room), site=site, building=building,
                                   room=room, by=self.by)
        self.report.locations_created.append(str(location))
        return location

    # -- applying ----------------------------------------------------------------------

    def apply(self, sheet_laser: _SheetLaser) -> None:
        first = sheet_laser.rows[0]
        outcome = LaserOutcome(sheet_laser.asset_tag, [row.line for row in sheet_laser.rows])
        self.report.lasers.append(outcome)
        fields, refusals = self.laser_fields(first)
        for refusal in refusals:
            self.refusal(first.line, refusal)
        if refusals:
            return
        try:
            laser = self.write_laser(sheet_laser.asset_tag, fields, outcome)
        except (ValidationError, PermissionDenied, IntegrityError, _Refused) as error:
            self.refusal(first.line, error)
            return
        # The status moves last, and only when every row of the laser went in: approval needs the
        # emissions, and a refusal of an incomplete laser would only repeat the rows' problems.
        complete = True
        existing = {emission.label.casefold(): emission for emission in laser.emissions.select_for_update()} \
            if outcome.action != "create" else {}
        for row in sheet_laser.rows:
            if row.bad:
                complete = False
                continue
            if row.emission is None:
                continue
            try:
                self.write_emission(laser, row, existing, outcome)
            except (ValidationError, PermissionDenied, IntegrityError) as error:
                self.refusal(row.line, error)
                complete = False
        if first.status is not None and complete:
            try:
                self.move(laser, first.status, outcome)
            except (ValidationError, PermissionDenied, IntegrityError) as error:
                self.refusal(first.line, error)

    def laser_fields(self, row: _Row) -> tuple[dict[str, Any], list[_Refused]]:
        """The laser's field values with owner and location found; an unknown owner and room are both reported."""
        fields: dict[str, Any] = dict(row.laser)
        refusals: list[_Refused] = []
        if row.owner is not None:
            try:
                fields["owner"] = self.owner(row.owner)
            except _Refused as refusal:
                refusals.append(refusal)
        if "room" in self.columns:
            try:
                fields["location"] = self.place(row.place)
            except _Refused as refusal:
                refusals.append(refusal)
        return fields, refusals

    def write_laser(self, asset_tag: str, fields: dict[str, Any], outcome: LaserOutcome) -> Laser:
        # Locked until the import ends, so no edit slips in between the comparison and the write.
        matches = list(Laser.objects.select_for_update().filter(asset_tag__iexact=asset_tag)[:2])
        if len(matches) > 1:
            raise _Refused("asset_tag", f"the register has more than one laser tagged '{asset_tag}' (differing only "
                                        "in case); rename one first.")
        if not matches:
            outcome.action = "create"
            return laser_register(by=self.by, asset_tag=asset_tag, **fields)
        laser = matches[0]
        changed = {name: value for name, value in fields.items() if not _same_field(laser, name, value)}
        if changed:
            outcome.action = "update"
            outcome.changes += [_change(self.header_of(name), getattr(laser, name), value)
                                for name, value in changed.items()]
            laser_update(laser=laser, by=self.by, **changed)
        return laser

    def write_emission(self, laser: Laser, row: _Row, existing: dict[str, Emission], outcome: LaserOutcome) -> None:
        assert row.emission is not None
        given: dict[str, Any] = dict(row.emission)
        if "diameter_definition" in given and not given["diameter_definition"]:
            # A blank cell is the usual data-sheet figure, which is also the model's default.
            given["diameter_definition"] = DiameterDefinition.ONE_OVER_E_SQUARED
        label = given.get("label", "")
        current = existing.get(label.casefold())
        if current is None:
            emission = emission_create(laser=laser, by=self.by, **given)
            if outcome.action != "create":
                outcome.changes.append(f"new emission '{label}'")
        else:
            given.pop("label", None)
            wanted = emission_values(**given)
            changed = [name for name, value in wanted.items() if not _same_value(getattr(current, name), value)]
            if not changed:
                return
            outcome.changes += [_change(f"emission '{current.label}' {self.header_of(name)}", getattr(current, name),
                                        wanted[name], unit=EMISSION_QUANTITIES.get(name)) for name in changed]
            emission = emission_update(emission=current, by=self.by, **{name: given[name] for name in changed})
        if outcome.action == "unchanged":
            outcome.action = "update"
        if emission.assessment_problem:
            self.report.notes.append(ImportProblem(row.line, "", f"saved without hazard figures: "
                                                                 f"{emission.assessment_problem}"))

    def move(self, laser: Laser, target: str, outcome: LaserOutcome) -> None:
        """Take ``laser`` to the sheet's status through the workflow services, which refuse what it forbids."""
        before = laser.status
        if target == before:
            return
        note = f"Status from the spreadsheet import of {self.report.source}."
        if laser.status == LaserStatus.PENDING_REVIEW and target != LaserStatus.RETURNED:
            laser = laser_approve(laser=laser, by=self.by, note=note)
        elif laser.status == LaserStatus.RETURNED and target == LaserStatus.PENDING_REVIEW:
            laser = laser_submit(laser=laser, by=self.by, note=note)
        if target in RETIRED_STATUSES:
            laser_retire(laser=laser, by=self.by, status=target, reason=note)
        elif target != laser.status:
            laser_set_status(laser=laser, by=self.by, status=target, note=note)
        if outcome.action != "create":
            outcome.action = "update"
            outcome.changes.append(_change(self.header_of("status"), before, target))


def _split_unit(header: str) -> tuple[str, str | None]:
    """'average power (mW)' -> ('average power', 'mW'); square brackets work too."""
    for opening, closing in (("(", ")"), ("[", "]")):
        if header.endswith(closing) and opening in header:
            name, _, unit = header[:-1].rpartition(opening)
            return name.strip(), unit.strip()
    return header, None


def _choice_key(text: str) -> str:
    return " ".join(text.casefold().replace("_", " ").replace("-", " ").replace("²", "2").replace("^", "").split())


def _choice(text: str, choices: type[models.TextChoices]) -> str:
    """The stored value for a value or label typed any case ('Q-switched', 'class 3b'); unknown text passes
    through unchanged, for the model's validation to refuse with its own message."""
    key = _choice_key(text)
    if choices is LaserClass:
        key = key.removeprefix("class ")
    for value, label in choices.choices:
        if key in (_choice_key(str(value)), _choice_key(str(label))):
            return str(value)
    return text


def _same_text(name: str, mine: str | None, theirs: str | None) -> bool:
    # Names of people and rooms are matched case-insensitively, so they are compared that way.
    if name in ("owner", "site", "building", "room"):
        return (mine or "").casefold() == (theirs or "").casefold()
    return (mine or "") == (theirs or "")


def _same_field(laser: Laser, name: str, value: object) -> bool:
    if name in ("owner", "location"):
        # By key, so that the comparison reads no related row.
        return getattr(laser, f"{name}_id") == (value.pk if isinstance(value, models.Model) else None)
    return bool(getattr(laser, name) == value)


def _same_value(current: object, wanted: object) -> bool:
    if isinstance(current, float) and isinstance(wanted, float):
        return math.isclose(current, wanted, rel_tol=_SAME_VALUE_TOLERANCE)
    return current == wanted


def _example_unit(column: Column) -> str:
    return {"m": "nm" if column.field.startswith("wavelength") else "mm", "W": "mW", "J": "mJ", "s": "ns",
            "Hz": "kHz", "rad": "mrad"}[column.unit or "m"]


def _change(what: str, old: object, new: object, unit: str | None = None) -> str:
    def shown(value: object) -> str:
        if value is None or value == "":
            return "(blank)"
        if unit is not None and isinstance(value, float):
            return format_si(value, unit, digits=6)
        return str(value)
    return f"{what}: {shown(old)} -> {shown(new)}"


def _free_location_code(building: str, room: str) -> str:
    base = slugify(f"{building} {room}")[:34].strip("-") or "room"
    code, number = base, 1
    while Location.objects.filter(code=code).exists():
        number += 1
        code = f"{base}-{number}"
    return code


@service_action
def laser_import(*, table: Table, by: Person, dry_run: bool = False, create_locations: bool = False,
                 expected: str | None = None) -> ImportReport:
    """Apply ``table`` to the register as ``by`` (an LSO), or report what it would do (``dry_run``).

    Every row is checked, and every problem reported; if there is any, nothing is written.
    Unknown rooms are reported, or created with ``create_locations``. A laser or emission whose
    values already match the sheet is not saved, so importing the same file again writes nothing.
    ``expected`` is the fingerprint of the dry run being confirmed: when the import would now
    make other changes (the register moved in between), nothing is written and the report says
    so (``moved_since_dry_run``), with what the import would do now.
    """
    require_role(by, Role.LSO, action="import lasers")
    report = ImportReport(source=table.source, dry_run=dry_run)
    run = _Import(table=table, by=by, report=report, create_locations=create_locations)
    run.read_header()
    if report.problems:
        return report
    sheet_lasers = run.read_rows()
    with transaction.atomic():
        # Each room's standing once for the whole sheet, not once per laser and emission.
        with room_standings_batch():
            for sheet_laser in sheet_lasers:
                # A laser whose own values are in doubt is not written; its problems are reported already.
                if not sheet_laser.rows[0].bad & _LASER_SIDE:
                    run.apply(sheet_laser)
        report.moved_since_dry_run = expected is not None and not report.problems and report.fingerprint() != expected
        if dry_run or report.problems or report.moved_since_dry_run:
            transaction.set_rollback(True)
    report.problems.sort(key=lambda problem: problem.line)
    if report.problems:
        # Nothing was written, so no location was created either.
        report.locations_created.clear()
    return report
