"""manage.py recompute_hazards: recompute every stored hazard result in one vectorised pass."""
from __future__ import annotations

import sys
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from tqdm import tqdm

from hazards import ENGINE_VERSION
from hazards.limits import LIMIT_SETS
from hazards.units import format_for_people
from registry import selectors
from registry.services.hazards import FigureChange, hazard_results_refresh


class Command(BaseCommand):
    help = ("Recompute the hazard results of every emission (run it after an engine or limit-set change). "
            "Lists each emission whose required OD or NOHD changed, with the old and new figures. "
            "All or nothing: a failure leaves every stored result as it was.")

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--limits", action="append", metavar="NAME",
                            help=f"Only this limit set ({', '.join(LIMIT_SETS)}); repeat for several. Default: all.")

    def handle(self, *args: Any, **options: Any) -> None:
        limit_sets = options["limits"] or list(LIMIT_SETS)
        unknown = [name for name in limit_sets if name not in LIMIT_SETS]
        if unknown:
            raise CommandError(f"unknown limit set {unknown[0]!r}; known: {', '.join(LIMIT_SETS)}")
        emissions = list(selectors.emission_list())
        # The bar counts emissions stored; it is drawn only on a terminal, never into a log.
        with tqdm(total=len(emissions), desc="storing results", unit="emission", file=sys.stderr,
                  disable=not sys.stderr.isatty()) as bar:
            summary = hazard_results_refresh(emissions=emissions, limit_sets=limit_sets, progress=bar.update)
        for change in summary.changes:
            self.stdout.write(_change_line(change))
        for emission, reason in summary.not_assessed:
            self.stdout.write(f"not assessed: {emission}: {reason}")
        self.stdout.write(f"Recomputed {summary.assessed} emissions under {', '.join(limit_sets)} with engine "
                          f"{ENGINE_VERSION}: {len(summary.changes)} results changed, {len(summary.not_assessed)} "
                          "not assessed.")


def _change_line(change: FigureChange) -> str:
    def nohd(distance: float | None, unbounded: bool) -> str:
        if unbounded:
            return "unbounded"
        return "not computed" if distance is None else format_for_people(distance, "m")

    def od(value: float | None) -> str:
        return "not computed" if value is None else f"OD {value:g}"

    return (f"changed: {change.emission} [{change.limits}]: {od(change.od_before)} -> {od(change.od_after)}, "
            f"NOHD {nohd(change.nohd_before, change.unbounded_before)} -> "
            f"{nohd(change.nohd_after, change.unbounded_after)}")
