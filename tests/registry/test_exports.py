"""The register's exports (registry/exports.py): CSV and XLSX with the same columns and rows, the caution
on every row, and an export that the spreadsheet import reads back without changing anything.

The round trip runs on the demo campus: tunable ranges, fibre ends a few micrometres wide, an
embedded class, a disposed laser without a room, every status.
"""
from __future__ import annotations

import csv
import io

import pytest
from django.apps import apps
from django.test import Client, TestCase
from openpyxl import load_workbook

from hazards.caution import CAUTION
from registry.exports import HAZARD_HEADERS, IMPORT_HEADERS, XLSX_CONTENT_TYPE
from registry.models import Emission, Laser, Person
from registry.services.campus import campus_load, campus_read
from registry.services.laser_import import COLUMNS, laser_import, laser_table_read
from tests.registry.api_world import World, build_world


def _client(person: Person) -> Client:
    client = Client()
    client.force_login(person.user)
    return client


def _csv_rows(content: bytes) -> list[list[str]]:
    return list(csv.reader(io.StringIO(content.decode())))


def _xlsx_rows(content: bytes) -> list[list[str]]:
    sheet = load_workbook(io.BytesIO(content)).worksheets[0]
    return [["" if cell is None else str(cell) for cell in row] for row in sheet.iter_rows(values_only=True)]


class XlsxExportTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_the_xlsx_holds_the_csv_s_columns_and_rows_with_the_caution_on_every_row(self) -> None:
        client = _client(self.world.lso)
        response = client.get("/lasers/export.xlsx?labelled_class=4&status=active")
        self.assertEqual(response["Content-Type"], XLSX_CONTENT_TYPE)
        self.assertEqual(response["Content-Disposition"], 'attachment; filename="laser-register.xlsx"')
        rows = _xlsx_rows(response.content)
        self.assertEqual(tuple(rows[0]), IMPORT_HEADERS + HAZARD_HEADERS)
        self.assertEqual(rows, _csv_rows(client.get("/lasers/export.csv?labelled_class=4&status=active").content))
        records = [dict(zip(rows[0], row)) for row in rows[1:]]
        self.assertEqual([record["asset tag"] for record in records], ["TST-0001", "TST-0004", "TST-0005"])
        self.assertEqual({record["caution"] for record in records}, {CAUTION})
        first = records[0]
        self.assertEqual((first["wavelength"], first["average power"], first["divergence"], first["owner"]),
                         ("532 nm", "2 W", "1 mrad", "rhea"))
        workbook = load_workbook(io.BytesIO(response.content))
        self.assertEqual(workbook.worksheets[0].title, "Laser register")
        self.assertEqual(workbook.properties.description, CAUTION)
        self.assertEqual(workbook.worksheets[0].freeze_panes, "A2")

    def test_a_value_typed_like_a_formula_stays_text(self) -> None:
        Laser.objects.filter(pk=self.world.laser.pk).update(model_name="=HYPERLINK(\"http://x.example\")")
        content = _client(self.world.lso).get("/lasers/export.xlsx").content
        sheet = load_workbook(io.BytesIO(content)).worksheets[0]
        model_column = IMPORT_HEADERS.index("model") + 1
        cells = [sheet.cell(row=number, column=model_column) for number in range(2, sheet.max_row + 1)]
        typed = [cell for cell in cells if str(cell.value).startswith("=")]
        self.assertEqual([(cell.value, cell.data_type) for cell in typed], [("=HYPERLINK(\"http://x.example\")", "s")])

    def test_a_laser_user_s_xlsx_holds_only_the_lasers_they_may_see(self) -> None:
        rows = _xlsx_rows(_client(self.world.user).get("/lasers/export.xlsx").content)
        self.assertEqual({row[0] for row in rows[1:]}, {"TST-0005"})


def _register_state() -> dict[str, int]:
    return {model._meta.label: model._default_manager.count() for model in apps.get_app_config("registry").get_models()}


@pytest.fixture
def campus() -> Person:
    campus_load(data=campus_read())
    return Person.objects.get(user__username="lso")


@pytest.mark.django_db
@pytest.mark.parametrize("suffix", ["csv", "xlsx"])
def test_an_export_of_the_demo_campus_imports_back_and_changes_nothing(campus: Person, suffix: str) -> None:
    content = _client(campus).get(f"/lasers/export.{suffix}").content
    table = laser_table_read(io.BytesIO(content), name=f"laser-register.{suffix}")
    assert table.header == [*IMPORT_HEADERS, *HAZARD_HEADERS]
    assert len(table.rows) == Emission.objects.count() + Laser.objects.filter(emissions__isnull=True).count()
    before = _register_state()

    report = laser_import(table=table, by=campus)
    assert report.problems == []
    assert [outcome.asset_tag for outcome in report.lasers] == list(
        Laser.objects.order_by("asset_tag").values_list("asset_tag", flat=True))
    assert {outcome.action for outcome in report.lasers} == {"unchanged"}
    assert report.written is True
    # No record saved, so no history row either.
    assert _register_state() == before


@pytest.mark.django_db
def test_what_the_export_writes_is_what_the_import_reads(campus: Person) -> None:
    """Each exported column is read back into its own field: a change to one cell is that one change."""
    rows = _csv_rows(_client(campus).get("/lasers/export.csv").content)
    header = rows[0]
    assert [column.name for column in COLUMNS] == header[:len(COLUMNS)]
    tunable = next(row for row in rows[1:] if row[header.index("asset tag")] == "FV-0024")
    assert (tunable[header.index("wavelength")], tunable[header.index("longest wavelength")]) == ("690 nm", "1040 nm")
    cutter = next(row for row in rows[1:] if row[header.index("asset tag")] == "FV-0015")
    assert (cutter[header.index("class")], cutter[header.index("embedded class")]) == ("1", "4")
    tunable[header.index("longest wavelength")] = "1080 nm"
    tunable[header.index("nohd")] = "edited by hand, skipped on import"
    buffer = io.StringIO()
    csv.writer(buffer).writerows(rows)

    report = laser_import(table=laser_table_read(io.BytesIO(buffer.getvalue().encode()), name="edited.csv"), by=campus)
    assert report.problems == []
    changed = [(outcome.asset_tag, outcome.changes) for outcome in report.lasers if outcome.action != "unchanged"]
    assert changed == [("FV-0024", ["emission 'tunable output' longest wavelength: 1.04 µm -> 1.08 µm"])]
    assert Emission.objects.get(laser__asset_tag="FV-0024").wavelength_max_m == pytest.approx(1080e-9)
