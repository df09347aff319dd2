"""``python -m hazards``: the command line for people and for checks.

Each subcommand lives in its own module with ``register(subparsers)``, which adds its
parser and sets ``run`` (a function of the parsed arguments returning an exit status).
A person's mistake (an InputError) prints one line naming the value and exits 2.
"""
from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from hazards.caution import CAUTION
from hazards.cli import assess, limit
from hazards.errors import InputError

EXIT_BAD_INPUT = 2


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="python -m hazards",
        description="Laser exposure limits and hazard figures. " + CAUTION,
    )
    subparsers = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    limit.register(subparsers)
    assess.register(subparsers)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        status: int = args.run(args)
    except InputError as error:
        print(f"error: {error}", file=sys.stderr)
        return EXIT_BAD_INPUT
    return status
