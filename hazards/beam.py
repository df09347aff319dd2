"""Gaussian beam geometry: diameter definitions, beam growth and the share that enters an aperture.

Hazard formulas in public guidance (IEC TR 60825-14, ANSI Z136.1 Appendix B) use the beam
diameter and divergence at 1/e of peak irradiance (the diameter holding 63 % of the power,
"d63"). Data sheets more often quote 1/e^2 (86.5 %). Everything here converts to 1/e first.
"""
from __future__ import annotations

import math
from typing import Literal

DiameterDefinition = Literal["1/e", "1/e2"]
DIAMETER_DEFINITIONS: tuple[DiameterDefinition, ...] = ("1/e", "1/e2")

# I(r) = I0 exp(-2 r^2 / w^2) with w the 1/e^2 radius; I falls to I0/e at r = w / sqrt(2).
_ONE_OVER_E2_PER_ONE_OVER_E = math.sqrt(2.0)


def to_one_over_e(value: float, definition: DiameterDefinition) -> float:
    """Convert a diameter or a full-angle divergence given at ``definition`` to its 1/e value."""
    if definition == "1/e":
        return value
    if definition == "1/e2":
        return value / _ONE_OVER_E2_PER_ONE_OVER_E
    raise ValueError(f"unknown diameter definition {definition!r}")


def to_one_over_e2(value: float, definition: DiameterDefinition) -> float:
    """Convert a diameter or a full-angle divergence given at ``definition`` to its 1/e^2 value."""
    return to_one_over_e(value, definition) * _ONE_OVER_E2_PER_ONE_OVER_E


def circle_area(diameter_m: float) -> float:
    return math.pi * diameter_m**2 / 4.0


def fraction_through_aperture(beam_diameter_1e_m: float, aperture_m: float) -> float:
    """Share of a centred Gaussian beam's power inside a circular aperture.

    With d63 the 1/e diameter the share is 1 - exp(-(D/d63)^2). Following the exposure
    rule for the limiting aperture, a beam no wider than the aperture counts whole (1.0):
    all of its power can enter the pupil, whatever the tail beyond the 1/e edge does.
    """
    if beam_diameter_1e_m <= aperture_m:
        return 1.0
    return -math.expm1(-((aperture_m / beam_diameter_1e_m) ** 2))


def aperture_averaged(amount: float, beam_diameter_1e_m: float, aperture_m: float) -> float:
    """Power (W) or energy (J) that enters the aperture, divided by the aperture's area.

    The result is the irradiance (W/m^2) or radiant exposure (J/m^2) compared with the
    MPE, which is defined as an average over that same limiting aperture.
    """
    return amount * fraction_through_aperture(beam_diameter_1e_m, aperture_m) / circle_area(aperture_m)


def peak_over_area(amount: float, beam_diameter_1e_m: float) -> float:
    """Power or energy over the 1/e beam area: the peak irradiance of a Gaussian beam.

    For a Gaussian, P / (pi d63^2 / 4) equals the on-axis peak 2P / (pi w^2); EN 207 selects
    eyewear on this figure (the stability of filter and frame depends on the beam, not the pupil).
    """
    return amount / circle_area(beam_diameter_1e_m)
