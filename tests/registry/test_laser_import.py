"""Spreadsheet import: headers, units, matching, atomicity, dry runs and re-imports.

Sheets are written by the tests themselves, as CSV and as XLSX, so no binary file is committed.
The beam values are data-sheet-like figures for the test only (common practice, no source);
the import checks none of them itself, the emission services do.
"""
from __future__ import annotations

import csv
from collections.abc import Callable, Sequence
from io import StringIO
from pathlib import Path

import pytest
from django.apps import apps
from django.core.exceptions import PermissionDenied
from django.core.management import CommandError, call_command
from openpyxl import Workbook

from registry.models import Emission, Laser, LaserStatus, Location, Person
from registry.services import laser_retire
from registry.services.laser_import import ImportReport, Table, TableError, laser_import, laser_table_read
from tests import factories

pytestmark = pytest.mark.django_db

Rows = Sequence[Sequence[object]]
SheetWriter = Callable[[Path, Rows], Path]

HEADER = ["asset tag", "manufacturer", "model", "serial number", "laser type", "class", "status", "building", "room",
          "owner", "emission", "mode", "wavelength", "average power", "pulse energy", "pulse duration", "prf",
          "beam diameter", "diameter at", "divergence"]


def write_csv(path: Path, rows: Rows) -> Path:
    target = path.with_suffix(".csv")
    with target.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows([["" if cell is None else cell for cell in row] for row in rows])
    return target


def write_xlsx(path: Path, rows: Rows) -> Path:
    target = path.with_suffix(".xlsx")
    workbook = Workbook()
    sheet = workbook.active
    assert sheet is not None
    for number, row in enumerate(rows, start=1):
        for column, value in enumerate(row, start=1):
            if value not in (None, ""):
                sheet.cell(row=number, column=column, value=value)
    workbook.save(target)
    return target


@pytest.fixture(params=[write_csv, write_xlsx], ids=["csv", "xlsx"])
def write_sheet(request: pytest.FixtureRequest) -> SheetWriter:
    writer: SheetWriter = request.param
    return writer


@pytest.fixture
def lso() -> Person:
    return factories.PersonFactory.create(role="lso", research_group=None, user__username="officer")


@pytest.fixture
def owner() -> Person:
    return factories.PersonFactory.create(role="researcher", user__username="r.vale", user__email="R.Vale@lab.example")


@pytest.fixture
def room() -> Location:
    return factories.LocationFactory.create(site="North campus", building="Kestrel Building", room="0.12")


def read(path: Path) -> Table:
    with path.open("rb") as stream:
        return laser_table_read(stream, name=path.name)


def run(path: Path, by: Person, **options: bool) -> ImportReport:
    return laser_import(table=read(path), by=by, **options)


def history_rows() -> int:
    return sum(model.objects.count() for model in apps.get_app_config("registry").get_models()
               if model.__name__.startswith("Historical"))


def register_rows() -> dict[str, int]:
    return {model.__name__: model.objects.count() for model in apps.get_app_config("registry").get_models()}


def problems(report: ImportReport) -> set[tuple[int, str]]:
    return {(problem.line, problem.column) for problem in report.problems}


# Tag, class, emission label, mode, wavelength, power, energy, duration, prf, diameter, divergence.
def row(tag: str, laser_class: str, label: str, mode: str, wavelength: object, power: object,
        energy: object = "", duration: object = "", prf: object = "", diameter: object = "1 mm",
        divergence: object = "1 mrad", *, status: str = "active", laser_type: str = "solid state",
        building: str = "Kestrel Building", room: str = "0.12", owner: str = "r.vale") -> list[object]:
    return [tag, "Northgate Photonics", "NG-1", f"SN-{tag.strip().upper()}", laser_type, laser_class, status, building, room, owner,
            label, mode, wavelength, power, energy, duration, prf, diameter, "1/e2", divergence]


def messy_rows(*, fixed: bool) -> list[list[object]]:
    """Messy on purpose: headers in mixed case with underscores and trailing spaces, a blank first line and blank
    lines between rows, mixed units, a wavelength in micrometres, padded cells; and, unless ``fixed``, a
    duplicate asset tag with another class (line 6) and a power with no unit (line 8)."""
    header = ["Asset Tag ", "manufacturer", "MODEL", "serial_number", "Laser_Type", "Class", "status", "Building",
              "Room", "Owner", "Emission", "mode", "Wavelength", "Average Power", "pulse energy", "Pulse Duration",
              "PRF", "beam diameter", "diameter at", "divergence"]
    fundamental = row("MSY-2", "4", "fundamental", "q_switched", "1.064 um", "2 W", "200 mJ", "8 ns", "10 Hz", "6 mm",
                      "0.5 mrad")
    harmonic = row("MSY-2", "4" if fixed else "3B", "second harmonic", "Q-switched", "532 nm", "1000 mW", "0.1 J",
                   "7 ns", "10 Hz", "6 mm", "0.5 mrad")
    diode = row("MSY-3", "3B", "main", "cw", "405 nm", "5 mW" if fixed else 5)
    padded = row("MSY-1 ", "3B", "main ", " CW", " 532 nm ", "50 mW ", building="Kestrel Building ", room=" 0.12",
                 owner="r.vale@lab.example ")
    helium_neon = row("MSY-4", "3R", "main", "continuous wave", "632.8 nm", "4500 uW", diameter="0.0008 m",
                      divergence="0.07 deg")
    return [[], header, padded, [], fundamental, harmonic, [], diode, helium_neon]


def test_the_messy_sheet_is_refused_whole_with_every_bad_row_named(
        tmp_path: Path, write_sheet: SheetWriter, lso: Person, owner: Person, room: Location) -> None:
    before, history = register_rows(), history_rows()
    report = run(write_sheet(tmp_path / "messy", messy_rows(fixed=False)), lso)
    assert problems(report) == {(6, "Class"), (8, "Average Power")}
    reasons = {problem.line: problem.reason for problem in report.problems}
    assert "asset tag MSY-2 is on line 5 with Class '4', here '3B'" in reasons[6]
    assert "5 has no unit" in reasons[8]
    assert "'Average Power (mW)'" in reasons[8]
    assert report.written is False
    assert register_rows() == before
    assert history_rows() == history


def test_the_messy_sheet_once_fixed_imports_with_its_units_read(
        tmp_path: Path, write_sheet: SheetWriter, lso: Person, owner: Person, room: Location) -> None:
    report = run(write_sheet(tmp_path / "messy", messy_rows(fixed=True)), lso)
    assert report.problems == []
    assert [(outcome.asset_tag, outcome.lines, outcome.action) for outcome in report.lasers] == [
        ("MSY-1", [3], "create"), ("MSY-2", [5, 6], "create"), ("MSY-3", [8], "create"), ("MSY-4", [9], "create")]
    padded = Laser.objects.get(asset_tag="MSY-1")
    assert (padded.owner, padded.location, padded.status) == (owner, room, LaserStatus.ACTIVE)
    assert padded.emissions.get().label == "main"
    assert padded.emissions.get().temporal_mode == "cw"
    fundamental = Emission.objects.get(laser__asset_tag="MSY-2", label="fundamental")
    assert fundamental.wavelength_m == pytest.approx(1.064e-6)
    assert fundamental.pulse_energy_J == pytest.approx(0.2)
    assert fundamental.pulse_duration_s == pytest.approx(8e-9)
    harmonic = Emission.objects.get(laser__asset_tag="MSY-2", label="second harmonic")
    assert (harmonic.temporal_mode, harmonic.average_power_W, harmonic.pulse_energy_J) == ("q_switched", 1.0, 0.1)
    assert Emission.objects.get(laser__asset_tag="MSY-3").average_power_W == pytest.approx(5e-3)
    helium_neon = Emission.objects.get(laser__asset_tag="MSY-4")
    assert helium_neon.average_power_W == pytest.approx(4.5e-3)
    assert helium_neon.beam_diameter_m == pytest.approx(8e-4)
    assert helium_neon.divergence_rad == pytest.approx(0.07 * 3.141592653589793 / 180)


def test_a_clean_sheet_imports_once_and_a_second_time_changes_nothing(
        tmp_path: Path, write_sheet: SheetWriter, lso: Person, owner: Person, room: Location) -> None:
    sheet = write_sheet(tmp_path / "clean", [HEADER, *messy_rows(fixed=True)[2:]])
    first = run(sheet, lso)
    assert (first.count("create"), first.problems) == (4, [])
    assert Laser.objects.count() == 4 and Emission.objects.count() == 5
    laser = Laser.objects.get(asset_tag="MSY-2")
    # Registered, then approved by the LSO the import acts as.
    assert [(entry.status, entry.history_user) for entry in laser.history.order_by("history_id")] == [
        ("pending_review", lso.user), ("active", lso.user)]
    assert laser.emissions.get(label="fundamental").hazard_results.count() == 2
    before, history = register_rows(), history_rows()

    again = run(sheet, lso)
    assert again.problems == []
    assert [outcome.action for outcome in again.lasers] == ["unchanged"] * 4
    assert register_rows() == before
    assert history_rows() == history


def test_a_dry_run_reports_what_would_change_and_writes_nothing(tmp_path: Path, lso: Person, owner: Person,
                                                                room: Location) -> None:
    sheet = write_csv(tmp_path / "register", [HEADER, row("DRY-1", "3B", "main", "cw", "532 nm", "50 mW"),
                                              row("DRY-2", "3B", "main", "cw", "405 nm", "20 mW")])
    run(sheet, lso)
    changed = write_csv(tmp_path / "changed", [
        HEADER, row("DRY-1", "3B", "main", "cw", "532 nm", "50 mW"), row("dry-2", "4", "main", "cw", "405 nm", "2 W"),
        row("DRY-3", "2", "main", "cw", "635 nm", "0.9 mW")])
    before, history = register_rows(), history_rows()

    report = run(changed, lso, dry_run=True)
    assert [(outcome.asset_tag, outcome.action) for outcome in report.lasers] == [
        ("DRY-1", "unchanged"), ("dry-2", "update"), ("DRY-3", "create")]
    assert report.lasers[1].changes == ["class: 3B -> 4", "emission 'main' average power: 20 mW -> 2 W"]
    assert report.written is False
    assert register_rows() == before
    assert history_rows() == history
    assert Laser.objects.get(asset_tag="DRY-2").labelled_class == "3B"


def test_a_change_to_the_laser_alone_is_an_update(tmp_path: Path, lso: Person, owner: Person,
                                                 room: Location) -> None:
    run(write_csv(tmp_path / "first", [HEADER, row("CLS-1", "4", "main", "cw", "532 nm", "50 mW")]), lso)
    report = run(write_csv(tmp_path / "second", [HEADER, row("CLS-1", "3B", "main", "cw", "532 nm", "50 mW")]), lso)
    assert [(outcome.action, outcome.changes) for outcome in report.lasers] == [("update", ["class: 4 -> 3B"])]
    assert Laser.objects.get(asset_tag="CLS-1").labelled_class == "3B"


def test_an_update_goes_through_the_services_as_the_lso(tmp_path: Path, lso: Person, owner: Person,
                                                        room: Location) -> None:
    run(write_csv(tmp_path / "first", [HEADER, row("UPD-1", "3B", "main", "cw", "532 nm", "50 mW")]), lso)
    emission = Emission.objects.get(laser__asset_tag="UPD-1")
    nohd_before = emission.hazard_results.get(limits="icnirp2013").nohd_m
    report = run(write_csv(tmp_path / "second", [HEADER, row("UPD-1", "4", "main", "cw", "532 nm", "500 mW")]), lso)
    assert [outcome.action for outcome in report.lasers] == ["update"]
    laser = Laser.objects.get(asset_tag="UPD-1")
    emission.refresh_from_db()
    assert (laser.labelled_class, emission.average_power_W) == ("4", 0.5)
    assert laser.history.first().history_user == lso.user
    assert emission.history.first().history_user == lso.user
    # The results follow the new power: ten times the power reaches further.
    assert emission.hazard_results.get(limits="icnirp2013").nohd_m > nohd_before


def test_a_unit_in_the_header_applies_to_the_bare_numbers_under_it(tmp_path: Path, write_sheet: SheetWriter,
                                                                   lso: Person, owner: Person, room: Location) -> None:
    header = [*HEADER[:12], "Wavelength [um]", "average_power (mW)", *HEADER[14:17], "beam diameter (mm)",
              "diameter at", "divergence (mrad)"]
    sheet = write_sheet(tmp_path / "units", [
        header, row("HU-1", "3B", "main", "cw", 0.532, 50, diameter=1.5, divergence=0.8),
        row("HU-2", "4", "main", "cw", "1064 nm", "2 W", diameter="2 mm", divergence=1)])
    report = run(sheet, lso)
    assert report.problems == []
    first, second = Emission.objects.get(laser__asset_tag="HU-1"), Emission.objects.get(laser__asset_tag="HU-2")
    assert (first.wavelength_m, first.average_power_W) == (pytest.approx(532e-9), pytest.approx(0.05))
    assert (first.beam_diameter_m, first.divergence_rad) == (pytest.approx(1.5e-3), pytest.approx(8e-4))
    # A cell's own unit wins over the header's.
    assert (second.wavelength_m, second.average_power_W) == (pytest.approx(1064e-9), pytest.approx(2.0))
    assert second.divergence_rad == pytest.approx(1e-3)


@pytest.mark.parametrize(("header", "column", "reason"), [
    ("longest wavelength (mW)", "longest wavelength (mW)", "the unit in the header: '1 mW' is not a length"),
    ("gain medium (kg)", "gain medium (kg)", "'gain medium' takes no unit"),
    ("purchase price", "purchase price", "unknown column; the columns are: asset tag, manufacturer"),
    ("Asset_Tag", "Asset_Tag", "a second 'asset tag' column (the first is 'asset tag')"),
])
def test_a_bad_header_is_refused_before_any_row(tmp_path: Path, lso: Person, header: str, column: str,
                                                reason: str) -> None:
    sheet = write_csv(tmp_path / "header", [[*HEADER, header], [*row("HD-1", "2", "main", "cw", "635 nm", "1 mW"),
                                                                 "x"]])
    report = run(sheet, lso)
    assert problems(report) == {(1, column)}
    assert reason in report.problems[0].reason
    assert not Laser.objects.exists()


def test_values_under_a_column_without_a_header_are_refused(tmp_path: Path, lso: Person) -> None:
    sheet = write_csv(tmp_path / "unnamed", [[*HEADER, ""], [*row("UN-1", "2", "main", "cw", "635 nm", "1 mW"),
                                                             "forgotten note"]])
    assert problems(run(sheet, lso)) == {(1, "column 21")}


@pytest.mark.parametrize(("changes", "column", "reason"), [
    # The engine's rules and bounds (hazards.assessment.inputs), as the API and the admin give them.
    ({"mode": "repetitive", "power": "", "energy": "1 mJ", "duration": "2 ms", "prf": "1 kHz"}, "pulse duration",
     "2 ms is not shorter than the pulse period 1 ms at 1 kHz"),
    ({"wavelength": "100 nm"}, "wavelength", "is out of range: allowed from 180 nm to 1 mm"),
    ({"wavelength": "532 mW"}, "wavelength", "'532 mW' is not a length"),
    ({"laser_class": "IIIb"}, "class", "Value 'IIIb' is not a valid choice."),
    ({"mode": "pulsed-ish"}, "mode", "Value 'pulsed-ish' is not a valid choice."),
    ({"owner": "nobody@lab.example"}, "owner", "no person in the register has the username or e-mail"),
    ({"room": "9.99"}, "room", "no location Kestrel Building 9.99 in the register"),
    ({"status": "returned"}, "status", "Review statuses are set by laser_submit, laser_approve and laser_return."),
])
def test_a_bad_row_gets_the_reason_the_services_give(tmp_path: Path, lso: Person, owner: Person, room: Location,
                                                     changes: dict[str, str], column: str, reason: str) -> None:
    values: dict[str, str] = {"tag": "BAD-1", "laser_class": "3B", "label": "main", "mode": "cw",
                              "wavelength": "532 nm", "power": "5 mW", **changes}
    sheet = write_csv(tmp_path / "bad", [HEADER, row("OK-1", "2", "main", "cw", "635 nm", "1 mW"), row(**values)])
    report = run(sheet, lso)
    assert [(problem.line, problem.column) for problem in report.problems] == [(3, column)]
    assert reason in report.problems[0].reason
    assert not Laser.objects.exists()


def test_rows_of_one_laser_need_distinct_emission_names(tmp_path: Path, lso: Person, owner: Person,
                                                        room: Location) -> None:
    sheet = write_csv(tmp_path / "twice", [HEADER, row("TW-1", "4", "line", "cw", "488 nm", "1 W"),
                                           row("tw-1 ", "4", "Line", "cw", "514.5 nm", "1 W")])
    report = run(sheet, lso)
    assert problems(report) == {(3, "emission")}
    assert "TW-1 already has emission 'Line' on line 2" in report.problems[0].reason
    assert not Laser.objects.exists()


def test_owners_are_found_by_username_or_e_mail(tmp_path: Path, lso: Person, owner: Person, room: Location) -> None:
    sheet = write_csv(tmp_path / "owners", [HEADER, row("OW-1", "3B", "main", "cw", "532 nm", "5 mW", owner="r.vale"),
                                            row("OW-2", "3B", "main", "cw", "532 nm", "5 mW",
                                                owner="r.vale@LAB.example")])
    assert run(sheet, lso).problems == []
    assert set(Laser.objects.values_list("owner", flat=True)) == {owner.pk}


def test_unknown_rooms_are_reported_or_created_on_request(tmp_path: Path, lso: Person, owner: Person,
                                                          room: Location) -> None:
    sheet = write_csv(tmp_path / "rooms", [HEADER, row("RM-1", "3B", "main", "cw", "532 nm", "5 mW", room="4.01"),
                                           row("RM-2", "3B", "main", "cw", "532 nm", "5 mW", room="4.01 ")])
    refused = run(sheet, lso)
    assert problems(refused) == {(2, "room"), (3, "room")}
    assert Location.objects.count() == 1

    created = run(sheet, lso, create_locations=True)
    assert created.problems == []
    assert created.locations_created == ["Kestrel Building 4.01"]
    new_room = Location.objects.get(room="4.01")
    # The register's only site; a code made from the building and room.
    assert (new_room.site, new_room.code) == ("North campus", "kestrel-building-401")
    assert new_room.history.get().history_user == lso.user
    assert set(Laser.objects.values_list("location", flat=True)) == {new_room.pk}


def test_an_unknown_owner_and_an_unknown_room_on_one_row_are_both_reported(tmp_path: Path, lso: Person,
                                                                         room: Location) -> None:
    sheet = write_csv(tmp_path / "both", [HEADER, row("UB-1", "3B", "main", "cw", "532 nm", "5 mW", room="9.99",
                                                      owner="ghost")])
    assert problems(run(sheet, lso)) == {(2, "owner"), (2, "room")}


def test_a_room_on_several_sites_needs_the_site_column(tmp_path: Path, lso: Person, owner: Person,
                                                       room: Location) -> None:
    factories.LocationFactory.create(site="South campus", building="Kestrel Building", room="0.12")
    rows = [HEADER, row("ST-1", "3B", "main", "cw", "532 nm", "5 mW")]
    assert problems(run(write_csv(tmp_path / "nosite", rows), lso)) == {(2, "room")}
    with_site = [[*rows[0], "site"], [*rows[1], "north CAMPUS"]]
    assert run(write_csv(tmp_path / "site", with_site), lso).problems == []
    assert Laser.objects.get().location == room


def test_the_sheets_status_is_reached_through_the_workflow(tmp_path: Path, lso: Person, owner: Person,
                                                           room: Location) -> None:
    sheet = write_csv(tmp_path / "statuses", [
        HEADER, row("WF-1", "3B", "main", "cw", "532 nm", "5 mW", status="in storage"),
        row("WF-2", "3B", "main", "cw", "532 nm", "5 mW", status=""),
        row("WF-3", "2", "main", "cw", "635 nm", "1 mW", status="Disposed")])
    assert run(sheet, lso).problems == []
    statuses = dict(Laser.objects.values_list("asset_tag", "status"))
    assert statuses == {"WF-1": "in_storage", "WF-2": "pending_review", "WF-3": "disposed"}
    stored = Laser.objects.get(asset_tag="WF-1")
    assert [entry.status for entry in stored.history.order_by("history_id")] == [
        "pending_review", "active", "in_storage"]
    assert stored.status_note == "Status from the spreadsheet import of statuses.csv."


def test_a_retired_laser_in_the_register_is_not_changed(tmp_path: Path, lso: Person, owner: Person,
                                                        room: Location) -> None:
    run(write_csv(tmp_path / "first", [HEADER, row("RT-1", "2", "main", "cw", "635 nm", "1 mW")]), lso)
    laser_retire(laser=Laser.objects.get(), by=lso, status="disposed", reason="Broken beyond repair.")
    history = history_rows()
    report = run(write_csv(tmp_path / "again", [HEADER, row("RT-1", "2", "main", "cw", "635 nm", "2 mW",
                                                            status="disposed")]), lso)
    # The whole row is refused: its emission belongs to a laser that is read-only now.
    assert problems(report) == {(2, "")}
    assert "RT-1 is disposed: a disposed or transferred laser and its emissions" in report.problems[0].reason
    assert Emission.objects.get().average_power_W == pytest.approx(1e-3)
    assert history_rows() == history


@pytest.mark.parametrize("role", ["researcher", "user", "inspector"])
def test_only_an_lso_imports(tmp_path: Path, owner: Person, room: Location, role: str) -> None:
    # The researcher persona owns the laser the sheet is about; the others have no stake in it.
    person = owner if role == "researcher" else factories.PersonFactory.create(role=role)
    sheet = write_csv(tmp_path / "sheet", [HEADER, row("PM-1", "3B", "main", "cw", "532 nm", "5 mW")])
    with pytest.raises(PermissionDenied, match="Only a laser safety officer may import lasers"):
        run(sheet, person)
    assert not Laser.objects.exists()


@pytest.mark.parametrize(("name", "content", "message"), [
    ("register.ods", b"", "expected a .csv or .xlsx file, not .ods"),
    ("register.csv", "asset tag\nCAF\xc9-1\n".encode("latin-1"), "is not UTF-8 text"),
    ("register.xlsx", b"not a zip file", "cannot be read as an XLSX workbook"),
    ("register.csv", b"\n \n", "is empty"),
])
def test_an_unreadable_file_is_refused_with_the_reason(name: str, content: bytes, message: str) -> None:
    from io import BytesIO

    with pytest.raises(TableError, match=message):
        laser_table_read(BytesIO(content), name=name)


def test_a_semicolon_separated_sheet_with_a_byte_order_mark_is_read() -> None:
    from io import BytesIO

    table = laser_table_read(BytesIO("\ufeffAsset tag;Class\r\nSC-1;3B\r\n".encode()), name="excel.csv")
    assert (table.header, table.rows) == (["Asset tag", "Class"], [(2, ["SC-1", "3B"])])


class TestCommand:
    def test_it_prints_each_change_and_a_summary(self, tmp_path: Path, lso: Person, owner: Person,
                                                 room: Location) -> None:
        sheet = write_csv(tmp_path / "register", [HEADER, row("CM-1", "3B", "main", "cw", "532 nm", "5 mW")])
        out = StringIO()
        call_command("import_lasers", str(sheet), "--dry-run", stdout=out)
        assert out.getvalue().splitlines() == [
            "  create  CM-1  (line 2)",
            "Dry run of register.csv, nothing written. Lasers: 1 to create, 0 to update, 0 unchanged. "
            "Locations to create: 0."]
        assert not Laser.objects.exists()
        out = StringIO()
        call_command("import_lasers", str(sheet), stdout=out)
        assert out.getvalue().splitlines()[-1] == ("register.csv: lasers created 1, updated 0, unchanged 0; "
                                                   "locations created 0.")
        assert Laser.objects.get().history.first().history_user == lso.user

    def test_bad_rows_go_to_stderr_and_the_command_fails(self, tmp_path: Path, lso: Person, owner: Person,
                                                         room: Location) -> None:
        sheet = write_xlsx(tmp_path / "messy", messy_rows(fixed=False))
        err = StringIO()
        with pytest.raises(CommandError, match="2 problems on 2 lines of messy.xlsx; nothing was written."):
            call_command("import_lasers", str(sheet), stdout=StringIO(), stderr=err)
        lines = err.getvalue().splitlines()
        assert [line.split(":")[0] for line in lines] == ["line 6, Class", "line 8, Average Power"]
        assert not Laser.objects.exists()

    def test_it_acts_as_the_named_lso_and_needs_a_name_when_there_are_several(
            self, tmp_path: Path, lso: Person, owner: Person, room: Location) -> None:
        second = factories.PersonFactory.create(role="lso", research_group=None, user__username="deputy")
        sheet = write_csv(tmp_path / "register", [HEADER, row("AS-1", "3B", "main", "cw", "532 nm", "5 mW")])
        with pytest.raises(CommandError, match=r"2 laser safety officers \(deputy, officer\); name the one"):
            call_command("import_lasers", str(sheet), stdout=StringIO())
        with pytest.raises(CommandError, match="--as ghost: no person in the register has that username"):
            call_command("import_lasers", str(sheet), "--as", "ghost", stdout=StringIO())
        with pytest.raises(CommandError, match="Only a laser safety officer may import lasers"):
            call_command("import_lasers", str(sheet), "--as", "r.vale", stdout=StringIO())
        call_command("import_lasers", str(sheet), "--as", "deputy", stdout=StringIO())
        assert Laser.objects.get().history.first().history_user == second.user

    def test_a_missing_file_is_a_command_error(self, tmp_path: Path, lso: Person) -> None:
        with pytest.raises(CommandError, match="cannot read .*missing.csv: No such file or directory"):
            call_command("import_lasers", str(tmp_path / "missing.csv"), stdout=StringIO())
