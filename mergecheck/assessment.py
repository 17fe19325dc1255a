"""Assess a site: every design vehicle's speed along the ramp, against the lane provided.

For each design vehicle the trajectory from the end of the controlling curve
(or the stop line) is integrated along the real profile
(:func:`mergecheck.trajectory.accelerate_many`, every vehicle of every site
in one pass) and read at the landmarks. The
required acceleration length is measured as the policy tables measure it:

.. math:: L_{req} = \\max(0,\\; x_{merge} - x_{cp})

with x_merge the station where the vehicle reaches its merge speed (the
operating speed less the merge speed differential) and x_cp the convergence
point. Reaching merge speed is half the job: the driver must also find a gap
in the adjacent lane (:mod:`mergecheck.merge_reliability`), and the length for
the target merge reliability L_rel is where the probability of having merged
reaches the target. The vehicle meets the check when
max(L_req, L_rel) <= L_avail (the lane length plus any taper credit); it is
short when it needs more; and it cannot reach merge speed when its crawl
speed on the final grade is lower. The governing vehicle is the one needing
the longest lane (a vehicle that cannot reach merge speed governs over any
that can; among those, the one with the lowest speed at the end of the lane).

That is the performance basis. The policy basis compares the lane provided,
measured as the policy table measures it, with the table's length. The site's
verdict is on the basis the site chooses (criteria.verdict_basis, the policy
basis by default), and on the performance basis wherever the table gives no
value; both are always reported.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, fields
from typing import Literal, NamedTuple

import numpy as np
from numpy.typing import NDArray

from .critical_gaps import CriticalGap
from .headways import HeadwayModel, headway_model
from .merge_operations import MergeOperations, merge_operations
from .merge_reliability import Merge, MergeCurves, MergeReliability, MergeSetting, merge_reliabilities
from .monte_carlo import MonteCarloCheck, monte_carlo_check
from .policy import PolicyTable, PolicyValue, initial_speed_for, load_policy, policy_minimum
from .site import Site, SiteVehicle
from .trajectory import Run, Trajectory, accelerate_many, speeds_at
from .units import show
from .vehicles import DesignVehicle

SEARCH_HORIZON = 6000.0
"""How far past the convergence point the lane is imagined extended to find the length for the target
reliability, whatever the lane provided (so that a vehicle's need does not depend on the lane). [m]"""
MERGE_GRID = 5.0
"""Spacing of the stations at which the merge probability is evaluated over the first NEAR_SEARCH metres past
the convergence point and along the taper. [m]"""
NEAR_SEARCH = 1000.0
"""Extent of the fine grid past the convergence point. [m]"""
SEARCH_GRID = 20.0
"""Spacing of the stations beyond (lengths found there are interpolated between stations). [m]"""
FloatArray = NDArray[np.float64]
VehicleVerdict = Literal["meets", "short", "cannot-reach"]
SiteVerdict = Literal["meets", "short"]
_RANK: dict[VehicleVerdict, int] = {"meets": 0, "short": 1, "cannot-reach": 2}


@dataclass(frozen=True, slots=True, kw_only=True)
class VehicleAssessment:
    """One design vehicle at the site (SI units)."""

    vehicle: DesignVehicle
    share: float
    flow: float
    """This vehicle's share of the ramp flow. [veh/s]"""
    initial_speed: float
    """[m/s]"""
    merge_speed: float
    """[m/s]"""
    merge_speed_differential: float
    """[m/s]"""
    speed_at_convergence: float
    """[m/s]"""
    speed_at_taper_start: float
    """Speed at the end of the full-width lane. [m/s]"""
    speed_at_taper_end: float
    """[m/s]"""
    merge_station: float | None
    """Station where merge speed is reached; None if never. [m]"""
    required_length: float | None
    """Convergence point to where merge speed is reached; None if never. [m]"""
    available_length: float
    """[m]"""
    deficit: float | None
    """How much longer the lane must be (0 when it meets); None if merge speed is never reached. [m]"""
    speed_differential_at_taper_start: float
    """Operating speed minus the vehicle's speed at the start of the taper. [m/s]"""
    large_differential: bool
    crawl_speed: float | None
    """Crawl speed on the final grade when below merge speed. [m/s]"""
    critical_gap: CriticalGap
    """Critical gap at speed across drivers."""
    stop_critical_gap: CriticalGap
    """Critical gap from a stop."""
    merge: MergeReliability
    """Gap acceptance in the adjacent lane along this vehicle's trajectory."""
    monte_carlo: MonteCarloCheck | None
    """Simulated check of the merge probabilities, when asked for."""
    length_needed: float | None
    """The longer of the required length and the length for the target merge reliability; None if unbounded. [m]"""
    verdict: VehicleVerdict


@dataclass(frozen=True, slots=True, kw_only=True)
class SiteAssessment:
    """Everything a report shows about one site."""

    site: Site
    vehicles: tuple[VehicleAssessment, ...]
    governing: VehicleAssessment
    verdict: SiteVerdict
    """The site's verdict, on the basis named by ``basis``."""
    basis: Literal["policy", "performance"]
    """The basis the verdict is on: the site's choice, or the performance basis where no policy value applies."""
    policy_verdict: Literal["meets", "short", "none"]
    """Policy basis: the lane (as the table measures it) against the table's length; 'none' without a value."""
    policy_reason: str
    """One line: what the policy basis compared, or exactly why it gives no value."""
    performance_verdict: SiteVerdict
    """Performance basis: every design vehicle meets its own computed need ('short' if any falls short)."""
    initial_speed: float
    """Speed leaving the controlling curve (0 from a stop). [m/s]"""
    initial_speed_basis: str
    """Where the initial speed comes from."""
    average_grade: float
    """Average grade from the convergence point to the start of the taper (over the taper for a taper-type entrance
    with no parallel lane). [fraction]"""
    policy: PolicyValue | None
    merge_area: MergeOperations | None
    """Capacity-manual merge-area check; None without a mainline flow or where the method does not apply."""
    merge_area_not_applied: str
    """Why the merge-area method was not applied to a site that gives a mainline flow ('' when applied or when
    there is no mainline flow)."""


@dataclass(frozen=True, slots=True)
class VehicleCurves:
    """One design vehicle's speed and merge probability along its path."""

    trajectory: Trajectory
    merge: MergeCurves


@dataclass(frozen=True, slots=True, kw_only=True)
class SiteCheck(SiteAssessment):
    """A single site's assessment with every vehicle's curves along the path (what the figures and the
    slowing notes of a report read); a batch keeps the :class:`SiteAssessment` figures only."""

    curves: tuple[VehicleCurves, ...]
    """One per vehicle, in the order of ``vehicles``."""

    def figures_only(self) -> SiteAssessment:
        """The figures without the curves (what a batch keeps of each site)."""
        return SiteAssessment(**{f.name: getattr(self, f.name) for f in fields(SiteAssessment)})


def adjacent_headways(site: Site) -> HeadwayModel | None:
    """Headway model of the adjacent lane; None for an empty lane."""
    if site.adjacent_lane_flow <= 0:
        return None
    g = site.gaps
    return headway_model(
        g.headway_model, site.adjacent_lane_flow, min_headway=g.min_headway, free_fraction=g.free_fraction
    )


def trajectory_run(site: Site, entry: SiteVehicle, initial_speed: float) -> Run:
    """The integration a design vehicle needs at a site: from station 0 through the reliability search."""
    return Run(
        entry.vehicle.model,
        site.profile,
        initial_speed,
        entry.merge_speed,
        start=site.convergence if site.acceleration_from == "convergence" else 0.0,
        through=max(site.taper_end, site.convergence + SEARCH_HORIZON),
        elevation=site.elevation,
    )


def merge_stations(site: Site) -> FloatArray:
    """Stations for the merge probability from the convergence point: every MERGE_GRID metres over the first
    NEAR_SEARCH metres and along the taper, every SEARCH_GRID metres on to the horizon, and the landmarks. The
    grid past the convergence point does not depend on the lane provided."""
    far = max(site.taper_end, site.convergence + SEARCH_HORIZON)
    near = np.arange(site.convergence, site.convergence + NEAR_SEARCH, MERGE_GRID)
    taper = np.arange(site.taper_start, site.taper_end, MERGE_GRID)
    beyond = np.arange(site.convergence + NEAR_SEARCH, far, SEARCH_GRID)
    landmarks = [site.convergence + site.available_length, site.taper_start, site.taper_end, far]
    return np.unique(np.concatenate([near, taper, beyond, landmarks]))


def merge_setting(site: Site, entry: SiteVehicle) -> MergeSetting:
    """What a design vehicle's merge probability at the site depends on besides its speeds."""
    return MergeSetting(
        convergence=site.convergence,
        lane_end=site.convergence + site.available_length,
        taper_end=site.taper_end,
        stream_speed=site.operating_speed,
        merge_speed=entry.merge_speed,
        minimum_merge_speed=site.gaps.minimum_merge_speed,
        search_speed=site.gaps.search_speed,
        headways=adjacent_headways(site),
        critical_gap=entry.critical_gap,
        stop_critical_gap=entry.stop_critical_gap,
        reliability=site.gaps.reliability,
        flow=entry.share * site.ramp_flow,
        search_length=max(site.taper_end - site.convergence, SEARCH_HORIZON),  # as far as the trajectory
        behaviour=site.gaps.behaviour,
        taper_start=site.taper_start,
    )


def path_stations(site: Site, stations: FloatArray, trajectory: Trajectory) -> FloatArray:
    """The convergence point and the start and the end of the taper, then ``stations``, within the integrated
    path (a vehicle holds its last speed beyond it). [m]"""
    landmarks = [site.convergence, site.taper_start, site.taper_end]
    return np.asarray(np.minimum(np.concatenate([landmarks, stations]), trajectory.end), dtype=float)


class Landmarks(NamedTuple):
    """A vehicle's speeds where the layout changes. [m/s]"""

    convergence: float
    taper_start: float
    taper_end: float


def assess_vehicle(
    site: Site,
    entry: SiteVehicle,
    *,
    initial_speed: float,
    trajectory: Trajectory,
    speeds: Landmarks,
    merge: Merge,
    monte_carlo: int = 0,
    seed: int = 0,
    progress: Callable[[int], None] | None = None,
) -> VehicleAssessment:
    """Read one design vehicle's trajectory and merge probability against the lane."""
    at_convergence, at_taper_start, at_taper_end = speeds
    figures, curves = merge
    merge_station = trajectory.target_station
    available = site.available_length
    required = None if merge_station is None else max(0.0, merge_station - site.convergence)
    differential = site.operating_speed - at_taper_start
    simulated = None
    if monte_carlo > 0:
        simulated = monte_carlo_check(
            figures,
            curves.check,
            lane_end=site.convergence + available,
            taper_end=site.taper_end,
            headways=adjacent_headways(site),
            critical_gap=entry.critical_gap,
            count=monte_carlo,
            seed=seed,
            progress=progress,
        )
    needed = (
        None
        if required is None or figures.length_for_reliability is None
        else max(required, figures.length_for_reliability)
    )
    verdict: VehicleVerdict
    deficit: float | None = None
    if required is None:
        verdict = "cannot-reach"
    elif needed is None:
        verdict = "short"  # reaches merge speed but not the target reliability on any length searched
    else:
        deficit = max(0.0, needed - available)
        verdict = "meets" if needed <= available else "short"
    return VehicleAssessment(
        vehicle=entry.vehicle,
        share=entry.share,
        flow=entry.share * site.ramp_flow,
        initial_speed=initial_speed,
        merge_speed=entry.merge_speed,
        merge_speed_differential=entry.merge_speed_differential,
        speed_at_convergence=at_convergence,
        speed_at_taper_start=at_taper_start,
        speed_at_taper_end=at_taper_end,
        merge_station=merge_station,
        required_length=required,
        available_length=available,
        deficit=deficit,
        speed_differential_at_taper_start=differential,
        large_differential=differential > site.flag_speed_differential,
        crawl_speed=trajectory.crawl_speed,
        critical_gap=entry.critical_gap,
        stop_critical_gap=entry.stop_critical_gap,
        merge=figures,
        monte_carlo=simulated,
        length_needed=needed,
        verdict=verdict,
    )


def governing_vehicle(results: tuple[VehicleAssessment, ...]) -> VehicleAssessment:
    """The vehicle needing the longest lane (see the module docstring)."""

    def need(result: VehicleAssessment) -> tuple[int, float, float]:
        if result.required_length is None:
            return (_RANK[result.verdict], 1.0, -result.speed_at_taper_start)
        if result.length_needed is None:
            return (_RANK[result.verdict], 1.0, -result.merge.by_lane_end)
        return (_RANK[result.verdict], 0.0, result.length_needed)

    return max(results, key=need)


def assess(
    site: Site, *, monte_carlo: int = 0, seed: int = 20261202, progress: Callable[[int], None] | None = None
) -> SiteCheck:
    """Assess every design vehicle at a site and compare with the policy table.

    ``monte_carlo`` > 0 adds a simulated check of each vehicle's merge
    probabilities with that many drivers (seeded); ``progress`` is called with
    the number of drivers simulated as each batch of them is done.
    """
    return assess_many([site], monte_carlo=monte_carlo, seed=seed, progress=progress)[0]


def assess_many(
    sites: list[Site],
    *,
    monte_carlo: int = 0,
    seed: int = 20261202,
    progress: Callable[[int], None] | None = None,
) -> list[SiteCheck]:
    """Assess many sites; every trajectory of every site is integrated in one pass.

    A site's result does not depend on the other sites: each vehicle's
    integration is independent of its neighbours (:mod:`mergecheck.trajectory`).
    """
    tables = _policy_tables(sites)
    initial = [_initial_speed(site, table) for site, table in zip(sites, tables, strict=True)]
    entries = [(k, entry) for k, site in enumerate(sites) for entry in site.vehicles]
    trajectories = accelerate_many([trajectory_run(sites[k], entry, initial[k][0]) for k, entry in entries])
    stations = [merge_stations(site) for site in sites]
    along = speeds_at(
        trajectories,
        [path_stations(sites[k], stations[k], t) for (k, _), t in zip(entries, trajectories, strict=True)],
    )  # each: the three landmarks (path_stations), then the merge stations
    merges = merge_reliabilities(
        [stations[k] for k, _ in entries], [v[3:] for v in along], [merge_setting(sites[k], e) for k, e in entries]
    )
    vehicles: list[list[VehicleAssessment]] = [[] for _ in sites]
    curves: list[list[VehicleCurves]] = [[] for _ in sites]
    for (k, entry), trajectory, v, merge in zip(entries, trajectories, along, merges, strict=True):
        order = len(vehicles[k])
        curves[k].append(VehicleCurves(trajectory, merge.curves))
        vehicles[k].append(
            assess_vehicle(
                sites[k],
                entry,
                initial_speed=initial[k][0],
                trajectory=trajectory,
                speeds=Landmarks(*(float(x) for x in v[:3])),
                merge=merge,
                monte_carlo=monte_carlo,
                seed=seed + order,
                progress=progress,
            )
        )
    return [
        _site_assessment(site, table, speed, basis, tuple(results), tuple(lines))
        for site, table, (speed, basis), results, lines in zip(sites, tables, initial, vehicles, curves, strict=True)
    ]


def _policy_tables(sites: list[Site]) -> list[PolicyTable | None]:
    """Each site's policy table; each file read once."""
    loaded: dict[str, PolicyTable] = {}
    tables: list[PolicyTable | None] = []
    for site in sites:
        table = site.policy_choice.table
        if table is None:
            tables.append(None)
            continue
        if table not in loaded:
            loaded[table] = load_policy(table)
        tables.append(loaded[table])
    return tables


def _site_assessment(
    site: Site,
    policy_table: PolicyTable | None,
    initial: float,
    initial_basis: str,
    results: tuple[VehicleAssessment, ...],
    curves: tuple[VehicleCurves, ...],
) -> SiteCheck:
    governing = governing_vehicle(results)
    span = site.lane_length if site.lane_length > 0 else site.taper_length  # a taper-type entrance with no lane
    at_convergence, at_end = site.profile.elevation([site.convergence, site.convergence + span])
    average_grade = float(at_end - at_convergence) / span
    policy = None
    if policy_table is not None:
        policy = policy_minimum(policy_table, site.design_speed, site.controlling_speed, average_grade)
    performance: SiteVerdict = "meets" if all(r.verdict == "meets" for r in results) else "short"
    policy_verdict, policy_reason = _policy_basis(site, policy)
    basis: Literal["policy", "performance"] = "performance"
    verdict = performance
    if site.verdict_basis == "policy" and policy_verdict != "none":
        basis, verdict = "policy", policy_verdict
    merge = merge_operations(site, {r.vehicle.id: r.speed_at_taper_start for r in results})
    return SiteCheck(
        site=site,
        vehicles=results,
        curves=curves,
        governing=governing,
        verdict=verdict,
        basis=basis,
        policy_verdict=policy_verdict,
        policy_reason=policy_reason,
        performance_verdict=performance,
        initial_speed=initial,
        initial_speed_basis=initial_basis,
        average_grade=average_grade,
        policy=policy,
        merge_area=None if isinstance(merge, str) else merge,
        merge_area_not_applied=merge if isinstance(merge, str) else "",
    )


def _policy_basis(site: Site, policy: PolicyValue | None) -> tuple[Literal["meets", "short", "none"], str]:
    """The policy basis: the lane provided, measured as the table measures it, against the table's length."""
    if policy is None:
        return "none", "no policy table applies (policy: none): the performance basis decides"
    if policy.minimum_length is None:
        return "none", f"the policy table gives no length here: {policy.note}; the performance basis decides"
    lane, need = site.lane_length, policy.minimum_length
    verdict: Literal["meets", "short"] = "meets" if lane >= need - 1e-6 else "short"
    return verdict, (
        f"lane {show(lane, 'length', 'si')} (convergence point to the start of the taper, as the table measures it)"
        f" against the table's {show(need, 'length', 'si')} ({policy.note})"
    )


def _initial_speed(site: Site, table: PolicyTable | None) -> tuple[float, str]:
    if site.controlling_speed is None:
        return 0.0, "ramp starts from a stop (stop line or ramp meter at station 0)"
    if site.initial_speed is not None:
        return site.initial_speed, "given in the site file"
    if table is not None:
        value = initial_speed_for(table, site.controlling_speed)
        if value is not None:
            return value, f"the policy table's initial speed for this controlling speed ({table.title})"
    return site.controlling_speed, "the controlling-curve design speed (no policy initial speed applies)"
