"""``python -m hazards assess``: every hazard figure for one emission, or for a CSV file of them."""
from __future__ import annotations

import argparse
import json
from collections.abc import Iterator
from pathlib import Path

from hazards.assessment import (
    Assessment,
    Beam,
    Scenario,
    assess,
    assess_many,
    parse_assessment_request,
)
from hazards.beam import DIAMETER_DEFINITIONS
from hazards.caution import CAUTION
from hazards.cli.batch_file import batch_rows
from hazards.classes import LASER_CLASSES
from hazards.errors import InputError
from hazards.limits import DEFAULT_LIMITS, LIMIT_SETS
from hazards.units import format_si

# (option, help); every value goes through parse_assessment_request, which names the key on error.
_VALUE_OPTIONS: tuple[tuple[str, str], ...] = (
    ("wavelength", "wavelength, e.g. 532nm or 1.064um (required)"),
    ("power", "average power, e.g. 5W or 20 mW (may be left out for a pulse train with --pulse-energy and --prf)"),
    ("beam-diameter", "beam diameter at the exit, e.g. 2mm (required)"),
    ("divergence", "full-angle divergence, e.g. 1mrad (required; 0 for a collimated beam)"),
    ("pulse-energy", "energy per pulse, e.g. 10mJ"),
    ("pulse-duration", "pulse duration, e.g. 10ns (below the tables' 100 fs: assessed at 100 fs, with a warning)"),
    ("prf", "pulse repetition frequency, e.g. 10Hz (leave out for a single pulse)"),
    ("exposure", "exposure duration, e.g. 0.25s (default: common practice for the wavelength)"),
    ("source-size", "apparent source size (angle), e.g. 1.5mrad (default 0, a point source)"),
    ("reflectance", "diffuse reflectance of the surface, 0..1 (default 1)"),
    ("viewing-angle", "viewing angle from the surface normal for the diffuse case, e.g. 30deg (default 0)"),
    ("skin-exposure", "exposure duration for the skin (default: the eye's, at least 10 s)"),
    ("objective-diameter", "objective diameter of viewing optics, e.g. 50mm (default: the condition 1 aperture, "
                           "50 mm, or 25 mm in 302.5-400 nm and 1400-4000 nm)"),
    ("optics-transmission", "transmission of viewing optics, 0..1 (default 1)"),
    ("focal-length", "focal length of a lens on the laser, e.g. 100mm"),
    ("lens-beam-diameter", "beam diameter at that lens (default: the exit diameter)"),
    ("fibre-na", "numerical aperture of a fibre end, e.g. 0.22"),
    ("fibre-core", "core diameter of that fibre, e.g. 200um"),
)

# The batch file's columns (a contract) and the request key each fills; an empty cell is "not given".
BATCH_COLUMNS: dict[str, str] = {
    "wavelength_m": "wavelength", "power_W": "power", "pulse_energy_J": "pulse_energy",
    "pulse_duration_s": "pulse_duration", "prf_Hz": "prf", "beam_diameter_m": "beam_diameter",
    "divergence_rad": "divergence", "diameter_at": "diameter_at", "exposure_s": "exposure", "limits": "limits",
}


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    parser = subparsers.add_parser(
        "assess", help="hazard distances, optical density and EN 207 rating for one emission or a CSV of them",
        description="Assess one emission: NOHD, diffuse and skin hazard distances, required OD, EN 207 "
        "markings, class plausibility, with the working. " + CAUTION)
    for option, help_text in _VALUE_OPTIONS:
        parser.add_argument(f"--{option}", help=help_text)
    # No argparse choices: a wrong value then gets the same one-line error, naming the field, as any other.
    parser.add_argument("--diameter-at", default="1/e2",
                        help=f"the level at which diameter and divergence are given: "
                        f"{' or '.join(DIAMETER_DEFINITIONS)} (default 1/e2)")
    parser.add_argument("--limits", default=DEFAULT_LIMITS,
                        help=f"exposure-limit set: {', '.join(LIMIT_SETS)} (default {DEFAULT_LIMITS})")
    parser.add_argument("--class", dest="laser_class", metavar="CLASS",
                        help=f"labelled laser class, checked for plausibility ({', '.join(LASER_CLASSES)})")
    parser.add_argument("--deliberate", action="store_true",
                        help="assume deliberate long viewing for the default exposure duration")
    parser.add_argument("--eyewear", action="append", default=[], metavar="MARKING",
                        help="an eyewear marking to check, e.g. 'D 1064 LB6' (repeat for several bands)")
    parser.add_argument("--batch", metavar="FILE.csv",
                        help="assess every row of a CSV with the columns " + ", ".join(BATCH_COLUMNS)
                        + " (SI numbers; an empty cell is not given) in one pass; prints one line per row, in "
                        "order, and {\"row\": N, \"error\": ...} for a row that cannot be assessed (row 1 is the "
                        "first line after the header)")
    parser.add_argument("--json", action="store_true", help="print JSON (one object per line with --batch)")
    parser.add_argument("--working", action="store_true",
                        help="with --batch: include each row's working (always included for one emission)")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    if args.batch is not None:
        given = [option for option, _help in _VALUE_OPTIONS if getattr(args, option.replace("-", "_")) is not None]
        if given:
            raise InputError("batch", f"give either --batch or the emission's options (got --{given[0]}), not both")
        for line in _batch_lines(Path(args.batch), as_json=args.json, working=args.working):
            print(line)
        return 0
    request: dict[str, object] = {option.replace("-", "_"): getattr(args, option.replace("-", "_"))
                                  for option, _help in _VALUE_OPTIONS}
    request.update(diameter_at=args.diameter_at, limits=args.limits, laser_class=args.laser_class,
                   deliberate=args.deliberate, eyewear=list(args.eyewear))
    beam, scenario = parse_assessment_request(request)
    result = assess(beam, scenario)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2, allow_nan=False))
    else:
        print(result.as_text())
    return 0


def _batch_lines(path: Path, *, as_json: bool, working: bool) -> Iterator[str]:
    rows = read_batch(path)
    parsed: list[tuple[Beam, Scenario]] = []
    refused: dict[int, str] = {}
    for number, request in enumerate(rows, start=1):
        try:
            parsed.append(parse_assessment_request(request))
        except InputError as error:
            refused[number] = str(error)
    batch = assess_many([beam for beam, _ in parsed], [scenario for _, scenario in parsed])
    position = 0
    for number in range(1, len(rows) + 1):
        if number in refused:
            yield json.dumps({"row": number, "error": refused[number]}) if as_json \
                else f"row {number}: refused: {refused[number]}"
            continue
        assessment = Assessment(batch, position)
        position += 1
        yield json.dumps(assessment.to_dict(working=working), allow_nan=False) if as_json \
            else _summary_line(number, assessment)
    if not as_json:
        yield CAUTION


def read_batch(path: Path) -> list[dict[str, object]]:
    """The rows of a batch CSV as requests for parse_assessment_request (empty cells left out)."""
    with batch_rows(path) as reader:
        header = [name.strip() for name in reader.fieldnames or []]
        unknown = [name for name in header if name not in BATCH_COLUMNS]
        missing = [name for name in ("wavelength_m", "beam_diameter_m", "divergence_rad") if name not in header]
        if unknown or missing:
            problem = f"unknown column {unknown[0]!r}" if unknown else f"missing column {missing[0]!r}"
            raise InputError("batch", f"{path.name} line 1: {problem} (the columns are {', '.join(BATCH_COLUMNS)})")
        return [{BATCH_COLUMNS[name.strip()]: value.strip() for name, value in row.items()
                 if name is not None and value is not None and value.strip()}
                for row in reader]


def _summary_line(number: int, assessment: Assessment) -> str:
    record = assessment.to_dict(working=False)
    nohd = ("unbounded" if record["nohd_unbounded"] else
            format_si(record["nohd_m"], "m") if record["nohd_m"] is not None else "not computed")
    markings = " + ".join(record["en207"]["markings"]) or "no EN 207 rating"
    return (f"row {number}: {format_si(assessment.beam.wavelength_m, 'm')} [{record['limits']}]: NOHD {nohd}, "
            f"OD {record['od_required']}, {markings}" + _warning_count(len(record["warnings"])))


def _warning_count(count: int) -> str:
    return "" if count == 0 else f" ({count} warning{'s' if count > 1 else ''}; --json shows them)"
