"""Monte Carlo check of a vehicle's merge probabilities: simulated drivers along its own trajectory, drawn in
batches from one seeded generator, for the active model (:func:`mergecheck.merge_behaviour.simulate`) or the
classic one (:func:`mergecheck.renewal.simulate_merges`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .critical_gaps import CriticalGap
from .headways import HeadwayModel
from .merge_behaviour import CELL, simulate
from .merge_reliability import (
    ActiveCheck,
    MergeReliability,
)
from .renewal import simulate_merges

FloatArray = NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class MonteCarloCheck:
    """Simulated merge probabilities for one design vehicle, beside the analytic ones."""

    merges: int
    by_lane_end: float
    by_taper_end: float
    standard_error: float
    """Largest binomial standard error of the two probabilities. [-]"""


MONTE_CARLO_BATCH = 200_000
"""Drivers simulated at a time: memory stays near 100 MB whatever the count asked for."""


def monte_carlo_check(
    result: MergeReliability,
    check: ActiveCheck | None,
    *,
    lane_end: float,
    taper_end: float,
    headways: HeadwayModel | None,
    critical_gap: CriticalGap,
    count: int,
    seed: int,
    progress: Callable[[int], None] | None = None,
) -> MonteCarloCheck:
    """Simulate ``count`` merging drivers along the vehicle's trajectory (:func:`simulate_merges`, or
    :func:`~mergecheck.merge_behaviour.simulate` for the active model).

    Each simulated driver merges at stream time tau_m; they have merged by station x when
    x is past the eligible station and tau(x) >= tau_m. Drivers are drawn in batches of
    :data:`MONTE_CARLO_BATCH` from one seeded generator, and only the counts merged by the end of
    the lane and of the taper are kept, so memory does not grow with ``count``; ``progress`` is
    called with the number of drivers of each batch done.
    """
    if result.eligible_station is None or headways is None:
        p = (
            [0.0, 0.0]
            if result.eligible_station is None
            else [float(lane_end >= result.eligible_station), float(taper_end >= result.eligible_station)]
        )
        if progress is not None:
            progress(count)
        return MonteCarloCheck(count, p[0], p[1], 0.0)
    rng = np.random.default_rng(seed)
    merged = np.zeros(2, dtype=np.int64)
    for start in range(0, count, MONTE_CARLO_BATCH):
        size = min(MONTE_CARLO_BATCH, count - start)
        merged += _merged_by_ends(result, check, lane_end, taper_end, headways, critical_gap, size, rng)
        if progress is not None:
            progress(size)
    probabilities = [float(m) / count for m in merged]
    error = max(math.sqrt(p * (1 - p) / count) for p in probabilities)
    return MonteCarloCheck(count, probabilities[0], probabilities[1], error)


def _merged_by_ends(
    result: MergeReliability,
    check: ActiveCheck | None,
    lane_end: float,
    taper_end: float,
    headways: HeadwayModel,
    critical_gap: CriticalGap,
    count: int,
    rng: np.random.Generator,
) -> NDArray[np.int64]:
    """How many of ``count`` simulated drivers have merged by the end of the lane and by the end of the taper."""
    assert result.eligible_station is not None
    if check is not None:  # the active model: the same behaviour drawn gap by gap
        c = check
        at = simulate(headways, critical_gap.sample(rng, count), c.rules, 0, rng)
        cell = np.minimum(np.round(np.where(np.isfinite(at), at, 0.0) / CELL).astype(np.intp), c.rules.cells[0] - 1)
        where = np.where(np.isfinite(at), np.interp(c.rules.station[0, cell], c.station, c.crossing), np.inf)
        return np.array([np.count_nonzero(where <= x) for x in (lane_end, taper_end)], dtype=np.int64)
    tau_at = [result.stream_time_at_lane_end, result.stream_time_at_taper_end]
    merged_at = simulate_merges(headways, critical_gap, count, float(tau_at[-1]), rng)
    return np.array(
        [
            np.count_nonzero(merged_at <= t) if x >= result.eligible_station else 0
            for x, t in zip((lane_end, taper_end), tau_at, strict=True)
        ],
        dtype=np.int64,
    )
