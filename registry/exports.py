"""The register as a table: one row per emission, for CSV now and spreadsheets later.

The first columns are those of the spreadsheet import (issue 12), with values written as a
person types them back ("532 nm", "5 mW"), so that an export can be imported again; the
hazard columns that follow are figures under one limit set, for people to read, with the
caution on every row (a row travels alone once copied out of the file).
"""
from __future__ import annotations

from collections.abc import Iterable

import tablib

from hazards.caution import CAUTION
from hazards.units import format_for_input
from registry.models import Emission, Laser
from registry.selectors import result_under
from registry.templatetags.hazard_figures import NOT_COMPUTED, distance, duration, en207_marking, optical_density

IMPORT_HEADERS = ("asset tag", "manufacturer", "model", "serial number", "laser type", "class", "status",
                  "building", "room", "owner", "emission", "mode", "wavelength", "average power", "pulse energy",
                  "pulse duration", "prf", "beam diameter", "diameter at", "divergence")
HAZARD_HEADERS = ("nohd", "required od", "en 207 marking", "eye exposure duration", "limit set", "caution")

# Units each emission column is written in: wavelengths in nm and angles in mrad as the forms show them.
_QUANTITIES = (("wavelength_m", "m", "nm"), ("average_power_W", "W", None), ("pulse_energy_J", "J", None),
               ("pulse_duration_s", "s", None), ("prf_Hz", "Hz", None), ("beam_diameter_m", "m", None))


def register_dataset(lasers: Iterable[Laser], *, limits: str) -> tablib.Dataset:
    """One row per emission (one row with empty emission columns for a laser without any).

    ``lasers`` come from selectors.laser_list() (emissions and results prefetched).
    """
    dataset = tablib.Dataset(headers=[*IMPORT_HEADERS, *HAZARD_HEADERS])
    for laser in lasers:
        identity = [laser.asset_tag, laser.manufacturer, laser.model_name, laser.serial_number, laser.laser_type,
                    laser.labelled_class, laser.status,
                    laser.location.building if laser.location else "", laser.location.room if laser.location else "",
                    laser.owner.user.get_username() if laser.owner else ""]
        if not laser.current_emissions:
            dataset.append([*identity, *[""] * (len(IMPORT_HEADERS) - len(identity)), *_no_figures(limits)])
        for emission in laser.current_emissions:
            dataset.append([*identity, *_emission_cells(emission), *_hazard_cells(emission, limits)])
    return dataset


def _text(value: float | None, unit: str, display_unit: str | None = None) -> str:
    return "" if value is None else format_for_input(value, unit, display_unit=display_unit)


def _emission_cells(emission: Emission) -> list[str]:
    wavelength = _text(emission.wavelength_m, "m", "nm")
    if emission.wavelength_max_m is not None:
        # A tunable range: both ends in the one column, as "700 nm to 1000 nm".
        wavelength += f" to {_text(emission.wavelength_max_m, 'm', 'nm')}"
    values = [_text(getattr(emission, name), unit, shown) for name, unit, shown in _QUANTITIES[1:]]
    return [emission.label, emission.temporal_mode, wavelength, *values, emission.diameter_definition,
            _text(emission.divergence_rad, "rad", "mrad")]


def _no_figures(limits: str) -> list[str]:
    return [NOT_COMPUTED] * (len(HAZARD_HEADERS) - 2) + [limits, CAUTION]


def _hazard_cells(emission: Emission, limits: str) -> list[str]:
    result = result_under(emission, limits)
    if result is None:
        return _no_figures(limits)
    return [distance(result.nohd_m, result.nohd_unbounded), optical_density(result.od_required),
            en207_marking(result.en207_marking), duration(result.exposure_s), limits, CAUTION]
