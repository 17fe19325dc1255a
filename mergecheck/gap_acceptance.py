"""Merge reliability: the probability of finding an acceptable gap along the lane.

Two behaviours: the active model of :mod:`mergecheck.merge_behaviour` (the default for a site) and the
classic model described here (Drew's formulation, kept for comparison). Both give their results in the
same :class:`MergeReliability`.

A merging driver beside the adjacent through lane accepts the first gap (time
headway of the stream) not shorter than their critical gap t_c, which varies
across drivers (log-normal). Gaps pass a merging vehicle at the rate the
stream overtakes it (moving-observer relation): with density k = q / v_m, the
number of stream vehicles passing per unit of the merging vehicle's travel is
k |v_m - v_r| / v_r. Measured in stream time (the headway time that has
passed the merging vehicle),

.. math:: \\tau(x) = \\int_{x_a}^{x} \\frac{\\max(|v_m - v_r(x')|,\\, \\Delta v_s)}{v_m\\, v_r(x')} dx'      (1)

from the station x_a where the vehicle may first merge (past the convergence
point and within the minimum-merge-speed differential of the stream). The
search speed Delta v_s is an explicit assumption: a driver matched to the
stream's speed adjusts speed to search, so that gaps keep passing at least at
that relative speed. Once at merge speed, the driver holds it.

Given t_c, merging is a renewal process in tau. The driver starts beside a
gap drawn length-biased (inspection paradox), at a uniform position in it: it
is accepted at once if its whole length is at least t_c; otherwise the rest
of it, r, passes (density w(r) = (S(r) - S(t_c)) / mu for r < t_c, S the
headway survival function, mu the mean headway) and each later gap is
accepted or passes in full. With U(tau) the probability of not having merged
within tau after entering a fresh gap,

.. math::

    U(\\tau) = \\int_0^{t_c} f(h) \\left[1\\{h > \\tau\\} + 1\\{h \\le \\tau\\} U(\\tau - h)\\right] dh        (2)

    P_{not}(\\tau) = \\int_\\tau^{t_c} w(r)\\, dr + \\int_0^{\\min(\\tau, t_c)} w(r)\\, U(\\tau - r)\\, dr   (3)

and the probability of having merged by station x is
1 - E_{t_c}[P_not(tau(x))], the expectation taken by Gauss-Hermite
quadrature over the log-normal (8 nodes). Eqs. (2) and (3) are solved on a
grid in tau, the headway distribution as a probability mass per cell, by
damped Fourier transforms (:class:`Renewal`); :func:`simulate_merges`
checks both by Monte Carlo.

References
----------
Drew, D. R. (1968). Traffic Flow Theory and Control, McGraw-Hill, ch. 9 (gap
acceptance and merging; from memory). Cowan (1975) and Tanner (1962): see
:mod:`mergecheck.headways`.
"""

from __future__ import annotations

import functools
import importlib.resources
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Literal, NamedTuple

import numpy as np
import yaml
from numpy.typing import NDArray

from .headways import HeadwayModel, mean_wait
from .merge_behaviour import CELL, MergeBehaviour, Rules, rule_along, simulate, solve

FloatArray = NDArray[np.float64]
_NODES = 8  # Gauss-Hermite nodes over the log-normal critical gap (within 3e-5 of 24 nodes)
ACTIVE_NODES = 5
"""Gauss-Hermite nodes over the critical gap in the active model (lengths within about 1 % of 8 nodes)."""
FIRST_REACH = 20.0
"""Stream time solved first; most drivers who merge at all have merged by then. [s]"""


@dataclass(frozen=True, slots=True)
class CriticalGap:
    """Critical gap across drivers: log-normal with this mean and standard deviation. [s]"""

    mean: float
    sd: float
    source: str = ""

    def __post_init__(self) -> None:
        if not (self.mean > 0 and self.sd >= 0):
            raise ValueError("critical gap mean must be positive and its standard deviation not negative")

    @property
    def log_parameters(self) -> tuple[float, float]:
        """(mu, sigma) of ln t_c: sigma^2 = ln(1 + (sd/mean)^2), mu = ln(mean) - sigma^2/2."""
        sigma2 = math.log1p((self.sd / self.mean) ** 2)
        return math.log(self.mean) - sigma2 / 2, math.sqrt(sigma2)

    def nodes(self, count: int = _NODES) -> tuple[FloatArray, FloatArray]:
        """Quadrature nodes and weights over the distribution (Gauss-Hermite in ln t_c)."""
        mu, sigma = self.log_parameters
        if sigma == 0:
            return np.array([self.mean]), np.array([1.0])
        x, w = _hermite_nodes(count)
        return np.exp(mu + sigma * x), w

    def sample(self, rng: np.random.Generator, size: int) -> FloatArray:
        mu, sigma = self.log_parameters
        return rng.lognormal(mu, sigma, size)


@functools.cache
def _hermite_nodes(count: int) -> tuple[FloatArray, FloatArray]:
    """Gauss-Hermite (probabilists') nodes and weights normalised to sum 1 (numpy.polynomial.hermite_e)."""
    x, w = np.polynomial.hermite_e.hermegauss(count)
    x.flags.writeable = False
    w = w / w.sum()
    w.flags.writeable = False
    return x, w


@dataclass(frozen=True, slots=True)
class CriticalGapDefaults:
    at_speed: CriticalGap
    from_stop: CriticalGap


@functools.cache
def _critical_gap_data() -> dict[str, dict[str, dict[str, str]]]:
    text = (importlib.resources.files("mergecheck.data") / "critical-gaps.yaml").read_text(encoding="utf-8")
    data: dict[str, dict[str, dict[str, str]]] = yaml.safe_load(text)
    return data


def default_critical_gaps(category: str) -> CriticalGapDefaults:
    """Default critical gaps for a design-vehicle category (``mergecheck/data/critical-gaps.yaml``)."""
    data = _critical_gap_data()

    def gap(entry: dict[str, str]) -> CriticalGap:
        return CriticalGap(float(entry["mean"].split()[0]), float(entry["sd"].split()[0]), entry["source"])

    return CriticalGapDefaults(gap(data["at_speed"][category]), gap(data["from_stop"][category]))


def stream_time(
    station: FloatArray,
    speed: FloatArray,
    stream_speed: float,
    search_speed: float,
    eligible_from: float,
    hold_speed: float,
) -> FloatArray:
    """tau(x) of Eq. (1) at each station; 0 before the eligible station. [s]

    Parameters
    ----------
    station, speed
        The merging vehicle's trajectory. [m], [m/s]
    stream_speed
        v_m. [m/s]
    search_speed
        Delta v_s, the least relative speed at which gaps pass. [m/s]
    eligible_from
        x_a, where merging may begin. [m]
    hold_speed
        The driver holds this speed once reached (the merge speed). [m/s]
    """

    def row(value: float) -> FloatArray:
        return np.array([value], dtype=float)

    tau = _stream_times(
        np.asarray(station, dtype=float)[None],
        np.asarray(speed, dtype=float)[None],
        row(stream_speed),
        row(search_speed),
        row(eligible_from),
        row(hold_speed),
    )
    return np.asarray(tau[0], dtype=float)


def _stream_times(
    station: FloatArray,
    speed: FloatArray,
    stream_speed: FloatArray,
    search_speed: FloatArray,
    eligible_from: FloatArray,
    hold_speed: FloatArray,
) -> FloatArray:
    """:func:`stream_time` for every row of (vehicles, stations) arrays; one value per row for the rest.

    Trapezoidal rule between stations; the segment that crosses x_a counts
    only its part past x_a.
    """
    v = np.minimum(np.maximum(speed, 0.1), hold_speed[:, None])
    vm = stream_speed[:, None]
    rate = np.maximum(np.abs(vm - v), search_speed[:, None]) / (vm * v)
    past = station >= eligible_from[:, None]
    rate = np.where(past, rate, 0.0)
    tau = np.zeros_like(station)
    tau[:, 1:] = np.cumsum(0.5 * (rate[:, 1:] + rate[:, :-1]) * np.diff(station, axis=1), axis=1)
    rows = np.arange(station.shape[0])
    first = np.argmax(past, axis=1)
    crossed = first > 0  # (a row that never becomes eligible has x_a = inf and no station past it)
    partial = np.where(crossed, (station[rows, first] - np.where(crossed, eligible_from, 0.0)) * rate[rows, first], 0.0)
    return np.asarray(np.where(past, tau - tau[rows, first][:, None] + partial[:, None], 0.0), dtype=float)


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


@functools.lru_cache(maxsize=64)
def stopped_wait(headways: HeadwayModel, critical_gap: CriticalGap) -> float:
    """Mean wait of a stopped driver for a gap, mixed over drivers (:func:`mergecheck.headways.mean_wait`). [s]"""
    gaps, weights = critical_gap.nodes()
    return float(np.einsum("k,k->", weights, mean_wait(headways, gaps)))


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


@dataclass(frozen=True, slots=True)
class MergeCurve:
    """The probability of having merged along the path."""

    station: FloatArray
    """Stations along the path. [m]"""
    probability: FloatArray
    """Probability of having merged by each station. [-]"""
    stream_time: FloatArray
    """tau(x) of Eq. (1) at each station (0 before the eligible station). [s]"""


@dataclass(frozen=True, slots=True, kw_only=True)
class MergeReliability:
    """How likely one design vehicle is to complete its merge, and what happens to those who do not."""

    curve: MergeCurve | None
    """The probability along the path; None once dropped (batch results keep the figures only)."""
    stream_time_at_lane_end: float
    stream_time_at_taper_end: float
    """tau of Eq. (1) at the end of the lane and of the taper. [s]"""
    eligible_station: float | None
    """Where merging may begin; None if the vehicle never gets within the minimum merge speed. [m]"""
    by_lane_end: float
    by_taper_end: float
    reliability: float
    """Target probability of merging by the end of the lane. [-]"""
    length_for_reliability: float | None
    """Lane length (from the convergence point) giving the target probability; None beyond the search range. [m]"""
    forced_merges_per_h: float
    """Vehicles of this class merging in the taper. [veh/h]"""
    stops_per_h: float
    """Vehicles of this class reaching the end of the taper without merging. [veh/h]"""
    mean_stopped_wait: float
    """Mean wait of a stopped vehicle for a gap (from-stop critical gap). [s]"""
    model: Literal["active", "classic"] = "classic"
    """Which merge behaviour the probability assumes (:mod:`mergecheck.merge_behaviour` or this module's)."""
    unhurried: MergeCurve | None = None
    """Active model: the probability on a lane imagined long enough, without the lane-end pressure and forced
    merges; the length for the target reliability is read from it. None for the classic model or once dropped."""
    check: ActiveCheck | None = None
    """Active model: what a Monte Carlo of the same behaviour needs; None for the classic model or once dropped."""


@dataclass(frozen=True, slots=True)
class ActiveCheck:
    """The site rule of one vehicle under the active model, and where a merge decided at a station is complete."""

    rules: Rules
    """One row: the rule at the site (lane-end pressure, forced merges)."""
    station: FloatArray
    crossing: FloatArray
    """Station where a lane change decided at each of ``station`` is half done. [m]"""


@dataclass(frozen=True, slots=True, kw_only=True)
class MergeSetting:
    """What one design vehicle's merge probability depends on besides its speeds (SI units).

    See :func:`merge_reliability` for each field.
    """

    convergence: float
    lane_end: float
    taper_end: float
    stream_speed: float
    merge_speed: float
    minimum_merge_speed: float
    search_speed: float
    headways: HeadwayModel | None
    critical_gap: CriticalGap
    stop_critical_gap: CriticalGap
    reliability: float
    flow: float
    search_length: float = 3000.0
    behaviour: MergeBehaviour | None = None
    """The active model's parameters; None for the classic model."""
    taper_start: float | None = None
    """End of the full-width lane, where the lane-end pressure points (active model); default ``lane_end``. [m]"""


def merge_reliability(
    station: FloatArray,
    speed: FloatArray,
    *,
    convergence: float,
    lane_end: float,
    taper_end: float,
    stream_speed: float,
    merge_speed: float,
    minimum_merge_speed: float,
    search_speed: float,
    headways: HeadwayModel | None,
    critical_gap: CriticalGap,
    stop_critical_gap: CriticalGap,
    reliability: float,
    flow: float,
    search_length: float = 3000.0,
    behaviour: MergeBehaviour | None = None,
    taper_start: float | None = None,
) -> MergeReliability:
    """Merge probability along the lane for one design vehicle (module docstring, Eqs. 1-3; with
    ``behaviour``, the active model of :mod:`mergecheck.merge_behaviour`).

    The trajectory is extended beyond its last sample at its last speed (the
    vehicle has then settled at its crawl speed or holds its merge speed), up
    to ``search_length`` past the convergence point, to find the lane length
    that gives the target reliability. The returned curve runs as far as the
    probability was solved: past the end of the taper and FIRST_REACH of
    stream time, and on to the end of the search when the target is not met
    by then. ``headways`` None means an empty adjacent lane: every vehicle
    merges where it becomes eligible.
    """
    setting = MergeSetting(
        convergence=convergence,
        lane_end=lane_end,
        taper_end=taper_end,
        stream_speed=stream_speed,
        merge_speed=merge_speed,
        minimum_merge_speed=minimum_merge_speed,
        search_speed=search_speed,
        headways=headways,
        critical_gap=critical_gap,
        stop_critical_gap=stop_critical_gap,
        reliability=reliability,
        flow=flow,
        search_length=search_length,
        behaviour=behaviour,
        taper_start=taper_start,
    )
    return merge_reliabilities([station], [speed], [setting])[0]


def merge_reliabilities(
    stations: Sequence[FloatArray], speeds: Sequence[FloatArray], settings: Sequence[MergeSetting]
) -> list[MergeReliability]:
    """:func:`merge_reliability` for many vehicles at once, one row each; rows do not interact.

    Rows are padded to a common length by repeating their last sample (zero-length segments add no
    stream time); rows on the same stream share a renewal solution (:func:`solve_renewals`).
    """
    rows: list[tuple[FloatArray, FloatArray]] = []
    for station, speed, setting in zip(stations, speeds, settings, strict=True):
        station, speed = np.asarray(station, dtype=float), np.asarray(speed, dtype=float)
        far = setting.convergence + setting.search_length
        if station[-1] < far:
            station, speed = np.append(station, far), np.append(speed, speed[-1])
        rows.append((station, speed))
    count = np.array([x.size for x, _ in rows])
    station = np.empty((len(rows), int(count.max())))
    speed = np.empty_like(station)
    for r, (x, v) in enumerate(rows):
        station[r, : x.size], station[r, x.size :] = x, x[-1]
        speed[r, : v.size], speed[r, v.size :] = v, v[-1]

    def column(name: str) -> FloatArray:
        return np.array([getattr(s, name) for s in settings], dtype=float)

    convergence, lane_end, taper_end = column("convergence"), column("lane_end"), column("taper_end")
    reliability, flow = column("reliability"), column("flow")
    x_a = _eligible_stations(station, speed, count, convergence, column("minimum_merge_speed"))
    eligible = ~np.isnan(x_a)
    start = np.where(eligible, x_a, np.inf)
    tau = _stream_times(station, speed, column("stream_speed"), column("search_speed"), start, column("merge_speed"))
    tau_taper_end = _at(station, tau, count, taper_end)
    merged = np.zeros_like(station)
    merged[eligible & np.array([s.headways is None for s in settings])] = 1.0
    solved = count.copy()
    last = tau[np.arange(len(settings)), count - 1]
    active = [r for r, s in enumerate(settings) if s.behaviour is not None and s.headways is not None]
    unhurried_rows, checks = _active_curves(station, speed, count, x_a, settings, active)
    # classic: solve past the taper end (and at least FIRST_REACH); on to the search's end only for rows still short
    pending = {
        r: min(float(last[r]), max(float(tau_taper_end[r]), FIRST_REACH))
        for r, s in enumerate(settings)
        if eligible[r] and s.headways is not None and s.behaviour is None
    }
    while pending:
        asked = list(pending)
        answers = solve_renewals([(_stream(settings[r]), settings[r].critical_gap, pending[r]) for r in asked])
        pending = {}
        for r, (renewal, which) in zip(asked, answers, strict=True):
            short = renewal.values[which, -1] > 1.0 - settings[r].reliability
            if short and renewal.reach < last[r]:
                pending[r] = float(last[r])
                continue
            solved[r] = int(np.searchsorted(tau[r, : count[r]], renewal.reach, side="right"))
            merged[r] = 1.0 - renewal.not_merged(tau[r], which)
    for r, (unhurried_p, unhurried_n, unhurried_tau) in unhurried_rows.items():
        merged[r], solved[r], tau[r] = unhurried_p, unhurried_n, unhurried_tau
    probability = np.where(station >= start[:, None], merged, 0.0)
    probability = np.maximum.accumulate(np.clip(probability, 0.0, 1.0), axis=1)
    length = _first_reaching(station, probability, solved, reliability) - convergence
    unhurried = {
        r: MergeCurve(*(a[r, : solved[r]].copy() for a in (station, probability, tau))) for r in unhurried_rows
    }
    for r, check in checks.items():  # the site curve of the active model: lane-end pressure and forced merges
        probability[r] = np.interp(station[r], check.crossing, check.site)
        solved[r] = int(np.searchsorted(station[r, : count[r]], taper_end[r], side="right"))
        tau[r] = check.tau
    by_lane_end = _at(station, probability, solved, lane_end)
    by_taper_end = _at(station, probability, solved, taper_end)
    tau_lane_end = _at(station, tau, solved, lane_end)
    results = []
    for r, setting in enumerate(settings):
        n = solved[r]
        headways = setting.headways
        results.append(
            MergeReliability(
                curve=MergeCurve(station[r, :n], probability[r, :n], tau[r, :n]),
                stream_time_at_lane_end=float(tau_lane_end[r]),
                stream_time_at_taper_end=float(tau_taper_end[r]),
                eligible_station=float(x_a[r]) if eligible[r] else None,
                by_lane_end=float(by_lane_end[r]),
                by_taper_end=float(by_taper_end[r]),
                reliability=setting.reliability,
                length_for_reliability=None if np.isnan(length[r]) else max(0.0, float(length[r])),
                forced_merges_per_h=float(flow[r] * 3600 * max(0.0, by_taper_end[r] - by_lane_end[r])),
                stops_per_h=float(flow[r] * 3600 * (1.0 - by_taper_end[r])),
                mean_stopped_wait=0.0 if headways is None else stopped_wait(headways, setting.stop_critical_gap),
                model="classic" if setting.behaviour is None else "active",
                unhurried=unhurried.get(r),
                check=None if r not in checks else ActiveCheck(checks[r].rules, checks[r].decided, checks[r].crossing),
            )
        )
    return results


class _ActiveRow(NamedTuple):
    """One vehicle's inputs to the active model: its stations, where a decision there is complete, and the
    stream time and acceleration rule of its site curve and its unhurried curve."""

    row: int
    station: FloatArray
    crossing: FloatArray
    forcing_from: float
    tau_site: FloatArray
    site_rule: tuple[FloatArray, ...]
    tau_free: FloatArray
    free_rule: tuple[FloatArray, ...]


@dataclass(frozen=True, slots=True)
class _SiteCurve:
    rules: Rules
    decided: FloatArray
    crossing: FloatArray
    site: FloatArray
    """Probability of having merged by each of ``decided`` (decision stations), to be read at ``crossing``."""
    tau: FloatArray


def _active_curves(
    station: FloatArray,
    speed: FloatArray,
    count: NDArray[np.intp],
    x_a: FloatArray,
    settings: Sequence[MergeSetting],
    rows: list[int],
) -> tuple[dict[int, tuple[FloatArray, int, FloatArray]], dict[int, _SiteCurve]]:
    """The active model (:mod:`mergecheck.merge_behaviour`) for the given rows: per row, the unhurried
    probability at its stations (shifted to where the lane change is half done) with the stations solved,
    and the site curve."""
    if not rows:
        return {}, {}
    built: list[_ActiveRow] = []
    for r in rows:
        s = settings[r]
        b, flow = s.behaviour, _stream(s).flow
        assert b is not None
        x, keep = np.unique(station[r, : count[r]], return_index=True)
        v = speed[r, : count[r]][keep]
        a = v * np.gradient(v, x) if x.size > 1 else np.zeros_like(x)  # the vehicle's own acceleration a(x)
        crossing = x + 0.5 * b.lane_change_time * np.minimum(v, s.merge_speed)
        lane_end = s.lane_end if s.taper_start is None else s.taper_start

        # a vehicle still below the minimum merge speed at the end of the lane forces in there
        forcing_from = lane_end if np.isnan(x_a[r]) else min(float(x_a[r]), lane_end)

        rule = functools.partial(
            rule_along, x, v, a, stream_speed=s.stream_speed, merge_speed=s.merge_speed, flow=flow,
            lane_end=lane_end, taper_end=s.taper_end, behaviour=b,
        )  # fmt: skip
        unhurried_from = float(x[-1]) if np.isnan(x_a[r]) else float(x_a[r])  # never eligible: nothing solved
        at_site = rule(eligible=forcing_from, until=s.taper_end, pressured=True)
        unhurried = rule(eligible=unhurried_from, until=float(x[-1]), pressured=False)
        built.append(_ActiveRow(r, x, crossing, forcing_from, *at_site, *unhurried))
    streams = [_stream(settings[r]) for r in rows]
    nodes = [settings[r].critical_gap.nodes(ACTIVE_NODES) for r in rows]
    size = max(n.size for n, _ in nodes)
    gaps = np.array([np.pad(n, (0, size - n.size), constant_values=n[-1]) for n, _ in nodes])
    weights = np.array([np.pad(w, (0, size - w.size)) for _, w in nodes])
    site_rules = Rules.stack([b.site_rule for b in built])
    free_rules = Rules.stack([b.free_rule for b in built])
    target = np.array([1.0 - settings[r].reliability for r in rows])
    site_not = solve(streams, gaps, weights, site_rules)
    free_not = solve(streams, gaps, weights, free_rules, stop_below=target)
    free: dict[int, tuple[FloatArray, int, FloatArray]] = {}
    site: dict[int, _SiteCurve] = {}
    for i, (r, x, crossing, forcing_from, tau_site, _, tau_free, _) in enumerate(built):
        full = station[r]
        cells = np.arange(site_rules.cells[i]) * CELL
        decided = np.where(x >= forcing_from, 1.0 - np.interp(tau_site, cells, site_not[i, : site_rules.cells[i]]), 0.0)
        site[r] = _SiteCurve(site_rules.row(i), x, crossing, decided, np.interp(full, x, tau_site))
        reached = np.flatnonzero(free_not[i, : free_rules.cells[i]] <= target[i])
        last_cell = int(reached[0]) if reached.size else int(free_rules.cells[i]) - 1
        solved_cells = np.arange(last_cell + 1) * CELL
        eligible = ~np.isnan(x_a[r]) & (x >= x_a[r])
        p = np.where(eligible, 1.0 - np.interp(tau_free, solved_cells, free_not[i, : last_cell + 1]), 0.0)
        shifted = np.interp(full, crossing, p, left=0.0)
        hit = np.flatnonzero(shifted[: count[r]] >= 1.0 - target[i]) if reached.size else np.array([], dtype=np.intp)
        n = int(hit[0]) + 1 if hit.size else int(np.searchsorted(full[: count[r]], crossing[-1], side="right"))
        free[r] = (shifted, max(1, min(n, int(count[r]))), np.interp(full, x, tau_free))
    return free, site


def _stream(setting: MergeSetting) -> HeadwayModel:
    if setting.headways is None:
        raise ValueError("an empty adjacent lane has no renewal solution")
    return setting.headways


def _at(station: FloatArray, values: FloatArray, count: NDArray[np.intp], x: FloatArray) -> FloatArray:
    """Each row's values, linear between its first ``count`` stations, at the row's own station x."""
    rows = np.arange(station.shape[0])
    j = np.clip(np.sum(station <= x[:, None], axis=1) - 1, 0, np.maximum(count - 2, 0))
    k = np.minimum(j + 1, count - 1)
    span = station[rows, k] - station[rows, j]
    share = np.divide(x - station[rows, j], span, out=np.zeros_like(x), where=span > 0)
    return np.asarray(values[rows, j] + share * (values[rows, k] - values[rows, j]), dtype=float)


def _first_reaching(
    station: FloatArray, probability: FloatArray, count: NDArray[np.intp], target: FloatArray
) -> FloatArray:
    """First station of each row where the probability reaches the target (linear between stations); NaN if none."""
    rows = np.arange(station.shape[0])
    hit = (probability >= target[:, None]) & (np.arange(station.shape[1]) < count[:, None])
    i = np.argmax(hit, axis=1)
    before = np.maximum(i - 1, 0)
    rise = probability[rows, i] - probability[rows, before]
    share = np.divide(target - probability[rows, before], rise, out=np.ones_like(rise), where=(i > 0) & (rise > 0))
    x = station[rows, before] + share * (station[rows, i] - station[rows, before])
    return np.asarray(np.where(hit.any(axis=1), x, np.nan), dtype=float)


def _eligible_stations(
    station: FloatArray, speed: FloatArray, count: NDArray[np.intp], convergence: FloatArray, minimum: FloatArray
) -> FloatArray:
    """First station of each row past the convergence point where the speed reaches ``minimum``; NaN if never. [m]

    Between samples the crossing is interpolated linearly in v^2 (exact for constant acceleration).
    """
    rows = np.arange(station.shape[0])
    eligible = (station >= convergence[:, None]) & (speed >= minimum[:, None])
    eligible &= np.arange(station.shape[1]) < count[:, None]
    i = np.argmax(eligible, axis=1)
    before = np.maximum(i - 1, 0)
    low, high = speed[rows, before] ** 2, speed[rows, i] ** 2
    crossing = (i > 0) & (low < minimum**2)
    share = np.divide(minimum**2 - low, high - low, out=np.zeros_like(low), where=crossing)
    x = np.where(
        crossing,
        np.maximum(station[rows, before] + share * (station[rows, i] - station[rows, before]), convergence),
        station[rows, i],
    )
    return np.asarray(np.where(eligible.any(axis=1), x, np.nan), dtype=float)


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
        merged += _merged_by_ends(result, lane_end, taper_end, headways, critical_gap, size, rng)
        if progress is not None:
            progress(size)
    probabilities = [float(m) / count for m in merged]
    error = max(math.sqrt(p * (1 - p) / count) for p in probabilities)
    return MonteCarloCheck(count, probabilities[0], probabilities[1], error)


def _merged_by_ends(
    result: MergeReliability,
    lane_end: float,
    taper_end: float,
    headways: HeadwayModel,
    critical_gap: CriticalGap,
    count: int,
    rng: np.random.Generator,
) -> NDArray[np.int64]:
    """How many of ``count`` simulated drivers have merged by the end of the lane and by the end of the taper."""
    assert result.eligible_station is not None
    if result.check is not None:  # the active model: the same behaviour drawn gap by gap
        c = result.check
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
