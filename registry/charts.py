"""Charts of hazard figures as SVG, one function per chart, for the pages and the printed documents.

matplotlib draws them (Agg, no display), so the page and a PDF show the same figure. The
SVG is rewritten to carry no <style> element and no style attributes (matplotlib writes
both): styles become SVG presentation attributes, which a strict Content-Security-Policy
(no inline styles) leaves alone. Each SVG carries the caution in its <desc>.
"""
from __future__ import annotations

import io
import math
import xml.etree.ElementTree as ET

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from hazards.caution import CAUTION  # noqa: E402
from hazards.limits import LIMIT_SETS, exposure_limit  # noqa: E402
from hazards.units import format_for_people, format_wavelength  # noqa: E402

_SVG = "http://www.w3.org/2000/svg"
_XLINK = "http://www.w3.org/1999/xlink"

# Distinct in grey print too: each set has its own line style as well as its own colour.
_SET_STYLES = {"icnirp2013": ("#1f4e79", "-"), "eu2006": ("#b3541e", "--")}
# The limit tables' domain in time: 100 fs to 30 000 s.
_DURATIONS_S = np.logspace(-13, math.log10(3e4), 400)


def eye_mpe_chart(*, wavelength_m: float, source_size_rad: float, basis_s: float, chosen: str) -> bytes:
    """The eye MPE (radiant exposure) against exposure duration, log-log, under every limit set,
    with the exposure duration the register assumed (``basis_s``) marked on the ``chosen`` set."""
    figure = Figure(figsize=(6.4, 3.6), layout="constrained")
    axes = figure.add_subplot()
    for limits in LIMIT_SETS:
        curve = exposure_limit(wavelength_m, _DURATIONS_S, tissue="eye", source_size_rad=source_size_rad,
                               limits=limits).radiant_exposure_J_m2
        colour, line = _SET_STYLES.get(limits, ("#333333", ":"))
        axes.loglog(_DURATIONS_S, curve, line, color=colour, linewidth=2 if limits == chosen else 1.3,
                    label=f"{limits}{' (shown)' if limits == chosen else ''}")
    at_basis = float(exposure_limit(wavelength_m, basis_s, tissue="eye", source_size_rad=source_size_rad,
                                    limits=chosen).radiant_exposure_J_m2)
    axes.axvline(basis_s, color="#444444", linestyle=":", linewidth=1)
    axes.plot([basis_s], [at_basis], "o", color="#000000", markersize=6)
    axes.annotate(f"basis {format_for_people(basis_s, 's')}: {format_for_people(at_basis, 'J/m2')}",
                  (basis_s, at_basis), textcoords="offset points", xytext=(8, -14), fontsize=9)
    axes.set_xlabel("exposure duration (s)")
    axes.set_ylabel("eye MPE, radiant exposure (J/m²)")
    axes.set_title(f"Eye MPE at {format_wavelength(wavelength_m)}", fontsize=11)
    axes.grid(True, which="major", color="#dddddd", linewidth=0.6)
    axes.legend(fontsize=9, loc="upper left")
    return _svg(figure, title=f"Eye MPE against exposure duration at {format_wavelength(wavelength_m)}")


def hazard_distance_chart(*, beam_diameter_m: float | None, divergence_rad: float | None, nohd_m: float | None,
                          nohd_unbounded: bool, room_m: float | None) -> bytes:
    """The beam's cone along its path with the NOHD marked against the room's longest dimension.

    The distance axis is logarithmic when the NOHD is more than three times the room (and says
    so), so that both stay readable.
    """
    figure = Figure(figsize=(6.4, 3.0), layout="constrained")
    axes = figure.add_subplot()
    reach = max([value for value in (nohd_m, room_m) if value] or [10.0])
    if nohd_unbounded:
        reach = max(reach, 10 * (room_m or 1.0))
    logarithmic = bool(nohd_unbounded or (nohd_m and room_m and nohd_m > 3 * room_m))
    start = min(0.01, reach / 1000) if logarithmic else 0.0
    distances = np.geomspace(start, reach * 1.3, 300) if logarithmic else np.linspace(0, reach * 1.3, 300)
    if beam_diameter_m is not None and divergence_rad is not None:
        half_mm = 0.5e3 * np.sqrt(beam_diameter_m ** 2 + (divergence_rad * distances) ** 2)
        axes.fill_between(distances, -half_mm, half_mm, color="#c9daf0", edgecolor="#1f4e79", linewidth=1,
                          label="beam (diameter as on the data sheet)")
    if room_m:
        axes.axvspan(start, room_m, color="#eeeeee", zorder=0, label=f"room, {format_for_people(room_m, 'm')} long")
        axes.axvline(room_m, color="#555555", linewidth=1.2)
    if nohd_unbounded:
        axes.annotate("NOHD unbounded →", (reach * 1.25, 0), ha="right", va="bottom", fontsize=10,
                      fontweight="bold", color="#8a1c1c")
    elif nohd_m is not None:
        axes.axvline(max(nohd_m, start), color="#8a1c1c", linestyle="--", linewidth=1.6,
                     label=f"NOHD {format_for_people(nohd_m, 'm')}")
    if logarithmic:
        axes.set_xscale("log")
        axes.set_xlabel("distance from the aperture (m, logarithmic scale)")
    else:
        axes.set_xlabel("distance from the aperture (m)")
    axes.set_ylabel("beam half-width (mm)")
    axes.set_xlim(start if logarithmic else 0, reach * 1.3)
    axes.legend(fontsize=8, loc="upper left")
    axes.grid(True, color="#dddddd", linewidth=0.6)
    return _svg(figure, title="Hazard distance against the room")


def _svg(figure: Figure, *, title: str) -> bytes:
    buffer = io.StringIO()
    figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
    root = ET.fromstring(buffer.getvalue())
    for parent in root.iter():
        for child in list(parent):
            if child.tag == f"{{{_SVG}}}style":
                parent.remove(child)
    for element in root.iter():
        style = element.attrib.pop("style", None)
        if style:
            for declaration in style.split(";"):
                name, _, value = declaration.partition(":")
                if name.strip() and value.strip():
                    element.set(name.strip(), value.strip())
    root.set("role", "img")
    root.set("aria-label", title)
    description = ET.Element(f"{{{_SVG}}}desc")
    description.text = CAUTION
    root.insert(0, description)
    heading = ET.Element(f"{{{_SVG}}}title")
    heading.text = title
    root.insert(0, heading)
    # ElementTree's prefixes are process-wide and other libraries (the PDF renderer's SVG reader)
    # register their own: name ours just before writing, so the SVG stays <svg>, not <ns0:svg>.
    ET.register_namespace("", _SVG)
    ET.register_namespace("xlink", _XLINK)
    return ET.tostring(root, encoding="utf-8", xml_declaration=True)
