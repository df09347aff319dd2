"""Gaussian beam geometry: diameter definitions, beam growth, and the exposure over an aperture.

Hazard formulas in public guidance (IEC TR 60825-14, ANSI Z136.1 Appendix B) use the beam
diameter and divergence at 1/e of peak irradiance (the diameter holding 63 % of the power,
"d63"). Data sheets more often quote 1/e^2 (86.5 %). Everything here converts to 1/e first.

Every function takes floats or numpy arrays and broadcasts.
"""
from __future__ import annotations

import math
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]
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


def one_over_e_factor(definitions: ArrayLike) -> FloatArray:
    """Per element, what multiplies a value given at that definition to make it a 1/e value."""
    return np.where(np.asarray(definitions) == "1/e2", 1.0 / _ONE_OVER_E2_PER_ONE_OVER_E, 1.0)


def circle_area(diameter_m: ArrayLike) -> FloatArray:
    return np.pi * np.asarray(diameter_m, dtype=np.float64) ** 2 / 4.0


def averaged_exposure(amount: ArrayLike, beam_diameter_1e_m: ArrayLike, aperture_m: ArrayLike) -> FloatArray:
    """Irradiance (W/m^2) or radiant exposure (J/m^2) of a beam averaged over a limiting aperture.

    The amount (power or energy) over the larger of the beam's 1/e area and the aperture's area:
    a beam no wider than the aperture enters it whole, and a wider one is taken at its peak
    (for a Gaussian, P over the 1/e area is the on-axis peak 2P / (pi w^2)). This is the exposure
    the beam-hazard formula of IEC TR 60825-14 and ANSI Z136.1 Appendix B is built on, so the
    optical density and every hazard distance rest on the same figure: it is continuous in the
    beam diameter, never below the exact Gaussian share through the aperture, and a distance is
    above zero exactly when this exposure at the exit exceeds the limit.
    """
    return np.asarray(amount, dtype=np.float64) / circle_area(np.maximum(beam_diameter_1e_m, aperture_m))


def fraction_through_aperture(beam_diameter_1e_m: ArrayLike, aperture_m: ArrayLike) -> FloatArray:
    """Share of a centred Gaussian beam's power that a circular aperture of diameter D collects.

    With d63 the 1/e diameter the share is 1 - exp(-(D/d63)^2). This is what a power meter
    behind a measurement aperture reads (class measurements), not an exposure average.
    """
    ratio = np.asarray(aperture_m, dtype=np.float64) / np.asarray(beam_diameter_1e_m, dtype=np.float64)
    return -np.expm1(-(ratio**2))


def beam_diameter_at(distance_m: ArrayLike, beam_diameter_1e_m: ArrayLike, divergence_1e_rad: ArrayLike) -> FloatArray:
    """The 1/e diameter at a distance from the exit: sqrt(a^2 + (phi r)^2)."""
    return np.hypot(np.asarray(beam_diameter_1e_m, dtype=np.float64),
                    np.asarray(divergence_1e_rad, dtype=np.float64) * np.asarray(distance_m, dtype=np.float64))


def peak_over_area(amount: ArrayLike, beam_diameter_1e_m: ArrayLike) -> FloatArray:
    """Power or energy over the 1/e beam area: the peak irradiance of a Gaussian beam.

    EN 207 selects eyewear on this figure (the stability of filter and frame depends on the
    beam, not on the pupil).
    """
    return np.asarray(amount, dtype=np.float64) / circle_area(beam_diameter_1e_m)
