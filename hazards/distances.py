"""Hazard distances: how far from the source the exposure stays above a limit.

Every function takes the emitted amount (power in W against an irradiance limit in W/m^2,
or one pulse's energy in J against a radiant-exposure limit in J/m^2) and the limit itself,
so the figures can be checked by hand without the limits engine. Diameters and divergences
are 1/e values (see hazards.beam). A hazard that never ends (a collimated beam above the
limit) is reported as ``unbounded`` with ``distance_m = None``, never as infinity.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

from hazards.beam import circle_area
from hazards.working import Working

GrowthForm = Literal["quadrature", "linear"]

# Glass and fused-silica optics transmit roughly from the UV-B edge to the mid infrared; only there
# can binoculars or telescopes gather more of a beam into the eye.
OPTICAL_AID_BAND_M = (302.5e-9, 4000e-9)
# Multimode fibre: the data-sheet NA marks the far-field edge, not the 1/e half angle; guidance
# divides by 1.7 to get the 1/e half-angle (ANSI Z136.2 fibre NOHD form, from memory).
FIBRE_NA_PER_ONE_OVER_E_HALF_ANGLE = 1.7


@dataclass(frozen=True)
class HazardDistance:
    """A hazard distance in metres, or ``unbounded``; ``alternatives`` holds the other forms."""

    distance_m: float | None
    unbounded: bool
    form: str
    alternatives: dict[str, float | None] = field(default_factory=dict)
    working: Working = field(default_factory=Working)


def critical_diameter(amount: float, limit: float) -> float:
    """Diameter over which ``amount`` spread evenly meets ``limit``: sqrt(4 X / (pi L))."""
    return math.sqrt(4.0 * amount / (math.pi * limit))


def _check_positive(amount: float, limit: float) -> None:
    if not (amount > 0 and math.isfinite(amount)):
        raise ValueError(f"amount must be a positive finite number, got {amount!r}")
    if not (limit > 0 and math.isfinite(limit)):
        raise ValueError(f"limit must be a positive finite number, got {limit!r}")


def nohd(amount: float, limit: float, beam_diameter_m: float, divergence_rad: float, aperture_m: float,
         *, form: GrowthForm | None = None, what: str = "NOHD") -> HazardDistance:
    """Nominal ocular hazard distance of a Gaussian beam (1/e diameter a, 1/e full angle phi).

    quadrature: r = sqrt(d_c^2 - a^2) / phi; linear: r = (d_c - a) / phi, with
    d_c = sqrt(4 X / (pi L)). With ``form=None`` both are computed and the longer (the
    quadrature form, since sqrt(d^2 - a^2) >= d - a for d >= a) is reported.

    The exposure counts the whole beam over max(beam area, aperture area): a beam narrower
    than the limiting aperture enters it whole, a wider one is compared at its peak, which is
    never below the share that passes the aperture. So the distance is 0 when d_c is not
    larger than both the exit diameter and the aperture.
    """
    _check_positive(amount, limit)
    working = Working()
    d_c = critical_diameter(amount, limit)
    working.add(f"{what}: critical diameter", "d_c = sqrt(4 X / (pi L))", d_c, "m",
                "IEC TR 60825-14 / ANSI Z136.1 App. B beam-hazard form", X=amount, L=limit)
    if d_c <= aperture_m or d_c <= beam_diameter_m:
        reason = ("the whole beam over the limiting aperture is at or below the limit"
                  if d_c <= aperture_m else "the beam leaves the exit already at or below the limit")
        working.add(f"{what}: no hazard beyond the exit", reason, 0.0, "m", "",
                    d_c=d_c, a=beam_diameter_m, D_ap=aperture_m)
        return HazardDistance(0.0, False, form or "quadrature", {"quadrature": 0.0, "linear": 0.0}, working)
    # A divergence so small that d_c / phi overflows is collimated for every practical purpose.
    if divergence_rad == 0 or not math.isfinite(d_c / divergence_rad):
        working.add(f"{what}: collimated beam", "phi = 0 and d_c > a: the limit is exceeded at any range",
                    "unbounded", "", "", d_c=d_c, a=beam_diameter_m)
        return HazardDistance(None, True, form or "quadrature", {"quadrature": None, "linear": None}, working)
    quadrature = math.sqrt(d_c**2 - beam_diameter_m**2) / divergence_rad
    linear = (d_c - beam_diameter_m) / divergence_rad
    working.add(f"{what}: quadrature growth", "r = sqrt(d_c^2 - a^2) / phi", quadrature, "m",
                "beam growth d(r) = sqrt(a^2 + (phi r)^2)", d_c=d_c, a=beam_diameter_m, phi=divergence_rad)
    working.add(f"{what}: linear growth", "r = (d_c - a) / phi", linear, "m",
                "beam growth d(r) = a + phi r", d_c=d_c, a=beam_diameter_m, phi=divergence_rad)
    chosen: GrowthForm = form or ("quadrature" if quadrature >= linear else "linear")
    distance = quadrature if chosen == "quadrature" else linear
    working.add(f"{what}: reported", f"{chosen} form" + (" (the more conservative)" if form is None else ""),
                distance, "m")
    return HazardDistance(distance, False, chosen, {"quadrature": quadrature, "linear": linear}, working)


def diffuse_hazard_distance(amount: float, limit: float, reflectance: float, viewing_angle_rad: float,
                            ) -> HazardDistance:
    """Distance from a Lambertian spot inside which the reflected exposure exceeds ``limit``.

    A Lambertian surface returns E(r) = rho X cos(theta) / (pi r^2) at distance r and angle
    theta from its normal, so r = sqrt(rho X cos(theta) / (pi L)). The spot is treated as a
    point source (no extended-source relief), which is the conservative reading.
    """
    _check_positive(amount, limit)
    if not 0.0 <= reflectance <= 1.0:
        raise ValueError(f"reflectance must be within 0..1, got {reflectance!r}")
    working = Working()
    cosine = max(0.0, math.cos(viewing_angle_rad))
    distance = math.sqrt(reflectance * amount * cosine / (math.pi * limit))
    working.add("diffuse reflection hazard distance", "r = sqrt(rho X cos(theta) / (pi L))", distance, "m",
                "Lambertian reflector, IEC TR 60825-14 / ANSI Z136.1 App. B diffuse form",
                rho=reflectance, X=amount, theta=viewing_angle_rad, L=limit)
    return HazardDistance(distance, False, "lambertian", {}, working)


def focused_beam_nohd(amount: float, limit: float, lens_beam_diameter_m: float, focal_length_m: float,
                      aperture_m: float) -> HazardDistance:
    """NOHD beyond a lens on the laser, measured from the focal point.

    Past the focus the beam spreads with full angle phi = b / f (b the 1/e diameter at the lens),
    from a waist much smaller than the pupil, so r = (f / b) sqrt(4 X / (pi L)).
    """
    if not (lens_beam_diameter_m > 0 and focal_length_m > 0):
        raise ValueError("lens beam diameter and focal length must be positive")
    divergence = lens_beam_diameter_m / focal_length_m
    working = Working()
    working.add("focused-beam NOHD: divergence after the focus", "phi = b / f", divergence, "rad",
                "thin lens, waist << pupil", b=lens_beam_diameter_m, f=focal_length_m)
    return _with_steps_first(working, nohd(amount, limit, 0.0, divergence, aperture_m, what="focused-beam NOHD"))


def _with_steps_first(working: Working, result: HazardDistance) -> HazardDistance:
    working.extend(result.working)
    return HazardDistance(result.distance_m, result.unbounded, result.form, dict(result.alternatives), working)


def fibre_nohd(amount: float, limit: float, numerical_aperture: float, core_diameter_m: float,
               aperture_m: float) -> HazardDistance:
    """NOHD from the end of a multimode fibre of numerical aperture NA and core diameter a.

    The beam leaves the core (1/e diameter taken as the core) with 1/e full angle
    phi = 2 NA / 1.7, after which the beam formula applies; with a -> 0 it is the
    published r = (1.7 / NA) sqrt(P / (pi MPE)).
    """
    if not 0.0 < numerical_aperture < 1.0:
        raise ValueError(f"numerical aperture must be within 0..1, got {numerical_aperture!r}")
    divergence = 2.0 * numerical_aperture / FIBRE_NA_PER_ONE_OVER_E_HALF_ANGLE
    working = Working()
    working.add("fibre NOHD: 1/e full angle from NA", "phi = 2 NA / 1.7", divergence, "rad",
                "multimode fibre form, ANSI Z136.2 (from memory)", NA=numerical_aperture)
    return _with_steps_first(working, nohd(amount, limit, core_diameter_m, divergence, aperture_m,
                                           what="fibre NOHD"))


def optical_aid_nohd(amount: float, limit: float, beam_diameter_m: float, divergence_rad: float,
                     aperture_m: float, *, objective_diameter_m: float, transmission: float,
                     wavelength_m: float) -> HazardDistance:
    """Extended NOHD for a person looking into the beam through binoculars or a telescope.

    The objective (diameter D_o, transmission tau) gathers the beam over its own area and
    delivers it through an exit pupil no larger than the eye's, so the eye receives
    tau X (D_o / d)^2 while the beam is wider than the objective. Setting that equal to
    L times the aperture area gives the critical diameter sqrt(tau) (D_o / D_ap) d_c. The
    result is never shorter than the unaided NOHD; outside 302.5-4000 nm optics do not
    transmit and the unaided NOHD is returned.
    """
    if not (objective_diameter_m > 0 and 0.0 < transmission <= 1.0):
        raise ValueError("objective diameter must be positive and transmission within (0, 1]")
    unaided = nohd(amount, limit, beam_diameter_m, divergence_rad, aperture_m, what="NOHD (unaided)")
    working = Working()
    low, high = OPTICAL_AID_BAND_M
    if not low <= wavelength_m <= high:
        working.add("optical-aid NOHD", "outside 302.5-4000 nm viewing optics do not transmit; unaided NOHD",
                    unaided.distance_m if not unaided.unbounded else "unbounded", "m", "", lambda_m=wavelength_m)
        return HazardDistance(unaided.distance_m, unaided.unbounded, unaided.form, dict(unaided.alternatives),
                              working)
    gain = transmission * (objective_diameter_m / aperture_m) ** 2
    working.add("optical-aid NOHD: collecting gain", "K = tau (D_o / D_ap)^2", gain, "",
                "magnifying optics gather the beam over the objective (from memory; IEC TR 60825-14)",
                tau=transmission, D_o=objective_diameter_m, D_ap=aperture_m)
    if transmission * amount <= limit * circle_area(aperture_m):
        working.add("optical-aid NOHD: whole beam through the optics", "tau X <= L A_ap: no extra hazard",
                    "unaided NOHD", "")
        aided = unaided
    else:
        aided = nohd(gain * amount, limit, beam_diameter_m, divergence_rad, aperture_m,
                     what="NOHD (with optics)")
        working.extend(aided.working)
    if aided.unbounded or unaided.unbounded:
        return HazardDistance(None, True, aided.form, {"quadrature": None, "linear": None}, working)
    assert aided.distance_m is not None and unaided.distance_m is not None
    if aided.distance_m < unaided.distance_m:
        working.add("optical-aid NOHD", "optics gather less than the eye: unaided NOHD", unaided.distance_m, "m")
        return HazardDistance(unaided.distance_m, False, unaided.form, dict(unaided.alternatives), working)
    return HazardDistance(aided.distance_m, False, aided.form, dict(aided.alternatives), working)
