"""Benchmark of the assessment: a whole register in one vectorised pass against one emission at a time.

Draws 10,000 mixed emissions (continuous wave, single pulses and trains from nanosecond to
femtosecond, 190 nm to 100 um), each under both limit sets, and times ``assess_many`` over all
20,000 assessments against ``assess`` one at a time on a sample (the one-by-one path takes
minutes for the whole set; its rate is steady, so a sample measures it). Prints assessments per
second and the ratio, then the time to write every emission's record (the JSON, without the
working) from the batch. Run from the project root: ``python bench/assess.py [--emissions N]``.
"""
from __future__ import annotations

import argparse
import time

import numpy as np

from hazards.assessment import Beam, Scenario, assess, assess_many
from hazards.assessment.presentation import Assessment
from hazards.limits import LIMIT_SETS


def mixed_emissions(count: int, seed: int) -> list[Beam]:
    """Emissions of every kind a register holds, with physically sensible figures."""
    generator = np.random.default_rng(seed)
    beams: list[Beam] = []
    for _ in range(count):
        wavelength = float(10.0 ** generator.uniform(np.log10(190e-9), np.log10(100e-6)))
        diameter = float(10.0 ** generator.uniform(-4, -1.7))
        divergence = float(10.0 ** generator.uniform(-4.5, -1.5))
        kind = generator.integers(0, 3)
        if kind == 0:
            beams.append(Beam(wavelength, float(10.0 ** generator.uniform(-4, 3)), diameter, divergence))
            continue
        duration = float(10.0 ** generator.uniform(-14, -3))
        energy = float(10.0 ** generator.uniform(-9, 0))
        if kind == 1:
            beams.append(Beam(wavelength, None, diameter, divergence, "1/e2", energy, duration))
            continue
        prf = float(10.0 ** generator.uniform(0, 8))
        if duration * prf >= 0.5:
            prf = 0.1 / duration
        beams.append(Beam(wavelength, None, diameter, divergence, "1/e2", energy, duration, prf))
    return beams


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--emissions", type=int, default=10_000, help="emissions drawn (each under every limit set)")
    parser.add_argument("--sample", type=int, default=300, help="assessments timed one at a time")
    args = parser.parse_args()

    beams = mixed_emissions(args.emissions, seed=1)
    pairs = [(beam, Scenario(limits=limits)) for beam in beams for limits in LIMIT_SETS]
    assess_many(beams[:5], Scenario())  # load the limit-set files once, outside the timing

    start = time.perf_counter()
    batch = assess_many([beam for beam, _ in pairs], [scenario for _, scenario in pairs])
    batch_seconds = time.perf_counter() - start

    sample = pairs[:: max(1, len(pairs) // args.sample)][: args.sample]
    start = time.perf_counter()
    for beam, scenario in sample:
        assess(beam, scenario)
    single_rate = len(sample) / (time.perf_counter() - start)

    start = time.perf_counter()
    for index in range(len(pairs)):
        Assessment(batch, index).to_dict(working=False)
    records_seconds = time.perf_counter() - start

    batch_rate = len(pairs) / batch_seconds
    print(f"{args.emissions:,} emissions x {len(LIMIT_SETS)} limit sets = {len(pairs):,} assessments")
    print(f"assess_many:      {batch_seconds:6.2f} s, {batch_rate:,.0f} assessments/s")
    print(f"one by one:       {len(sample)} sampled, {single_rate:,.0f} assessments/s "
          f"(the whole set would take {len(pairs) / single_rate:,.0f} s)")
    print(f"ratio:            {batch_rate / single_rate:,.0f}x")
    print(f"records (JSON without the working) from the batch: {records_seconds:.2f} s, "
          f"{len(pairs) / records_seconds:,.0f}/s")


if __name__ == "__main__":
    main()
