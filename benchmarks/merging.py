"""Benchmark: analytic merge-probability evaluations and Monte Carlo merges per second.

Run: ``python benchmarks/merging.py`` (prints figures; not a test).
"""

from __future__ import annotations

import time

import numpy as np

from mergecheck.critical_gaps import CriticalGap
from mergecheck.headways import CowanM3
from mergecheck.renewal import not_merged, simulate_merges

STREAMS = [CowanM3.tanner(q / 3600, 1.0) for q in (600, 1000, 1400, 1800)]
GAP = CriticalGap(3.0, 0.8)
TAU = np.linspace(0.0, 30.0, 301)


def main() -> None:
    start = time.perf_counter()
    rounds = 10
    for _ in range(rounds):
        for stream in STREAMS:
            not_merged(stream, GAP, TAU)
    elapsed = time.perf_counter() - start
    evaluations = rounds * len(STREAMS)
    nodes = GAP.nodes()[0].size
    print(
        f"analytic: {evaluations} merge-probability curves ({nodes}-node critical-gap quadrature, 30 s of stream time)"
    )
    print(f"  {elapsed:.2f} s, {evaluations / elapsed:.1f} curves per second")

    count = 100_000
    start = time.perf_counter()
    for i, stream in enumerate(STREAMS):
        simulate_merges(stream, GAP, count, 30.0, np.random.default_rng(i))
    elapsed = time.perf_counter() - start
    print(f"Monte Carlo: {len(STREAMS)} sites x {count:,} merging drivers")
    print(
        f"  {elapsed:.2f} s, {len(STREAMS) * count / elapsed:,.0f} merges per second, {elapsed / len(STREAMS):.2f} s per site"
    )


if __name__ == "__main__":
    main()
