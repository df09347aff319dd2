"""Hazard figures as a person reads them: each with its unit, basis and source.

The filters are used by templates and by the admin's display methods alike, so a figure
reads the same wherever it is shown. A missing figure reads as "not computed" rather
than as an empty cell, which could be taken for "no hazard".
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from django import template
from django.utils.translation import gettext as _

from hazards.caution import CAUTION
from hazards.limits.limit_set import load_limit_set
from hazards.units import format_for_people, format_wavelength
from hazards.working import Step, StepDict, Working
from hazards.eyewear import Adequacy
from registry.models import Emission, HazardResult
from registry.selectors import result_under

register = template.Library()

NOT_COMPUTED = "not computed"
NO_EYEWEAR_NEEDED = "no eyewear needed"

@register.simple_tag
def hazard_caution() -> str:
    return CAUTION


@register.filter
def quantity(value: float | None, unit: str) -> str:
    """Any figure for people: three significant figures with a metric prefix ("198 nJ/m²"), or "not computed"."""
    if value is None:
        return NOT_COMPUTED
    return format_for_people(value, unit)


@register.filter
def distance(metres: float | None, unbounded: bool = False) -> str:
    """A hazard distance to three significant figures: "517 m", "1.41 km", "0 m"."""
    if unbounded:
        return _("unbounded (the collimated beam stays above the MPE at any distance)")
    return quantity(metres, "m")


@register.filter
def duration(seconds: float | None) -> str:
    """An exposure duration: "250 ms", "10 s", "30 000 s"."""
    return quantity(seconds, "s")


@register.filter
def optical_density(required: float | None, exact: float | None = None) -> str:
    """The OD eyewear must reach ("no eyewear needed" for OD 0), with the unrounded value it
    was rounded up from when ``exact`` is given."""
    if required is None:
        return NOT_COMPUTED
    if required <= 0:
        return NO_EYEWEAR_NEEDED
    shown = f"OD {required:g}"
    return shown if exact is None else f"{shown} (exact {exact:.3g})"


def mpe(radiant_exposure_J_m2: float | None, irradiance_W_m2: float | None, exposure_s: float | None) -> str:
    """An MPE as both radiant exposure and irradiance, over the duration it assumes."""
    if radiant_exposure_J_m2 is None or irradiance_W_m2 is None:
        return NOT_COMPUTED
    return (f"{format_for_people(radiant_exposure_J_m2, 'J/m2')} = {format_for_people(irradiance_W_m2, 'W/m2')} "
            f"over {duration(exposure_s)}")


@register.filter
def eye_mpe(result: HazardResult) -> str:
    """The eye MPE as stored; for pulsed emissions the per-pulse limit that governs comes first,
    since that is the figure each pulse is compared with."""
    whole = mpe(result.eye_mpe_J_m2, result.eye_mpe_W_m2, result.exposure_s)
    if result.eye_mpe_per_pulse_J_m2 is None:
        return whole
    rule = result.pulse_rule.replace("_", " ") or _("pulse rule not recorded")
    return f"{format_for_people(result.eye_mpe_per_pulse_J_m2, 'J/m2')} per pulse ({rule}); whole exposure {whole}"


@register.filter
def limit_set_title(name: str) -> str:
    """The limit set's published title with its short name: "ICNIRP 2013 ... (icnirp2013)"."""
    try:
        return f"{load_limit_set(name).title} ({name})"
    except FileNotFoundError:
        # A result from a limit set since removed still shows what it was computed under.
        return name


@register.filter
def en207_marking(marking: str) -> str:
    return marking or _("no EN 207 rating applies")


def working_steps(working: list[StepDict]) -> Working:
    return Working(steps=[Step(what=step["what"], formula=step["formula"], value=step["value"],
                               unit=step["unit"], source=step["source"], inputs=dict(step["inputs"]))
                          for step in working])


@register.filter
def working_text(working: list[StepDict]) -> str:
    """The stored working as numbered lines: what, formula, inputs, value, unit [source]."""
    if not working:
        return _("no working stored")
    return working_steps(working).as_text()


# --- the pages: the working for people, and two limit sets side by side -----------------------

# The engine names its table rows ("row visible-thermal") for the data files; people read the citation.
_ROW_IDENTIFIER = re.compile(r"\s*\(row [^)]*\)")
# Units of working steps, as the engine writes them, in the form format_for_people takes.
_STEP_UNITS = {"m": "m", "s": "s", "rad": "rad", "J/m^2": "J/m2", "J/m2": "J/m2", "W/m^2": "W/m2", "W/m2": "W/m2",
               "mm": "mm", "mrad": "mrad", "m^2": "m2"}
_CHECKED_STATUS = "read"


@dataclass(frozen=True)
class ReadableStep:
    number: int
    what: str
    formula: str
    inputs: str
    value: str
    source: str


def _step_value(value: float | str | None, unit: str) -> str:
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    shown_unit = _STEP_UNITS.get(unit)
    if shown_unit in ("mm", "mrad", "m2"):
        return f"{format_for_people(value, '')} {unit.replace('^2', '²')}"
    if shown_unit is not None:
        return format_for_people(value, shown_unit)
    return f"{format_for_people(value, '')} {unit}".strip()


def readable_working(working: list[StepDict]) -> list[ReadableStep]:
    """The stored working as numbered steps for people: values with units, no row identifiers."""
    return [ReadableStep(number=number, what=_ROW_IDENTIFIER.sub("", step["what"]), formula=step["formula"],
                         inputs=", ".join(f"{name} = {_step_value(value, '')}" for name, value in step["inputs"].items()),
                         value=_step_value(step["value"], step["unit"]), source=step["source"])
            for number, step in enumerate(working, 1)]


def unchecked_rows(working: list[StepDict]) -> list[str]:
    """The steps resting on table rows not checked against the published text ("unverified", "from memory"...)."""
    found: list[str] = []
    for step in working:
        for status in re.findall(r"\[([^\]]*)\]", step["source"]):
            if not status.startswith(_CHECKED_STATUS):
                found.append(f"{_ROW_IDENTIFIER.sub('', step['what'])}: {status}")
    return list(dict.fromkeys(found))


@dataclass(frozen=True)
class FigureRow:
    """One figure under the limit set shown and under another; ``differs`` marks a difference."""

    label: str
    shown: str
    other: str
    differs: bool


def _figures(result: HazardResult | None) -> list[tuple[str, str]]:
    if result is None:
        return [(label, NOT_COMPUTED) for label in _FIGURE_LABELS]
    values = (eye_mpe(result), duration(result.exposure_s),
              mpe(result.skin_mpe_J_m2, result.skin_mpe_W_m2, result.skin_exposure_s),
              distance(result.nohd_m, result.nohd_unbounded), distance(result.diffuse_hazard_distance_m),
              distance(result.skin_hazard_distance_m), optical_density(result.od_required),
              en207_marking(result.en207_marking))
    return list(zip(_FIGURE_LABELS, values))


_FIGURE_LABELS = ("Eye MPE", "Exposure basis (eye)", "Skin MPE", "NOHD", "Diffuse-reflection hazard distance",
                  "Skin hazard distance", "Required eyewear", "EN 207 marking")


def figure_rows(shown: HazardResult | None, other: HazardResult | None) -> list[FigureRow]:
    """The figures of one emission under the limit set shown and another, row by row."""
    return [FigureRow(label, mine, theirs, mine != theirs)
            for (label, mine), (_, theirs) in zip(_figures(shown), _figures(other))]


@register.filter
def wavelength_text(emission: Emission) -> str:
    """An emission's wavelength, or its range, as marked: "1064 nm", "690 nm to 1040 nm"."""
    return format_wavelength(emission.wavelength_m, emission.wavelength_max_m)


_VERDICT_WORDS = {"adequate": "adequate", "inadequate": "inadequate", "not_covered": "not covered"}


@register.filter
def verdict(adequacy: Adequacy) -> str:
    """The eyewear check in words, with the shortfall: "inadequate: OD 5 at 800 nm, OD 7 required"."""
    words = _VERDICT_WORDS[adequacy.status]
    if adequacy.status != "inadequate":
        return words
    return f"{words}: {'; '.join(adequacy.reasons)}" if adequacy.reasons else words


@register.filter
def result_for(emission: Emission, limits: str) -> HazardResult | None:
    """The emission's stored result under ``limits`` (from the selector's prefetch), or None."""
    return result_under(emission, limits)


@register.filter
def lookup(mapping: dict[object, object], key: object) -> object:
    return mapping.get(key)


@register.filter
def attr_status(adequacy: Adequacy | None) -> str:
    """The verdict's status as a CSS class suffix (the words beside it say the same)."""
    return adequacy.status if adequacy is not None else "not_covered"
