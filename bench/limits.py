"""Benchmark of the exposure-limit engine: vectorised against point by point.

Evaluates 1,000,000 (wavelength, duration) points in one call and 10,000 points one call
each, and prints the evaluations per second of both and their ratio. Run from the project
root: ``python bench/limits.py [--limits eu2006] [--tissue skin]``.
"""
from __future__ import annotations

import argparse
import time

import numpy as np

from hazards.limits import DEFAULT_LIMITS, LIMIT_SETS, exposure_limit

VECTOR_POINTS = 1_000_000
SCALAR_POINTS = 10_000


def random_points(count: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Wavelengths and durations spread evenly in logarithm over the whole domain."""
    generator = np.random.default_rng(seed)
    wavelength = 10.0 ** generator.uniform(np.log10(180e-9), np.log10(1e-3), count)
    duration = 10.0 ** generator.uniform(-13.0, np.log10(3e4), count)
    return wavelength, duration


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--limits", choices=LIMIT_SETS, default=DEFAULT_LIMITS)
    parser.add_argument("--tissue", choices=("eye", "skin"), default="eye")
    args = parser.parse_args()

    wavelength, duration = random_points(VECTOR_POINTS, seed=1)
    exposure_limit(wavelength[:10], duration[:10], tissue=args.tissue, limits=args.limits)  # load the data file
    start = time.perf_counter()
    exposure_limit(wavelength, duration, tissue=args.tissue, limits=args.limits)
    vector_rate = VECTOR_POINTS / (time.perf_counter() - start)

    wavelength, duration = random_points(SCALAR_POINTS, seed=2)
    start = time.perf_counter()
    for point_wavelength, point_duration in zip(wavelength.tolist(), duration.tolist()):
        exposure_limit(point_wavelength, point_duration, tissue=args.tissue, limits=args.limits)
    scalar_rate = SCALAR_POINTS / (time.perf_counter() - start)

    print(f"limit set {args.limits}, tissue {args.tissue}")
    print(f"vectorised:     {VECTOR_POINTS:>9,} points, {vector_rate:,.0f} evaluations/s")
    print(f"point by point: {SCALAR_POINTS:>9,} points, {scalar_rate:,.0f} evaluations/s (with the working)")
    print(f"ratio: {vector_rate / scalar_rate:,.0f}x")


if __name__ == "__main__":
    main()
