"""Hazard figures as a person reads them: each with its unit, basis and source.

The filters are used by templates and by the admin's display methods alike, so a figure
reads the same wherever it is shown. A missing figure reads as "not computed" rather
than as an empty cell, which could be taken for "no hazard".
"""
from __future__ import annotations

from django import template
from django.utils.translation import gettext as _

from hazards.caution import CAUTION
from hazards.limits.limit_set import load_limit_set
from hazards.units import format_for_people
from hazards.working import Step, StepDict, Working
from registry.models import HazardResult

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
