"""Figures on printed documents, as people read them (hazards.units.format_for_people).

Three significant figures with a metric prefix and never an exponent, so a sign read from the
door and a report read by an inspector show "250 mW", "8.42 m"; wavelengths as marked ("1064 nm"). A value the data
sheet does not give prints as a dash; a hazard figure the engine did not compute says so.
"""
from __future__ import annotations

from typing import Protocol

from django import template
from django.utils.safestring import SafeString, mark_safe

from hazards.units import format_for_people, format_wavelength
from registry.models import HazardResult
from registry.templatetags.hazard_figures import NOT_COMPUTED

register = template.Library()

NOT_GIVEN = "\u2013"


class HasWavelength(Protocol):
    wavelength_m: float
    wavelength_max_m: float | None


class HasNohd(Protocol):
    metres: float | None
    unbounded: bool


@register.filter
def for_people(value: float | None, unit: str) -> str:
    """``{{ emission.average_power_W|for_people:"W" }}`` -> "250 mW"; a dash when not given."""
    return NOT_GIVEN if value is None else format_for_people(value, unit)


@register.filter
def wavelength(source: HasWavelength) -> str:
    """One wavelength ("1064 nm") or a tunable range ("700 nm to 1000 nm"), as marked, never rounded."""
    return format_wavelength(source.wavelength_m, source.wavelength_max_m)


@register.filter
def nohd(distance: HasNohd) -> str:
    """The largest NOHD: "unbounded" when a collimated beam stays above the MPE at any distance."""
    if distance.unbounded:
        return "unbounded: the beam stays above the MPE at any distance"
    if distance.metres is None:
        return NOT_COMPUTED
    return format_for_people(distance.metres, "m")


@register.filter
def result_nohd(result: HazardResult | None) -> str:
    if result is None:
        return NOT_COMPUTED
    if result.nohd_unbounded:
        return "unbounded"
    return NOT_COMPUTED if result.nohd_m is None else format_for_people(result.nohd_m, "m")


@register.filter
def od_needed(required: float | None) -> str:
    """The optical density eyewear must reach: "OD 5"; "none needed" at 0."""
    if required is None:
        return NOT_COMPUTED
    return "none needed" if required <= 0 else f"OD {format_for_people(required, '')}"


@register.filter
def result_od(result: HazardResult | None) -> str:
    """The OD a stored result calls for; an emission without a result under the limit set is not computed."""
    return NOT_COMPUTED if result is None else od_needed(result.od_required)


@register.filter
def eye_mpe(result: HazardResult | None) -> str:
    """The eye MPE: per pulse first for pulsed emissions; otherwise irradiance over its exposure duration."""
    if result is None:
        return NOT_COMPUTED
    over = f"{format_for_people(result.eye_mpe_W_m2, 'W/m2')} over {format_for_people(result.exposure_s, 's')}"
    if result.eye_mpe_per_pulse_J_m2 is None:
        return over
    return f"{format_for_people(result.eye_mpe_per_pulse_J_m2, 'J/m2')} per pulse; {over}"


@register.filter
def cell(answers: dict[str, str], control: str) -> str:
    """A checklist grid cell: the answer, or a dash where the row's class does not call for the check."""
    return answers.get(control, NOT_GIVEN)


@register.filter
def css_string(text: str) -> SafeString:
    """``text`` inside a CSS double-quoted string in a <style> element (page margin boxes take their
    text from CSS): backslashes, quotes and the characters HTML would read are CSS escapes."""
    escaped = text.replace("\\", "\\5c ").replace('"', "\\22 ").replace("<", "\\3c ").replace("&", "\\26 ")
    return mark_safe(escaped.replace("\n", " "))
