"""Benchmark: site assessments per second, batch (all cores) against the per-site path (one core).

Run: ``python benchmarks/batch.py [--sites N]`` (prints figures; not a test). The issue's target is
10,000 generated sites; each has three design vehicles, speed check and analytic merge reliability.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from mergecheck.batch import SiteEntry, assess_all, assess_entry
from mergecheck.site import SiteInput


def generated(count: int, seed: int = 7) -> list[SiteEntry]:
    """Invented sites with random speeds, flows, lengths and grades (demonstration data)."""
    rng = np.random.default_rng(seed)
    entries = []
    for i in range(count):
        design = int(rng.choice([90, 100, 110, 120]))
        site = {
            "name": f"Generated site {i}",
            "mainline": {
                "design_speed": f"{design} km/h",
                "operating_speed": f"{design - 8} km/h",
                "lanes": int(rng.integers(2, 5)),
                "adjacent_lane_flow": f"{rng.uniform(300, 1600):.0f} veh/h",
            },
            "ramp": {
                "controlling_speed": f"{rng.choice([40, 50, 60]):.0f} km/h",
                "flow": f"{rng.uniform(200, 900):.0f} veh/h",
                "vehicles": {"passenger-car": 0.85, "single-unit-truck": 0.05, "semitrailer-fleet": 0.10},
            },
            "geometry": {
                "entrance": "parallel",
                "curve_end_to_convergence": f"{rng.uniform(40, 200):.0f} m",
                "lane_length": f"{rng.uniform(150, 500):.0f} m",
                "taper_length": "90 m",
                "profile": [{"from": "0 m", "grade": f"{rng.uniform(-3, 5):.1f} %"}],
            },
        }
        entries.append(SiteEntry(f"generated {i}", SiteInput.model_validate(site), None))
    return entries


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sites", type=int, default=10_000)
    count = parser.parse_args().sites
    entries = generated(count)
    start = time.perf_counter()
    assess_all(entries)
    batch = time.perf_counter() - start
    sample = entries[: max(1, min(count, 50))]
    start = time.perf_counter()
    for entry in sample:
        assess_entry(entry)
    single = (time.perf_counter() - start) / len(sample)
    print(f"batch (all cores): {count} sites in {batch:.1f} s, {count / batch:.1f} sites per second")
    print(f"per-site path (one core): {1 / single:.1f} sites per second ({len(sample)} sites timed)")


if __name__ == "__main__":
    main()
