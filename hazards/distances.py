"""Hazard distances: how far from the source the exposure stays above a limit.

Every function takes the emitted amount (power in W against an irradiance limit in W/m^2,
or one pulse's energy in J against a radiant-exposure limit in J/m^2) and the limit itself,
so the figures can be checked by hand without the limits engine. Diameters and divergences
are 1/e values (see hazards.beam). Inputs are floats or numpy arrays and broadcast; the
results keep the intermediate figures, from which ``*_steps`` write the working of one point.

The exposure at a distance r is hazards.beam.averaged_exposure at the beam diameter there,
d(r) = sqrt(a^2 + (phi r)^2): the amount over the larger of the beam's area and the limiting
aperture's. It exceeds the limit L exactly while max(d(r), D_ap) < d_c = sqrt(4 X / (pi L)),
so the distance is sqrt(d_c^2 - a^2) / phi when the exposure at the exit exceeds L, and 0
otherwise. A hazard that never ends (a collimated beam above the limit) is ``unbounded``
with a NaN distance, never infinity.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from hazards.beam import FloatArray, averaged_exposure
from hazards.working import Step

BoolArray = NDArray[np.bool_]

# Glass and fused-silica optics transmit roughly from the UV-B edge to the mid infrared; only there
# can binoculars or telescopes gather more of a beam into the eye.
OPTICAL_AID_BAND_M = (302.5e-9, 4000e-9)
# The collecting aperture of IEC 60825-1 measurement condition 1 (binoculars, telescopes): 50 mm,
# and 25 mm in 302.5-400 nm and 1400-4000 nm where such optics transmit less (from memory).
CONDITION_1_APERTURE_M = 50e-3
CONDITION_1_APERTURE_UV_IR_M = 25e-3
_CONDITION_1_FULL_BAND_M = (400e-9, 1400e-9)
# What reaches the retina through a viewing instrument is bounded by the eye's own pupil (and
# by the instrument's exit pupil, which a 7x50 binocular matches): the gain is (D_o / 7 mm)^2.
EYE_PUPIL_M = 7e-3
# Multimode fibre: the data-sheet NA marks the far-field edge, not the 1/e half angle; guidance
# divides by 1.7 to get the 1/e half-angle (ANSI Z136.2 fibre NOHD form, from memory).
FIBRE_NA_PER_ONE_OVER_E_HALF_ANGLE = 1.7


@dataclass(frozen=True)
class Reach:
    """Hazard distances (m) of a beam against one limit, with the figures behind them.

    ``distance_m`` is the quadrature (longer) form, NaN where ``unbounded``; ``linear_m`` is
    the linear-growth form beside it. ``ratio`` is the exposure at the exit over the limit.
    """

    amount: FloatArray
    limit: FloatArray
    exit_diameter_m: FloatArray
    divergence_rad: FloatArray
    aperture_m: FloatArray
    ratio: FloatArray
    critical_diameter_m: FloatArray
    distance_m: FloatArray
    linear_m: FloatArray
    unbounded: BoolArray


def reach(amount: ArrayLike, limit: ArrayLike, exit_diameter_m: ArrayLike, divergence_rad: ArrayLike,
          aperture_m: ArrayLike) -> Reach:
    """Nominal hazard distance of a Gaussian beam (1/e diameter a at the exit, 1/e full angle phi).

    NaN inputs (a limit that does not apply) give NaN figures, never a hazard.
    """
    arrays = np.broadcast_arrays(*(np.asarray(value, dtype=np.float64)
                                   for value in (amount, limit, exit_diameter_m, divergence_rad, aperture_m)))
    amount_, limit_, exit_, phi, aperture = arrays
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ratio = averaged_exposure(amount_, exit_, aperture) / limit_
        # d_c = sqrt(4 X / (pi L)), written through the ratio so that the distance is above zero
        # exactly when the exposure at the exit exceeds the limit, to the last bit.
        critical = np.maximum(exit_, aperture) * np.sqrt(ratio)
        above = ratio > 1.0
        # No hazard beyond the exit is 0; a limit that does not apply (NaN) leaves NaN.
        below = np.where(np.isnan(ratio), np.nan, 0.0)
        quadrature = np.where(above, np.sqrt(np.maximum(critical**2 - exit_**2, 0.0)) / phi, below)
        linear = np.where(above, np.maximum(critical - exit_, 0.0) / phi, below)
    # A divergence so small that d_c / phi overflows is collimated for every practical purpose.
    unbounded = above & ~np.isfinite(quadrature)
    return Reach(amount=amount_, limit=limit_, exit_diameter_m=exit_, divergence_rad=phi, aperture_m=aperture,
                 ratio=ratio, critical_diameter_m=critical, distance_m=np.where(unbounded, np.nan, quadrature),
                 linear_m=np.where(unbounded, np.nan, linear), unbounded=unbounded)


def reach_steps(result: Reach, index: int, what: str) -> list[Step]:
    """The working of one point of ``result``: critical diameter, then the distance or why there is none."""
    def at(array: FloatArray) -> float:
        return float(array.reshape(-1)[index])

    amount, limit, exit_, phi, aperture = (at(result.amount), at(result.limit), at(result.exit_diameter_m),
                                           at(result.divergence_rad), at(result.aperture_m))
    critical = at(result.critical_diameter_m)
    steps = [Step(f"{what}: critical diameter", "d_c = sqrt(4 X / (pi L))", critical, "m",
                  "IEC TR 60825-14 / ANSI Z136.1 App. B beam-hazard form", {"X": amount, "L": limit})]
    if not at(result.ratio) > 1.0:
        reason = ("the exposure at the exit, X over the larger of the beam and aperture areas, is at or below "
                  "the limit")
        steps.append(Step(f"{what}: no hazard beyond the exit", reason, 0.0, "m", "",
                          {"d_c": critical, "a": exit_, "D_ap": aperture}))
    elif bool(result.unbounded.reshape(-1)[index]):
        steps.append(Step(f"{what}: collimated beam", "phi = 0 and d_c > max(a, D_ap): the limit is exceeded at "
                          "any range", "unbounded", "", "", {"d_c": critical, "a": exit_}))
    else:
        steps.append(Step(f"{what}: quadrature growth (reported)", "r = sqrt(d_c^2 - a^2) / phi", at(result.distance_m),
                          "m", "beam growth d(r) = sqrt(a^2 + (phi r)^2)", {"d_c": critical, "a": exit_, "phi": phi}))
        steps.append(Step(f"{what}: linear growth", "r = (d_c - a) / phi", at(result.linear_m), "m",
                          "beam growth d(r) = a + phi r", {"d_c": critical, "a": exit_, "phi": phi}))
    return steps


def diffuse_reach(amount: ArrayLike, limit: ArrayLike, reflectance: ArrayLike,
                  viewing_angle_rad: ArrayLike) -> FloatArray:
    """Distance from a Lambertian spot inside which the reflected exposure exceeds ``limit``.

    A Lambertian surface returns E(r) = rho X cos(theta) / (pi r^2) at distance r and angle
    theta from its normal, so r = sqrt(rho X cos(theta) / (pi L)). The spot is treated as a
    point source (no extended-source relief), which is the conservative reading.
    """
    cosine = np.maximum(0.0, np.cos(np.asarray(viewing_angle_rad, dtype=np.float64)))
    with np.errstate(invalid="ignore"):
        distance: FloatArray = np.sqrt(np.asarray(reflectance) * np.asarray(amount) * cosine
                                       / (np.pi * np.asarray(limit, dtype=np.float64)))
    return distance


def diffuse_steps(amount: float, limit: float, reflectance: float, viewing_angle_rad: float,
                  distance_m: float) -> list[Step]:
    return [Step("diffuse reflection hazard distance", "r = sqrt(rho X cos(theta) / (pi L))", distance_m, "m",
                 "Lambertian reflector, IEC TR 60825-14 / ANSI Z136.1 App. B diffuse form",
                 {"rho": reflectance, "X": amount, "theta": viewing_angle_rad, "L": limit})]


def focused_divergence(lens_beam_diameter_m: ArrayLike, focal_length_m: ArrayLike) -> FloatArray:
    """Past a lens's focus the beam spreads with full angle phi = b / f from a waist far smaller than the pupil."""
    return np.asarray(lens_beam_diameter_m, dtype=np.float64) / np.asarray(focal_length_m, dtype=np.float64)


def fibre_divergence(numerical_aperture: ArrayLike) -> FloatArray:
    """1/e full angle of the beam leaving a multimode fibre: 2 NA / 1.7 (the data-sheet NA marks the edge)."""
    return 2.0 * np.asarray(numerical_aperture, dtype=np.float64) / FIBRE_NA_PER_ONE_OVER_E_HALF_ANGLE


def condition_1_aperture(wavelength_m: ArrayLike) -> FloatArray:
    """The collecting aperture of measurement condition 1 for each wavelength (NaN where optics do not transmit)."""
    wavelength = np.asarray(wavelength_m, dtype=np.float64)
    full = (wavelength >= _CONDITION_1_FULL_BAND_M[0]) & (wavelength <= _CONDITION_1_FULL_BAND_M[1])
    transmits = (wavelength >= OPTICAL_AID_BAND_M[0]) & (wavelength <= OPTICAL_AID_BAND_M[1])
    return np.where(full, CONDITION_1_APERTURE_M, np.where(transmits, CONDITION_1_APERTURE_UV_IR_M, np.nan))


def optical_aid_reach(amount: ArrayLike, limit: ArrayLike, exit_diameter_m: ArrayLike, divergence_rad: ArrayLike,
                      aperture_m: ArrayLike, *, objective_diameter_m: ArrayLike, transmission: ArrayLike) -> Reach:
    """The hazard distance for a person looking into the beam through binoculars or a telescope.

    The objective (diameter D_o, transmission tau) gathers the beam over its own area and
    delivers it through an exit pupil no larger than the eye's 7 mm pupil: a beam wider than the
    objective reaches the eye with tau (D_o / 7 mm)^2 times the exposure (about 51 times for a
    7x50 binocular), as if its diameter were shrunk by m = D_o / 7 mm. So the aided distance is
    the beam formula for tau X, a / m and phi / m against the same limit and aperture. An
    objective of NaN (optics do not transmit at the wavelength) gives NaN and no hazard.
    """
    magnification = np.asarray(objective_diameter_m, dtype=np.float64) / EYE_PUPIL_M
    return reach(np.asarray(transmission) * np.asarray(amount), limit,
                 np.asarray(exit_diameter_m) / magnification, np.asarray(divergence_rad) / magnification, aperture_m)


def optical_aid_gain(objective_diameter_m: float, transmission: float) -> Step:
    """The working step that states the collecting gain of the viewing optics."""
    return Step("optical aids: collecting gain", "K = tau (D_o / D_eye)^2", transmission *
                (objective_diameter_m / EYE_PUPIL_M) ** 2, "",
                "gathered over the objective, delivered through a pupil no larger than the eye's (IEC TR 60825-14; "
                "condition 1 aperture of IEC 60825-1, from memory)",
                {"tau": transmission, "D_o": objective_diameter_m, "D_eye": EYE_PUPIL_M})
