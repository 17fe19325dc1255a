"""Benchmark: trajectories per second, one solver call at a time and all integrated at once.

Run: ``python benchmarks/trajectories.py`` (prints figures; not a test).
"""

from __future__ import annotations

import itertools
import time

from mergecheck.profile import GradeChange, VerticalProfile
from mergecheck.trajectory import Run, accelerate, accelerate_many
from mergecheck.vehicles import load_bundled

PROFILES = {
    "level": VerticalProfile.constant(0.0),
    "3 % upgrade": VerticalProfile.constant(0.03),
    "5 % then 1 %, 150 m curve": VerticalProfile(0.05, (GradeChange(250.0, 0.01, 150.0),)),
    "-2 % then 4 %": VerticalProfile(-0.02, (GradeChange(200.0, 0.04, 0.0),)),
}
CASES = [(0.0, 80 / 3.6), (50 / 3.6, 95 / 3.6)]


def main() -> None:
    vehicles = load_bundled()
    runs = [
        Run(vehicle.model, profile, v0, v1, through=600.0)
        for vehicle, profile, (v0, v1) in itertools.product(vehicles, PROFILES.values(), CASES)
    ]
    start = time.perf_counter()
    for run in runs:
        accelerate(run.model, run.profile, run.initial_speed, run.target_speed, through=run.through)
    one = time.perf_counter() - start
    many = runs * 50
    start = time.perf_counter()
    accelerate_many(many)
    together = time.perf_counter() - start
    print(f"{len(runs)} trajectories ({len(vehicles)} vehicles x {len(PROFILES)} profiles x {len(CASES)} speed pairs)")
    print(f"one at a time: {len(runs) / one:.1f} trajectories per second (single core)")
    print(f"{len(many)} at once: {len(many) / together:.0f} trajectories per second (single core)")


if __name__ == "__main__":
    main()
