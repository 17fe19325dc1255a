"""Merge reliability: the probability of finding an acceptable gap along the lane, for every design vehicle
of every site at once.

Two behaviours give their results in the same :class:`MergeReliability`: the active model of
:mod:`mergecheck.merge_behaviour` (the default for a site) and the classic model of
:mod:`mergecheck.renewal`. Stream time along each vehicle's path comes from :mod:`mergecheck.stream_time`,
critical gaps from :mod:`mergecheck.critical_gaps`; the seeded simulation that checks the result is in
:mod:`mergecheck.monte_carlo`.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal, NamedTuple

import numpy as np
from numpy.typing import NDArray

from .critical_gaps import ACTIVE_NODES, CriticalGap
from .headways import HeadwayModel, mean_wait
from .merge_behaviour import CELL, MergeBehaviour, Rules, rules_along, solve
from .padded_rows import gradient_rows, interp_rows
from .renewal import FIRST_REACH, solve_renewals
from .stream_time import stream_times

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]


@functools.lru_cache(maxsize=64)
def stopped_wait(headways: HeadwayModel, critical_gap: CriticalGap) -> float:
    """Mean wait of a stopped driver for a gap, mixed over drivers (:func:`mergecheck.headways.mean_wait`). [s]"""
    gaps, weights = critical_gap.nodes()
    return float(np.einsum("k,k->", weights, mean_wait(headways, gaps)))


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
    """How likely one design vehicle is to complete its merge, and what happens to those who do not (the figures;
    the probability along the path is in :class:`MergeCurves`)."""

    stream_time_at_lane_end: float
    stream_time_at_taper_end: float
    """tau of Eq. (1) at the end of the lane and of the taper. [s]"""
    eligible_station: float | None
    """Where merging may begin; None if the vehicle never gets within the minimum merge speed. [m]"""
    by_lane_end: float
    by_taper_end: float
    unforced: float
    """Probability of merging into a gap the driver accepts, before the forced rule applies at the end of the
    full-width lane (active model); the rest of ``by_taper_end`` is forced. The classic model has no forced rule:
    ``by_lane_end``. [-]"""
    reliability: float
    """Target probability of merging by the end of the lane. [-]"""
    length_for_reliability: float | None
    """Lane length (from the convergence point) giving the target probability; None beyond the search range. [m]"""
    forced_merges_per_h: float
    """Vehicles of this class forcing their way in by the end of the taper (the classic model: merging in the
    taper). [veh/h]"""
    stops_per_h: float
    """Vehicles of this class reaching the end of the taper without merging. [veh/h]"""
    mean_stopped_wait: float
    """Mean wait of a stopped vehicle for a gap (from-stop critical gap). [s]"""
    model: Literal["active", "classic"] = "classic"
    """Which merge behaviour the probability assumes (:mod:`mergecheck.merge_behaviour` or this module's)."""


@dataclass(frozen=True, slots=True)
class MergeCurves:
    """One design vehicle's merge probability along its path (kept by a single check, not by a batch)."""

    site: MergeCurve
    """The probability of having merged at the site, lane-end pressure and forced merges included."""
    unhurried: MergeCurve | None
    """Active model: the probability on a lane imagined long enough, without the lane-end pressure and forced
    merges (the length for the target reliability is read from it); the classic model has none."""
    check: ActiveCheck | None
    """Active model: what a Monte Carlo of the same behaviour needs; the classic model has none."""


class Merge(NamedTuple):
    """A vehicle's merge figures and the curves they come from."""

    figures: MergeReliability
    curves: MergeCurves


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
) -> Merge:
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
) -> list[Merge]:
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
    tau = stream_times(station, speed, column("stream_speed"), column("search_speed"), start, column("merge_speed"))
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
    active_rows = np.isin(np.arange(len(settings)), list(checks))
    tau_taper_end = np.where(active_rows, _at(station, tau, solved, taper_end), tau_taper_end)  # the active model's tau
    results = []
    for r, setting in enumerate(settings):
        n = solved[r]
        headways = setting.headways
        unforced = checks[r].unforced if r in checks else float(by_lane_end[r])
        results.append(
            Merge(
                MergeReliability(
                    stream_time_at_lane_end=float(tau_lane_end[r]),
                    stream_time_at_taper_end=float(tau_taper_end[r]),
                    eligible_station=float(x_a[r]) if eligible[r] else None,
                    by_lane_end=float(by_lane_end[r]),
                    by_taper_end=float(by_taper_end[r]),
                    unforced=unforced,
                    reliability=setting.reliability,
                    length_for_reliability=None if np.isnan(length[r]) else max(0.0, float(length[r])),
                    forced_merges_per_h=float(flow[r] * 3600 * max(0.0, by_taper_end[r] - unforced)),
                    stops_per_h=float(flow[r] * 3600 * (1.0 - by_taper_end[r])),
                    mean_stopped_wait=0.0 if headways is None else stopped_wait(headways, setting.stop_critical_gap),
                    model="classic" if setting.behaviour is None else "active",
                ),
                MergeCurves(
                    site=MergeCurve(station[r, :n], probability[r, :n], tau[r, :n]),
                    unhurried=unhurried.get(r),
                    check=None
                    if r not in checks
                    else ActiveCheck(checks[r].rules, checks[r].decided, checks[r].crossing),
                ),
            )
        )
    return results


@dataclass(frozen=True, slots=True)
class _SiteCurve:
    rules: Rules
    decided: FloatArray
    crossing: FloatArray
    site: FloatArray
    """Probability of having merged by each of ``decided`` (decision stations), to be read at ``crossing``."""
    tau: FloatArray
    unforced: float
    """Probability of having merged before the forced rule applies (the cell before the force cell). [-]"""


FIRST_CELLS = 256
"""Cells of stream time (51 s) over which the unhurried curve is first solved; rows short of the target by then
are solved again in full."""


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
    and the site curve. All rows are built and solved together."""
    if not rows:
        return {}, {}
    chosen = [settings[r] for r in rows]
    behaviours = [_behaviour(s) for s in chosen]
    streams = [_stream(s) for s in chosen]
    index = np.array(rows)
    x, v, n, xa = station[index], speed[index], count[index], x_a[index]
    picked = np.arange(index.size)

    def column(name: str) -> FloatArray:
        return np.array([getattr(s, name) for s in chosen], dtype=float)

    merge_speed, taper_end = column("merge_speed"), column("taper_end")
    lane_end = np.array([s.lane_end if s.taper_start is None else s.taper_start for s in chosen])
    change = np.array([b.lane_change_time for b in behaviours])
    crossing = x + 0.5 * change[:, None] * np.minimum(v, merge_speed[:, None])  # where a decision is half done
    never = np.isnan(xa)
    # a vehicle still below the minimum merge speed at the end of the lane forces in there
    forcing_from = np.where(never, lane_end, np.fmin(xa, lane_end))
    last_station = x[picked, n - 1]
    stream_speed, flow = column("stream_speed"), np.array([h.flow for h in streams])
    acceleration = v * gradient_rows(v, x)  # the vehicle's own acceleration a(x)

    def rules(on: IntArray, eligible: FloatArray, until: FloatArray, pressured: bool, cells: int | None = None
              ) -> tuple[FloatArray, Rules]:  # fmt: skip
        return rules_along(
            x[on], v[on], acceleration[on], eligible=eligible[on], until=until[on], stream_speed=stream_speed[on],
            merge_speed=merge_speed[on], flow=flow[on], lane_end=lane_end[on], taper_end=taper_end[on],
            behaviour=[behaviours[i] for i in on], pressured=pressured, cells=cells,
        )  # fmt: skip

    tau_site, site_rules = rules(picked, forcing_from, taper_end, pressured=True)
    gaps, weights = _active_nodes([s.critical_gap for s in chosen])
    target = 1.0 - column("reliability")
    site_not = solve(streams, gaps, weights, site_rules)
    decided = np.where(x >= forcing_from[:, None], 1.0 - _on_cells(tau_site, site_not), 0.0)
    # the unhurried curve, solved until the target is met: first within FIRST_CELLS cells, then in full for the
    # rows that need more (a row's result does not depend on how far the others are solved)
    unhurried_from = np.where(never, last_station, xa)  # never eligible: nothing solved
    tau_free, free_p = np.zeros_like(x), np.zeros_like(x)
    reached = np.zeros(x.shape[0], dtype=bool)
    pending = picked
    for cells in (FIRST_CELLS, None):
        tau_p, free_rules = rules(pending, unhurried_from, last_station, pressured=False, cells=cells)
        not_merged = solve([streams[i] for i in pending], gaps[pending], weights[pending], free_rules,
                           stop_below=target[pending])  # fmt: skip
        within = np.arange(not_merged.shape[1])[None, :] < free_rules.cells[:, None]
        met = np.any((not_merged <= target[pending, None]) & within, axis=1)  # beyond it a row holds its value
        whole = free_rules.cells < (np.iinfo(np.intp).max if cells is None else cells)  # not cut short
        done = met | whole | (cells is None)
        tau_free[pending[done]], reached[pending[done]] = tau_p[done], met[done]
        free_p[pending[done]] = 1.0 - _on_cells(tau_p[done], not_merged[done])
        pending = pending[~done]
        if not pending.size:
            break
    p = np.where(~never[:, None] & (x >= xa[:, None]), free_p, 0.0)
    shifted = interp_rows(x, crossing, p, left=0.0)
    real = np.arange(x.shape[1])[None, :] < n[:, None]
    hit = (shifted >= 1.0 - target[:, None]) & real & reached[:, None]
    beyond = np.sum((x <= crossing[picked, n - 1][:, None]) & real, axis=1)
    solved = np.clip(np.where(hit.any(axis=1), np.argmax(hit, axis=1) + 1, beyond), 1, n)
    free = {r: (shifted[i], int(solved[i]), tau_free[i]) for i, r in enumerate(rows)}
    before_force = np.minimum(site_rules.force_cell, site_not.shape[1]) - 1  # the last cell judged by choice
    unforced = np.where(before_force >= 0, 1.0 - site_not[picked, np.maximum(before_force, 0)], 0.0)
    site = {
        r: _SiteCurve(
            site_rules.row(i), x[i, : n[i]], crossing[i, : n[i]], decided[i, : n[i]], tau_site[i], float(unforced[i])
        )
        for i, r in enumerate(rows)
    }
    return free, site


def _on_cells(tau: FloatArray, values: FloatArray) -> FloatArray:
    """Each row's values on the cells of stream time (cell i at i * CELL), linear between cells and held beyond
    the last, at the row's own stream times tau. (V, S)"""
    last = values.shape[1] - 1
    place = np.clip(tau / CELL, 0.0, last)
    low = np.minimum(np.floor(place).astype(np.intp), max(last - 1, 0))
    high = np.minimum(low + 1, last)
    below, above = np.take_along_axis(values, low, axis=1), np.take_along_axis(values, high, axis=1)
    return np.asarray(below + (place - low) * (above - below), dtype=float)


def _active_nodes(gaps: Sequence[CriticalGap]) -> tuple[FloatArray, FloatArray]:
    """Critical-gap nodes and weights of the active model, one row per vehicle (V, K); a distribution with fewer
    nodes (a fixed gap) repeats its last node at weight 0."""
    distinct = {g: g.nodes(ACTIVE_NODES) for g in dict.fromkeys(gaps)}
    size = max(t.size for t, _ in distinct.values())
    padded = {
        g: (np.pad(t, (0, size - t.size), mode="edge"), np.pad(w, (0, size - w.size))) for g, (t, w) in distinct.items()
    }
    return np.array([padded[g][0] for g in gaps]), np.array([padded[g][1] for g in gaps])


def _behaviour(setting: MergeSetting) -> MergeBehaviour:
    if setting.behaviour is None:
        raise ValueError("the classic model has no active merge behaviour")
    return setting.behaviour


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
