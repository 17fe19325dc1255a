"""Benchmark: site assessments per second, batch (all cores) against the per-site path (one core).

Run: ``python benchmarks/batch.py [--sites N] [--workers W]`` (prints figures; not a test). The
target is 10,000 generated sites; each has three design vehicles, the speed check and the analytic
merge reliability. Sites arrive loaded (as from files already parsed); the time counts their
validation, turning them into sites, the assessment and, in the batch, bringing results back from
the workers.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from mergecheck.batch import SiteEntry, assess_all, assess_entry


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
                "adjacent_lane_flow": f"{rng.uniform(300, 1600):.3f} veh/h",  # no two sites alike
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
        entries.append(SiteEntry.given(f"generated {i}", site))
    return entries


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sites", type=int, default=10_000)
    parser.add_argument("--workers", type=int, default=None, help="worker processes (default: all cores)")
    args = parser.parse_args()
    count = args.sites
    entries = generated(count)
    start = time.perf_counter()
    results = assess_all(entries, workers=args.workers)
    batch = time.perf_counter() - start
    assert all(r.assessment is not None for r in results), "every generated site is readable"
    sample = entries[: max(1, min(count, 50))]
    start = time.perf_counter()
    for entry in sample:
        assess_entry(entry)
    single = (time.perf_counter() - start) / len(sample)
    print(
        f"batch ({args.workers or 'all'} cores): {count} sites in {batch:.1f} s, {count / batch:.1f} sites per second"
    )
    print(f"per-site path (one core): {1 / single:.1f} sites per second ({len(sample)} sites timed)")


if __name__ == "__main__":
    main()
