"""The classic merge model (Drew's formulation, kept for comparison with the active model of
:mod:`mergecheck.merge_behaviour`): a renewal process in stream time (:mod:`mergecheck.stream_time`).

Given t_c, the driver starts beside a gap drawn length-biased (inspection paradox), at a uniform position
in it: it is accepted at once if its whole length is at least t_c; otherwise the rest of it, r, passes
(density w(r) = (S(r) - S(t_c)) / mu for r < t_c, S the headway survival function, mu the mean headway)
and each later gap is accepted or passes in full. With U(tau) the probability of not having merged within
tau after entering a fresh gap,

.. math::

    U(\\tau) = \\int_0^{t_c} f(h) \\left[1\\{h > \\tau\\} + 1\\{h \\le \\tau\\} U(\\tau - h)\\right] dh        (2)

    P_{not}(\\tau) = \\int_\\tau^{t_c} w(r)\\, dr + \\int_0^{\\min(\\tau, t_c)} w(r)\\, U(\\tau - r)\\, dr   (3)

and the probability of having merged by station x is 1 - E_{t_c}[P_not(tau(x))], the expectation taken
by Gauss-Hermite quadrature over the log-normal (:mod:`mergecheck.critical_gaps`). Eqs. (2) and (3) are
solved on a grid in tau, the headway distribution as a probability mass per cell, by damped Fourier
transforms (:class:`Renewal`); :func:`simulate_merges` checks both by Monte Carlo.

References
----------
Drew, D. R. (1968). Traffic Flow Theory and Control, McGraw-Hill, ch. 9 (gap acceptance and merging;
from memory). Cowan (1975) and Tanner (1962): see :mod:`mergecheck.headways`.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .critical_gaps import CriticalGap
from .headways import HeadwayModel

FloatArray = NDArray[np.float64]

FIRST_REACH = 20.0
"""Stream time solved first; most drivers who merge at all have merged by then. [s]"""


@dataclass(frozen=True, slots=True)
class Renewal:
    """Eqs. (2)-(3) solved on a grid in tau for the critical-gap distributions of one stream.

    Cell j of the grid holds headways in [(j - 1/2) dt, (j + 1/2) dt), placed
    at j dt. For a node t_c, Eq. (2) becomes the discrete renewal equation

    .. math:: U_i = d_i + \\sum_{j \\ge 0} r_j U_{i-j}, \\qquad d_i = \\sum_{j > i} r_j

    with r_j the mass of gaps shorter than t_c in cell j (a survival
    difference, exact). For Eq. (3) the residual r of the length-biased first
    gap, density (S(r) - S(t_c)) / mu for r < t_c, is integrated exactly over
    cell [i dt, (i + 1) dt) and counted as passed at the end of the cell
    (w_{i+1}): exact at tau = 0, at most one cell late after (conservative),
    so that P_not,i = (w * U)_i + sum_{m > i} w_m.

    Both convolutions are solved by the discrete Fourier transform,
    U^ = d^ / (1 - r^), P^ = w^ U^, mixed over each distribution's nodes
    before the inverse transform, for many nodes and streams in one call.
    Circular wrap-around is suppressed by an exponential window: every
    sequence is multiplied by rho^i with rho^N = 1e-10 (N the transform
    length, at least 1.25 times the cells solved), which the recursion
    tolerates unchanged, and divided out after; wrap-around then weighs at
    most 1e-10 and rounding is magnified at most 1e8-fold (errors near 1e-8)
    (the damped inversion of generating functions: Abate and Whitt 1992,
    "Numerical inversion of probability generating functions", Operations
    Research Letters 12(4), 245-251, from memory).
    """

    step: float
    """Grid step dt. [s]"""
    values: FloatArray
    """Mixed P_not at each cell, one row per critical-gap distribution."""

    @property
    def reach(self) -> float:
        """Largest stream time solved. [s]"""
        return float((self.values.shape[1] - 1) * self.step)

    def not_merged(self, tau: FloatArray, which: int = 0) -> FloatArray:
        """P_not of distribution ``which`` at stream times within the solved range (linear between cells). [-]"""
        cells = np.arange(self.values.shape[1]) * self.step
        return np.asarray(np.interp(tau, cells, self.values[which]), dtype=float)


@dataclass(frozen=True, slots=True)
class _CellMasses:
    """The sequences of :class:`Renewal` for one stream: every node of every distribution asked for."""

    step: float
    cells: int
    rejected: FloatArray
    """(K, J) r_j per node."""
    first_gap: FloatArray
    """(K, J) w_{j+1} per node."""
    weights: FloatArray
    """(K,) quadrature weight of each node within its distribution."""
    nodes: tuple[int, ...]
    """How many nodes each distribution has (consecutive rows)."""


def _cell_masses(
    headways: HeadwayModel, critical_gaps: Sequence[CriticalGap], reach: float, step: float | None = None
) -> _CellMasses:
    nodes = [gap.nodes() for gap in critical_gaps]
    gaps = np.concatenate([g for g, _ in nodes])
    mu = headways.mean()
    dt = step or min(0.05, mu / 40.0)
    width = math.ceil(float(gaps.max()) / dt + 0.5) + 1  # cells reaching the largest t_c, and one more
    lower = np.maximum((np.arange(width) - 0.5) * dt, 0.0)
    upper = np.minimum((np.arange(width) + 0.5) * dt, gaps[:, None])  # (K, J): cell cut at t_c
    rejected = np.where(lower < gaps[:, None], headways.survival(lower) - headways.survival(upper), 0.0)
    start = np.arange(width) * dt
    end = np.maximum(np.minimum(start + dt, gaps[:, None]), start)
    area = headways.survival_integral(end) - headways.survival_integral(start)
    w = np.clip(area - headways.survival(gaps)[:, None] * (end - start), 0.0, None) / mu
    return _CellMasses(
        step=dt,
        cells=math.ceil(max(reach, dt) / dt) + 1,
        rejected=np.maximum(rejected, 0.0),
        first_gap=w,
        weights=np.concatenate([w for _, w in nodes]),
        nodes=tuple(g.size for g, _ in nodes),
    )


def _solve(streams: Sequence[_CellMasses]) -> list[Renewal]:
    """The damped-FFT solution (:class:`Renewal`) for several streams in one transform."""
    from scipy.fft import irfft, next_fast_len, rfft  # the classic model only: not imported by every start

    width = max(s.rejected.shape[1] for s in streams)
    size = next_fast_len(max(max(math.ceil(1.25 * s.cells), s.rejected.shape[1] + 2) for s in streams), real=True)
    window = _window(size)
    rows = sum(s.rejected.shape[0] for s in streams)
    sequences = np.zeros((3, rows, size))
    first_gap = np.zeros((rows, width))
    row = 0
    for s in streams:
        k, j = s.rejected.shape
        sequences[0, row : row + k, :j] = s.rejected * window[:j]
        tail = np.cumsum(s.rejected[:, ::-1], axis=1)[:, ::-1]  # sum over cells >= index
        sequences[1, row : row + k, : j - 1] = tail[:, 1:] * window[: j - 1]
        sequences[2, row : row + k, 1 : j + 1] = s.first_gap * window[1 : j + 1]  # placed at index i + 1
        first_gap[row : row + k, :j] = s.first_gap
        row += k
    weights = np.concatenate([s.weights for s in streams])[:, None]
    bounds = np.cumsum([0] + [n for s in streams for n in s.nodes])[:-1]  # first row of each distribution
    r, d, first = rfft(sequences, axis=-1)
    mixed = irfft(np.add.reduceat(weights * (first * d / (1.0 - r)), bounds, axis=0), n=size, axis=-1) / window
    passing = np.cumsum(first_gap[:, ::-1], axis=1)[:, ::-1]  # residual still passing at cell i: sum of w beyond i
    mixed[:, :width] += np.add.reduceat(weights * passing, bounds, axis=0)
    solutions, at = [], 0
    for s in streams:
        values = np.clip(mixed[at : at + len(s.nodes), : s.cells], 0.0, 1.0)
        values.flags.writeable = False
        solutions.append(Renewal(s.step, values))
        at += len(s.nodes)
    return solutions


@functools.lru_cache(maxsize=64)
def _window(size: int) -> FloatArray:
    """rho^i with rho^size = 1e-10 (Renewal)."""
    window = 10.0 ** (-10.0 * np.arange(size) / size)
    window.flags.writeable = False
    return window


_BATCH_CELLS = 200_000
"""Node rows times transform length solved in one call, at most (memory)."""


def solve_renewals(
    requests: Sequence[tuple[HeadwayModel, CriticalGap, float]],
) -> list[tuple[Renewal, int]]:
    """Solve (headways, critical gap, reach) requests: one :class:`Renewal` per stream, shared by its requests.

    The vehicles of a site share a stream and often a critical gap; one solution serves them all,
    as far as the farthest reach asked of it. Streams of similar length are transformed together.
    Returns, per request, its solution and row.
    """
    streams: dict[HeadwayModel, dict[CriticalGap, None]] = {}
    reach: dict[HeadwayModel, float] = {}
    for headways, gap, needed in requests:
        streams.setdefault(headways, {})[gap] = None
        reach[headways] = max(reach.get(headways, 0.0), needed)
    masses = {h: _cell_masses(h, list(gaps), reach[h]) for h, gaps in streams.items()}
    solved: dict[HeadwayModel, Renewal] = {}
    batch: list[HeadwayModel] = []
    for h in sorted(masses, key=lambda h: masses[h].cells):  # shortest first: a batch's longest sets its size
        work = masses[h].rejected.shape[0] * 2 * masses[h].cells  # node rows times transform length, about
        if batch and (len(batch) + 1) * work >= _BATCH_CELLS:
            solved |= dict(zip(batch, _solve([masses[b] for b in batch]), strict=True))
            batch = []
        batch.append(h)
    if batch:
        solved |= dict(zip(batch, _solve([masses[b] for b in batch]), strict=True))
    return [(solved[h], list(streams[h]).index(gap)) for h, gap, _ in requests]


def not_merged(
    headways: HeadwayModel, critical_gap: CriticalGap, tau: FloatArray, step: float | None = None
) -> FloatArray:
    """Probability of not having merged after stream time tau, Eqs. (2)-(3) (see :class:`Renewal`). [-]

    Parameters
    ----------
    headways
        Headway model of the adjacent lane.
    critical_gap
        Distribution of t_c across drivers.
    tau
        Stream times at which to evaluate (any order, not negative). [s]
    step
        Grid step in tau; default min(0.05 s, mean headway / 40). [s]
    """
    tau = np.asarray(tau, dtype=float)
    return _solve([_cell_masses(headways, [critical_gap], float(tau.max(initial=0.0)), step)])[0].not_merged(tau)


def simulate_merges(
    headways: HeadwayModel, critical_gap: CriticalGap, count: int, tau_limit: float, rng: np.random.Generator
) -> FloatArray:
    """Monte Carlo: stream time at which each of ``count`` drivers merges (inf if after tau_limit). [s]

    Each driver draws t_c; the stream is simulated as sampled headways; the
    driver starts beside a length-biased gap at a uniform position in it
    (drawn by resampling a large pool of headways in proportion to length)
    and merges at the first gap not shorter than t_c. Vectorised over drivers.
    """
    tc = critical_gap.sample(rng, count)
    pool = headways.sample(rng, 20 * count)
    first = rng.choice(pool, size=count, p=pool / pool.sum())
    merged_at = np.where(first >= tc, 0.0, np.inf)
    clock = np.where(first >= tc, 0.0, rng.random(count) * first)  # rest of the first gap passes
    active = np.flatnonzero(~np.isfinite(merged_at))
    while active.size:
        h = headways.sample(rng, active.size)
        accept = h >= tc[active]
        merged_at[active[accept]] = clock[active[accept]]
        clock[active] += h
        keep = ~accept & (clock[active] <= tau_limit)
        active = active[keep]
    return np.where(merged_at <= tau_limit, merged_at, np.inf)
