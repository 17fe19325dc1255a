"""Sentences of the site report (the verdict bases, slowing, merge behaviour, mitigations, queue clearing), for
:mod:`mergecheck.report.document`."""

from __future__ import annotations

import numpy as np

from ..assessment import SiteAssessment, SiteCheck
from ..exception_study import Mitigation
from ..merge_operations import MergeOperations
from ..site import Site
from ..units import UnitSystem, show


def verdict_bases(assessment: SiteAssessment, system: UnitSystem) -> tuple[str, str, str]:
    """Which basis the verdict is on, and the one line of each basis."""
    a, site = assessment, assessment.site
    on = (
        "on the policy basis (criteria.verdict_basis: policy)"
        if a.basis == "policy"
        else "on the performance basis"
        + (
            " (criteria.verdict_basis: performance)"
            if site.verdict_basis == "performance"
            else " (no policy value applies)"
        )
    )
    p = a.policy
    if a.policy_verdict == "none" or p is None or p.minimum_length is None:
        policy = f"Policy basis: no value. {a.policy_reason[0].upper()}{a.policy_reason[1:]}."
    else:
        policy = (
            f"Policy basis: {a.policy_verdict.upper()}. Lane {show(site.lane_length, 'length', system)} (convergence point"
            f" to the start of the taper, as the table measures it) against the table's"
            f" {show(p.minimum_length, 'length', system)} ({p.note})."
        )
    short = [v for v in a.vehicles if v.verdict != "meets"]
    heavy = [v for v in short if v.vehicle.category != "passenger-car"]
    performance = f"Performance basis: {a.performance_verdict.upper()}."
    if short:
        performance += " Short: " + ", ".join(f"{v.vehicle.id} ({v.verdict})" for v in short) + "."
    if heavy:
        performance += " Heavy vehicles are judged at their own merge speed (criteria.heavy_vehicles); their shortfall is a finding to weigh against the agency's truck criteria."
    return f"Verdict {on}.", policy, performance


def slowing_notes(assessment: SiteCheck, system: UnitSystem) -> list[str]:
    """One line per design vehicle that loses speed on the ramp's upgrade before the end of the lane."""
    notes = []
    site = assessment.site
    for v, lines in zip(assessment.vehicles, assessment.curves, strict=True):
        t = lines.trajectory
        stations = np.linspace(t.start, min(site.taper_start, t.end), 200)
        speeds = t.speed_at(stations)
        low = int(np.argmin(speeds))
        if speeds[low] < v.initial_speed - 1.0 / 3.6:
            crawl = (
                ""
                if v.crawl_speed is None
                else f"; its crawl speed on the final grade is {show(v.crawl_speed, 'speed', system)}"
            )
            notes.append(
                f"Design vehicle {v.vehicle.id} slows on the grade from {show(v.initial_speed, 'speed', system)} to"
                f" {show(float(speeds[low]), 'speed', system)} at station {show(float(stations[low]), 'length', system)}"
                f" (a loss of {show(v.initial_speed - float(speeds[low]), 'speed', system)}){crawl}."
            )
    return notes


def merge_behaviour(site: Site) -> str:
    """One sentence on which merge behaviour the probabilities assume (the Assumptions give the parameters)."""
    if site.gaps.behaviour is None:
        return (
            "Merge behaviour assumed: the classic model (each driver waits for a gap at least their critical gap to "
            "drift past, holds merge speed, is never let in and never forces in)."
        )
    return (
        "Merge behaviour assumed: drivers pick a gap on the approach, judge the gap beside them by the part still "
        "behind them, adjust speed to reach the next one, need longer gaps when slower than the stream, accept "
        "shorter ones near the end of the lane, are sometimes let in by the lag driver (more often in dense "
        "traffic) and force in at the end of the lane; only a driver finding no gap at all stops. The length for "
        "the reliability target counts no lane-end pressure or forced merges."
    )


def mitigation_change(mitigation: Mitigation, system: UnitSystem) -> str:
    """What a mitigation changed, in the report's units."""
    match mitigation.change:
        case "lane_length":
            return f"lane length {show(mitigation.after, 'length', system)} (was {show(mitigation.before, 'length', system)})"
        case "flatten":
            return f"upgrades steeper than {100 * (mitigation.after or 0):.0f} % cut to it (steepest was {100 * (mitigation.before or 0):.1f} %)"
        case "controlling_speed":
            return f"controlling speed {show(mitigation.after, 'speed', system)} (was {show(mitigation.before, 'speed', system)})"
        case "metering":
            return "vehicles start from a stop at the end of the ramp (station 0)"
    return "no change"


def clearing(operations: MergeOperations) -> str:
    """When the queue of a broken-down merge clears, in words."""
    if operations.history is None or operations.history.clears_at is None:
        return "not within the demand profile"
    return f"{operations.history.clears_at / 60:.0f} min after the peak begins"
