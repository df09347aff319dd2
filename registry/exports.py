"""The register as a table: one row per emission, as CSV and as an XLSX workbook.

The first columns are the spreadsheet import's own (``laser_import.COLUMNS``, in its order), with
values written as a person types them back ("532 nm", "5 mW"), so that an export imports again
and changes nothing. The figure columns that follow (``laser_import.FIGURE_COLUMNS``, which the
import skips) are hazard figures under one limit set, for people to read, with the caution on
every row (a row travels alone once copied out of the file).
"""
from __future__ import annotations

import io
from collections.abc import Callable, Iterable

import tablib
from openpyxl import Workbook
from openpyxl.cell.cell import TYPE_STRING
from openpyxl.styles import Font

from hazards.caution import CAUTION
from hazards.units import format_for_input
from registry.models import Emission, Laser
from registry.selectors import result_under
from registry.services.laser_import import COLUMNS, FIGURE_COLUMNS
from registry.templatetags.hazard_figures import NOT_COMPUTED, distance, duration, en207_marking, optical_density

IMPORT_HEADERS = tuple(column.name for column in COLUMNS)
HAZARD_HEADERS = FIGURE_COLUMNS

XLSX_CONTENT_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"

# Units quantities are written in where the metric prefix would not be the one people use:
# wavelengths in nm and angles in mrad, as the forms show them.
_DISPLAY_UNITS = {"wavelength_m": "nm", "wavelength_max_m": "nm", "divergence_rad": "mrad"}


def _location_part(name: str) -> Callable[[Laser], str]:
    return lambda laser: getattr(laser.location, name) if laser.location else ""


_LASER_CELLS: dict[str, Callable[[Laser], str]] = {
    "owner": lambda laser: laser.owner.user.get_username() if laser.owner else "",
    "site": _location_part("site"),
    "building": _location_part("building"),
    "room": _location_part("room"),
}


def _laser_cell(laser: Laser, field: str) -> str:
    cell = _LASER_CELLS.get(field)
    return cell(laser) if cell is not None else str(getattr(laser, field))


def _emission_cell(emission: Emission, field: str, unit: str | None) -> str:
    value = getattr(emission, field)
    if unit is None:
        return str(value)
    return "" if value is None else format_for_input(value, unit, display_unit=_DISPLAY_UNITS.get(field))


def register_dataset(lasers: Iterable[Laser], *, limits: str) -> tablib.Dataset:
    """One row per emission (one row with empty emission columns for a laser without any).

    ``lasers`` come from selectors.laser_list() (emissions and results prefetched).
    """
    dataset = tablib.Dataset(headers=[*IMPORT_HEADERS, *HAZARD_HEADERS], title="Laser register")
    for laser in lasers:
        emissions: list[Emission | None] = list(laser.current_emissions) or [None]
        for emission in emissions:
            cells = [_laser_cell(laser, column.field) if column.part != "emission"
                     else "" if emission is None else _emission_cell(emission, column.field, column.unit)
                     for column in COLUMNS]
            dataset.append([*cells, *_hazard_cells(emission, limits)])
    return dataset


def register_xlsx(dataset: tablib.Dataset) -> bytes:
    """The dataset as an XLSX workbook: one sheet, the header row bold and frozen, every cell text.

    Written with openpyxl rather than tablib's exporter so that every cell is a string cell: a
    value typed as "=..." (a model name, say) stays text instead of becoming a formula, and
    reads back as typed.
    """
    workbook = Workbook()
    sheet = workbook.active
    assert sheet is not None
    sheet.title = dataset.title or "Laser register"
    sheet.append(list(dataset.headers))
    for cell in sheet[1]:
        cell.font = Font(bold=True)
    for row in dataset:
        sheet.append(list(row))
    for row in sheet.iter_rows(min_row=2):
        for cell in row:
            cell.data_type = TYPE_STRING
    sheet.freeze_panes = "A2"
    workbook.properties.title = dataset.title
    workbook.properties.description = CAUTION
    stream = io.BytesIO()
    workbook.save(stream)
    return stream.getvalue()


def _no_figures(limits: str) -> list[str]:
    return [NOT_COMPUTED] * (len(HAZARD_HEADERS) - 2) + [limits, CAUTION]


def _hazard_cells(emission: Emission | None, limits: str) -> list[str]:
    result = None if emission is None else result_under(emission, limits)
    if result is None:
        return _no_figures(limits)
    return [distance(result.nohd_m, result.nohd_unbounded), optical_density(result.od_required),
            en207_marking(result.en207_marking), duration(result.exposure_s), limits, CAUTION]
