"""``python -m hazards assess``: every hazard figure for one emission, as text or JSON."""
from __future__ import annotations

import argparse
import json

from hazards.assessment import assess, parse_assessment_request
from hazards.caution import CAUTION
from hazards.beam import DIAMETER_DEFINITIONS
from hazards.classes import LASER_CLASSES
from hazards.limits import DEFAULT_LIMITS, LIMIT_SETS

# (option, help); every value goes through parse_assessment_request, which names the key on error.
_VALUE_OPTIONS: tuple[tuple[str, str], ...] = (
    ("wavelength", "wavelength, e.g. 532nm or 1.064um (required)"),
    ("power", "average power, e.g. 5W or 20 mW (may be left out for a pulse train with --pulse-energy and --prf)"),
    ("beam-diameter", "beam diameter at the exit, e.g. 2mm (required)"),
    ("divergence", "full-angle divergence, e.g. 1mrad (required; 0 for a collimated beam)"),
    ("pulse-energy", "energy per pulse, e.g. 10mJ"),
    ("pulse-duration", "pulse duration, e.g. 10ns"),
    ("prf", "pulse repetition frequency, e.g. 10Hz (leave out for a single pulse)"),
    ("exposure", "exposure duration, e.g. 0.25s (default: common practice for the wavelength)"),
    ("source-size", "apparent source size (angle), e.g. 1.5mrad (default 0, a point source)"),
    ("reflectance", "diffuse reflectance of the surface, 0..1 (default 1)"),
    ("viewing-angle", "viewing angle from the surface normal for the diffuse case, e.g. 30deg (default 0)"),
    ("skin-exposure", "exposure duration for the skin (default: the eye's, at least 10 s)"),
    ("objective-diameter", "objective diameter of viewing optics, e.g. 50mm (default 50 mm)"),
    ("optics-transmission", "transmission of viewing optics, 0..1 (default 1)"),
    ("focal-length", "focal length of a lens on the laser, e.g. 100mm"),
    ("lens-beam-diameter", "beam diameter at that lens (default: the exit diameter)"),
    ("fibre-na", "numerical aperture of a fibre end, e.g. 0.22"),
    ("fibre-core", "core diameter of that fibre, e.g. 200um"),
)


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    parser = subparsers.add_parser(
        "assess", help="hazard distances, optical density and EN 207 rating for one emission",
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
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
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
