"""``python -m hazards limit``: the exposure limit (MPE) for one point, a pulse train or a CSV file."""
from __future__ import annotations

import argparse
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from hazards.caution import CAUTION
from hazards.cli.batch_file import batch_rows
from hazards.errors import InputError
from hazards.limits import (
    DEFAULT_LIMITS,
    LIMIT_SETS,
    ExposureLimit,
    PulseTrainLimit,
    default_exposure_duration,
    exposure_duration_basis,
    exposure_limit,
    pulse_train_limit,
)
from hazards.limits.exposure import LimitRecord, check_limits_and_tissue
from hazards.limits.limit_set import TISSUES, load_limit_set
from hazards.limits.pulses import TrainRecord, check_train
from hazards.units import format_si, parse_quantity

BATCH_COLUMNS = ("wavelength_m", "duration_s", "source_size_rad", "tissue")
BATCH_PULSE_COLUMNS = ("pulse_duration_s", "prf_Hz")


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    parser = subparsers.add_parser(
        "limit",
        help="exposure limit (MPE) for the eye or the skin",
        description="Exposure limit (MPE) for the eye or the skin, with the working and its sources. "
        + CAUTION,
    )
    parser.add_argument("--wavelength", help='wavelength, e.g. "1064nm" or "1.064 um" (bare numbers in m)')
    parser.add_argument("--duration", help='exposure duration, e.g. "10s" or "0.25 s"; default: common practice '
                        "for the wavelength (0.25 s visible, 10 s infrared, 30000 s ultraviolet)")
    parser.add_argument("--deliberate", action="store_true",
                        help="default to 30000 s of deliberate long viewing when --duration is not given")
    # No argparse choices: a wrong value gets the engine's one-line error naming the field.
    parser.add_argument("--tissue", default="eye", help=f"{' or '.join(TISSUES)} (default eye)")
    parser.add_argument("--source-size", default="0", help='apparent source size alpha, e.g. "1.5mrad" '
                        "(default 0, a point source; bare numbers in rad)")
    parser.add_argument("--pulse-duration", help='pulse duration of a repetitively pulsed beam, e.g. "10ns"')
    parser.add_argument("--prf", help='pulse repetition frequency, e.g. "10Hz" (needs --pulse-duration)')
    parser.add_argument("--limits", default=DEFAULT_LIMITS,
                        help=f"limit set: {', '.join(LIMIT_SETS)} (default {DEFAULT_LIMITS})")
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    parser.add_argument("--batch", metavar="FILE.csv",
                        help="CSV with columns " + ", ".join(BATCH_COLUMNS) + " and optionally "
                        + ", ".join(BATCH_PULSE_COLUMNS) + "; prints one JSON object per line, in order")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    limit_set = check_limits_and_tissue(args.limits, args.tissue)
    if args.batch is not None:
        if args.wavelength is not None:
            raise InputError("batch", "give either --batch or --wavelength, not both")
        for record in evaluate_batch(Path(args.batch), limits=args.limits):
            print(json.dumps(record))
        return 0
    if args.wavelength is None:
        raise InputError("wavelength", "required (for example --wavelength 532nm), or use --batch FILE.csv")
    if (args.pulse_duration is None) != (args.prf is None):
        missing = "prf" if args.prf is None else "pulse_duration"
        raise InputError(missing, "--pulse-duration and --prf go together; give both for a pulse train")
    wavelength = parse_quantity(args.wavelength, field="wavelength", unit="m",
                                minimum=limit_set.wavelength_range_m[0], maximum=limit_set.wavelength_range_m[1])
    if args.duration is None:
        duration: object = default_exposure_duration(wavelength, deliberate=args.deliberate)
        basis = exposure_duration_basis(wavelength, deliberate=args.deliberate)
    else:
        duration, basis = args.duration, "as given"
    result: ExposureLimit | PulseTrainLimit
    if args.pulse_duration is not None:
        result = pulse_train_limit(wavelength, duration, args.pulse_duration, args.prf, tissue=args.tissue,
                                   source_size_rad=args.source_size, limits=args.limits, duration_basis=basis)
    else:
        result = exposure_limit(wavelength, duration, tissue=args.tissue, source_size_rad=args.source_size,
                                limits=args.limits, duration_basis=basis)
    point: Mapping[str, Any] = result.to_dict()
    print(json.dumps(point, indent=2) if args.json else as_text(point))
    return 0


def as_text(record: Mapping[str, Any]) -> str:
    limit_set = load_limit_set(record["limits"])
    alpha = record["source_size_rad"]
    lines = [
        f"Exposure limit (MPE), {record['tissue']}, {limit_set.title}",
        f"  wavelength {format_si(record['wavelength_m'], 'm')}, exposure duration "
        f"{format_si(record['duration_s'], 's')} ({record['duration_basis']}), apparent source size "
        + (f"{alpha * 1e3:.4g} mrad" if alpha else "0 (point source)"),
    ]
    if "per_pulse_J_m2" in record:
        lines += [
            f"  pulse train: {format_si(record['pulse_duration_s'], 's')} pulses at "
            f"{format_si(record['prf_Hz'], 'Hz')}, N = {record['pulses_N']:.0f} pulses in the exposure",
            f"  per pulse: H = {record['per_pulse_J_m2']:.4g} J/m^2, governed by the {record['governing']} rule",
        ]
        for rule, value in record["candidates"].items():
            lines.append(f"    {rule}: " + (f"{value:.4g} J/m^2" if value is not None else "not applicable"))
        lines.append(f"  whole train: H = {record['radiant_exposure_J_m2']:.4g} J/m^2, "
                     f"E = {record['irradiance_W_m2']:.4g} W/m^2 averaged over the exposure")
        lines.append(f"  source: {record['citations'][record['governing']]}")
    else:
        lines += [
            f"  H = {record['radiant_exposure_J_m2']:.4g} J/m^2 over the exposure duration "
            f"(E = {record['irradiance_W_m2']:.4g} W/m^2)",
            f"  basis: the {record['governing']} limit, row {record['governing_row']}",
            f"  source: {record['citation']}",
        ]
        if len(record["candidate_rows"]) > 1:
            lines.append("  limits that apply here, each averaged over its own aperture (the lower governs as a "
                         "lookup; against a beam, the higher exposure / limit ratio):")
            lines += [f"    {candidate['mechanism']}, {candidate['citation']}: "
                      f"H = {candidate['radiant_exposure_J_m2']:.4g} J/m^2 over {candidate['aperture_m'] * 1e3:.4g} mm"
                      for candidate in record["candidate_rows"]]
        if record["field_of_view_rad"] is not None:
            lines.append(f"  measured within a field of view of {record['field_of_view_rad'] * 1e3:.4g} mrad")
    lines.append(f"  averaged over a limiting aperture of {record['aperture_m'] * 1e3:.4g} mm diameter")
    for option in record.get("options", []):
        lines.append(f"    {option['rule']}: {option['per_pulse_J_m2']:.4g} J/m^2 over {option['aperture_m'] * 1e3:.4g} mm")
    lines += [f"Warning: {warning}" for warning in record["warnings"]]
    if record["notes"]:
        lines.append("Notes:")
        lines += [f"  - {note}" for note in record["notes"]]
    lines.append("Working:")
    lines += [f"  {number}. {_step_text(step)}" for number, step in enumerate(record["working"], 1)]
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines)


def _step_text(step: dict[str, Any]) -> str:
    value = step["value"]
    shown = "" if value is None else f" -> {value:.4g}" if isinstance(value, float) else f" -> {value}"
    unit = f" {step['unit']}" if step["unit"] and value is not None else ""
    inputs = ", ".join(f"{name} = {amount:.4g}" if isinstance(amount, float) else f"{name} = {amount}"
                       for name, amount in step["inputs"].items())
    return (f"{step['what']}: {step['formula']}" + (f" with {inputs}" if inputs else "") + shown + unit
            + (f"  [{step['source']}]" if step["source"] else ""))


@dataclass
class _BatchColumns:
    wavelength: list[float]
    duration: list[float]
    source_size: list[float]
    tissue: list[str]
    pulse_duration: list[float]
    prf: list[float]


def read_batch(path: Path, *, limits: str) -> _BatchColumns:
    """Read and check the CSV; an error names the line (as a spreadsheet numbers it) and the column."""
    limit_set = load_limit_set(limits)
    with batch_rows(path) as reader:
        header = reader.fieldnames or []
        missing = [column for column in BATCH_COLUMNS if column not in header]
        if missing:
            raise InputError("batch", f"{path.name} line 1: missing column(s) {', '.join(missing)} "
                             f"(expected {', '.join(BATCH_COLUMNS)}, optionally {', '.join(BATCH_PULSE_COLUMNS)})")
        columns = _BatchColumns([], [], [], [], [], [])
        ranges = {
            "wavelength_m": ("m", *limit_set.wavelength_range_m),
            # Durations below the tables' first column are assessed at it, with a warning, as everywhere.
            "duration_s": ("s", 0.0, limit_set.duration_range_s[1]),
            "source_size_rad": ("rad", 0.0, math.pi),
            "pulse_duration_s": ("s", 0.0, limit_set.duration_range_s[1]),
            "prf_Hz": ("Hz", 0.0, 1e15),
        }

        def number(row: dict[str, str | None], column: str, line: int) -> float:
            unit, low, high = ranges[column]
            return parse_quantity((row.get(column) or "").strip(), field=f"{path.name} line {line}, column {column}",
                                  unit=unit, minimum=low, maximum=high,
                                  inclusive_minimum=column not in ("prf_Hz", "duration_s", "pulse_duration_s"))

        for line, row in enumerate(reader, start=2):
            columns.wavelength.append(number(row, "wavelength_m", line))
            columns.duration.append(number(row, "duration_s", line))
            columns.source_size.append(number(row, "source_size_rad", line))
            tissue = (row.get("tissue") or "").strip()
            if tissue not in TISSUES:
                raise InputError(f"{path.name} line {line}, column tissue",
                                 f"{tissue!r} is not a tissue: allowed {', '.join(TISSUES)}")
            columns.tissue.append(tissue)
            given = [bool((row.get(column) or "").strip()) for column in BATCH_PULSE_COLUMNS]
            if given[0] != given[1]:
                absent = BATCH_PULSE_COLUMNS[given.index(False)]
                raise InputError(f"{path.name} line {line}, column {absent}",
                                 "pulse_duration_s and prf_Hz go together; fill both or neither")
            if given[0]:
                try:
                    check_train(number(row, "pulse_duration_s", line), number(row, "prf_Hz", line),
                                columns.duration[-1])
                except InputError as error:
                    raise InputError(f"{path.name} line {line}, column pulse_duration_s", error.message) from None
            columns.pulse_duration.append(number(row, "pulse_duration_s", line) if given[0] else math.nan)
            columns.prf.append(number(row, "prf_Hz", line) if given[1] else math.nan)
    return columns


def evaluate_batch(path: Path, *, limits: str) -> list[LimitRecord | TrainRecord]:
    """Evaluate every CSV row, vectorised per (tissue, pulsed or not), and return them in file order."""
    columns = read_batch(path, limits=limits)
    wavelength = np.array(columns.wavelength)
    duration = np.array(columns.duration)
    source_size = np.array(columns.source_size)
    tissue = np.array(columns.tissue)
    pulse_duration = np.array(columns.pulse_duration)
    prf = np.array(columns.prf)
    pulsed = ~np.isnan(prf)
    records: list[LimitRecord | TrainRecord | None] = [None for _ in columns.wavelength]
    for tissue_name in TISSUES:
        for is_pulsed in (False, True):
            chosen = np.flatnonzero((tissue == tissue_name) & (pulsed == is_pulsed))
            if chosen.size == 0:
                continue
            if is_pulsed:
                train = pulse_train_limit(wavelength[chosen], duration[chosen], pulse_duration[chosen], prf[chosen],
                                          tissue=tissue_name, source_size_rad=source_size[chosen], limits=limits)
                for position, index in enumerate(chosen.tolist()):
                    records[index] = train.record(position)
            else:
                result = exposure_limit(wavelength[chosen], duration[chosen], tissue=tissue_name,
                                        source_size_rad=source_size[chosen], limits=limits)
                for index, record in zip(chosen.tolist(), result.records()):
                    records[index] = record
    return [record for record in records if record is not None]
