"""The words of a report: the one-sentence summary and every assumption behind a result.

The assessment (:mod:`mergecheck.assessment`) holds numbers only; this module turns them into sentences for
every renderer, reading the constants and the model registries (their summaries, validity ranges and
references) from the code that uses them, so that what a report says cannot drift from what was computed.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from .acceleration import ACCELERATION_MODELS
from .assessment import SiteAssessment, VehicleAssessment
from .headways import HEADWAY_MODELS
from .merge_behaviour import SOURCES, MergeBehaviour
from .merge_operations import TRUCK_EQUIVALENT
from .site import Site
from .trajectory import TOLERANCE
from .units import UnitSystem, show

HCM = "Highway Capacity Manual, 7th ed. (Transportation Research Board, 2022)"
"""The capacity manual the merge-area method follows (its 6th-edition equations are the same)."""


@dataclass(frozen=True, slots=True)
class Assumption:
    """One assumption behind the result: what, its value, and where it comes from."""

    name: str
    value: str
    source: str


def assumptions(assessment: SiteAssessment, system: UnitSystem = "si") -> tuple[Assumption, ...]:
    """Every assumption behind the result, with its value and its source, read from the code that uses it."""
    site, results, policy = assessment.site, assessment.vehicles, assessment.policy
    initial, initial_basis = assessment.initial_speed, assessment.initial_speed_basis
    items = [
        Assumption(
            "Mainline operating speed at the merge",
            show(site.operating_speed, "speed", system),
            site.operating_speed_basis,
        ),
        Assumption("Speed leaving the controlling curve", show(initial, "speed", system), initial_basis),
        _before_the_nose(site, results, initial, system),
        Assumption(
            "Merge speed",
            "; ".join(f"{r.vehicle.id} {show(r.merge_speed, 'speed', system)}" for r in results),
            "operating speed less the merge speed differential; policy tables use about 5 mph (8 km/h) "
            "below the running speed for passenger cars (AASHTO Green Book basis, from memory)",
        ),
        Assumption(
            "Acceleration length definition",
            "convergence point to where merge speed is reached",
            "as the policy acceleration-length tables measure it (convergence point to the start of the taper)",
        ),
        Assumption(
            "Taper credit",
            f"{site.taper_credit:.0%} of the taper counted as acceleration length",
            "site file criteria (0 % is the policy-table definition)",
        ),
        Assumption(
            "Large speed differential",
            f"above {show(site.flag_speed_differential, 'speed', system)} at the end of the lane",
            "crash involvement rises steeply as speed departs from the stream's (Solomon, 1964, from memory); "
            "threshold is a site criterion",
        ),
        Assumption(
            "Adjacent-lane headways", _headway_text(site, system), HEADWAY_MODELS[site.gaps.headway_model].reference
        ),
        _behaviour_assumption(site, system),
        Assumption(
            "Merge reliability target",
            f"{site.gaps.reliability:.0%} of drivers merged by the end of the lane",
            "site criterion (default 95 %)",
        ),
        Assumption(
            "Elevation at station 0",
            show(site.elevation, "length", system),
            "site file (0 m if not given); lowers air density and engine power",
        ),
        Assumption(
            "Integration",
            "speed integrated along distance, grade as a function of station",
            f"Dormand-Prince 5(4) with step-size control, tolerance {TOLERANCE[0, 0]:.0e} on speed squared and"
            f" {TOLERANCE[1, 0]:.0e} on time (Hairer, Norsett and Wanner, Solving Ordinary Differential Equations I,"
            " 2nd ed. 1993); checked against closed forms and an independent time-domain solution in the test suite",
        ),
    ]
    for r in results:
        v = r.vehicle
        items.append(
            Assumption(
                f"{v.id}: critical gap",
                f"at speed {r.critical_gap.mean:.1f} s (sd {r.critical_gap.sd:.1f} s); "
                f"from a stop {r.stop_critical_gap.mean:.1f} s (sd {r.stop_critical_gap.sd:.1f} s), log-normal",
                f"{r.critical_gap.source}; from a stop: {r.stop_critical_gap.source}",
            )
        )
        entry = ACCELERATION_MODELS[v.model_name]
        items.append(
            Assumption(f"{v.id}: acceleration model", f"{v.model_name}: {entry.summary}",
                       f"{entry.reference}; valid for {entry.validity}")
        )  # fmt: skip
        for parameter in v.parameters:
            items.append(Assumption(f"{v.id}: {parameter.name}", parameter.text, parameter.source))
    if assessment.merge_area_not_applied:
        items.append(
            Assumption(
                "Merge-area method",
                f"not applied: {assessment.merge_area_not_applied}",
                f"{HCM}, chapter 14",
            )
        )
    elif site.merge.mainline_flow is not None:
        m = site.merge
        items += [
            Assumption(
                "Merge-area method",
                "capacity-manual merge segment: P_FM, v12 with the lane-distribution checks, influence-area"
                " density, LOS and capacity checks" + ("; lane 5 flow taken off first" if site.lanes == 5 else ""),
                f"{HCM}, chapter 14",
            ),
            Assumption(
                "Acceleration length for the merge-area check",
                f"lane plus taper, {show(site.lane_length + site.taper_length, 'length', system)}",
                "the manual's L_A includes the taper; the policy-table length does not (converted here)",
            ),
            Assumption(
                "Demand in passenger cars",
                f"PHF {m.peak_hour_factor:.2f}; mainline heavy vehicles {m.mainline_heavy_vehicles:.0%} at E_T "
                f"{TRUCK_EQUIVALENT[m.terrain]:.1f} ({m.terrain})",
                f"{HCM}, chapter 14: f_HV = 1/(1 + P_T (E_T - 1)); E_T "
                + ", ".join(f"{e:.1f} {terrain}" for terrain, e in TRUCK_EQUIVALENT.items()),
            ),
            Assumption(
                "Heavy ramp vehicles on the grade",
                "E_T times stream free-flow speed over the vehicle's speed at the end of the lane (at least E_T)",
                "assumption: speed-ratio equivalent standing in for the manual's specific-grade tables (not at hand)",
            ),
            Assumption(
                "Queue in breakdown",
                f"triangular flow-density relation, capacity per lane from the manual, jam density "
                f"{m.jam_density * 1000:.0f} veh/km per lane; ramp demand served first; "
                "demand profile " + ", ".join(f"{d / 60:.0f} min at {s:.0%}" for d, s in m.demand_profile),
                "kinematic-wave theory (Lighthill and Whitham 1955; Richards 1956); jam density common practice",
            ),
        ]
    if policy is not None:
        items.append(Assumption("Policy table", policy.table.title, f"{site.policy_choice.why}; {policy.table.source}"))
        items.append(Assumption("Policy interpolation", "see rule", policy.table.interpolation))
    return tuple(items)


def _before_the_nose(
    site: Site, results: tuple[VehicleAssessment, ...], initial: float, system: UnitSystem
) -> Assumption:
    """Speed gained between the end of the controlling curve and the convergence point, and whether it counts."""
    before = show(site.convergence, "length", system)
    if site.acceleration_from == "convergence":
        return Assumption(
            "Speed gained before the convergence point",
            f"none counted: every vehicle is taken at {show(initial, 'speed', system)} at the convergence point "
            f"({before} of ramp before it ignored)",
            "site criterion acceleration_from: convergence (policy-strict, as the policy tables assume)",
        )
    gained = "; ".join(
        f"{r.vehicle.id} {show(r.initial_speed, 'speed', system)} to {show(r.speed_at_convergence, 'speed', system)}"
        for r in results
    )
    return Assumption(
        "Speed gained before the convergence point",
        f"credited over the {before} of ramp before the nose: {gained}",
        "the vehicle accelerates along the ramp (default); the policy tables assume the initial speed at the "
        "convergence point: set criteria.acceleration_from: convergence for that reading",
    )


def _behaviour_assumption(site: Site, system: UnitSystem) -> Assumption:
    """Which merge behaviour the probability assumes, in plain words, with its sources."""
    allowed = f"merging allowed past the convergence point at {show(site.gaps.minimum_merge_speed, 'speed', system)} or more; "
    b = site.gaps.behaviour
    if b is None:
        return Assumption(
            "Merge behaviour (classic model)",
            allowed + f"each driver waits for a gap of at least their critical gap to drift past at "
            f"{show(site.gaps.search_speed, 'speed', system)} relative speed or more, holds merge speed, never forces in",
            "Drew (1968), Traffic Flow Theory and Control, ch. 9 (from memory); moving-observer relation",
        )
    sources = "; ".join(f"{name.replace('_', ' ')}: {text}" for name, text in SOURCES.items())
    return Assumption("Merge behaviour (active model)", allowed + _behaviour_words(b, system), sources)


def _headway_text(site: Site, system: UnitSystem) -> str:
    g = site.gaps
    model = f"{HEADWAY_MODELS[g.headway_model].summary}, at {show(site.adjacent_lane_flow, 'flow', system)}"
    if g.headway_model == "exponential":
        return model
    free = "Tanner's 1 - Delta q" if g.free_fraction is None else f"{g.free_fraction:.2f}"
    return f"{model}, minimum headway {show(g.min_headway, 'time', system)}, free share {free}"


def summary_sentence(assessment: SiteAssessment, system: Literal["si", "us"]) -> str:
    """The one sentence a reader needs first."""
    g = assessment.governing
    site = assessment.site
    lane = show(site.available_length, "length", system)
    provided = f"{lane} provided"
    if site.available_length != site.lane_length:  # the taper credit: say what the length is made of
        provided += f" (the {show(site.lane_length, 'length', system)} lane and {site.taper_credit:.0%} of the taper)"
    if assessment.performance_verdict == "meets":
        return (
            f"All design vehicles reach merge speed and find a gap within the {lane} provided; {g.vehicle.id} "
            f"governs, needing {show(g.length_needed, 'length', system)}."
        )
    if g.verdict == "cannot-reach":
        return (
            f"Design vehicle {g.vehicle.id} never reaches its merge speed of {show(g.merge_speed, 'speed', system)}: its crawl speed is "
            f"{show(g.crawl_speed, 'speed', system)}, and it leaves the {lane} lane at "
            f"{show(g.speed_at_taper_start, 'speed', system)}, {show(g.speed_differential_at_taper_start, 'speed', system)} "
            f"below the stream."
        )
    forced = g.merge.by_taper_end - g.merge.unforced
    accepted = "none of them finds" if g.merge.unforced < 0.005 else f"{g.merge.unforced:.0%} of them find"
    merged = f"{accepted} a gap they accept before the full-width lane ends" + (
        f", and {forced:.0%} {'more ' if g.merge.unforced >= 0.005 else ''}force their way in"
        if forced >= 0.005
        else ""
    )
    lane_end = site.convergence + site.available_length
    if g.length_needed is None and (g.merge.eligible_station is None or g.merge.eligible_station > lane_end):
        return (
            f"Design vehicle {g.vehicle.id} is still below the minimum merge speed of {show(site.gaps.minimum_merge_speed, 'speed', system)} "
            f"at the end of the {lane} lane (it leaves the lane at {show(g.speed_at_taper_start, 'speed', system)} and needs "
            f"{show(g.required_length, 'length', system)} to reach its merge speed), so it can only force its way in."
        )
    if g.length_needed is None:
        return (
            f"Design vehicle {g.vehicle.id} reaches merge speed but rarely finds a gap: {merged}, short of the "
            f"{g.merge.reliability:.0%} target even on a much longer lane."
        )
    return (
        f"The lane is {show(g.deficit, 'length', system)} short for {g.vehicle.id}: it needs "
        f"{show(g.length_needed, 'length', system)} ({show(g.required_length, 'length', system)} to reach merge speed, "
        f"{show(g.merge.length_for_reliability, 'length', system)} for a {g.merge.reliability:.0%} chance of a gap) "
        f"against {provided}; {merged}."
    )


def _behaviour_words(behaviour: MergeBehaviour, system: UnitSystem) -> str:
    """What the active model assumes drivers do, for a report."""
    b = behaviour
    return (
        f"drivers pick, from about {b.approach_window:.0f} s of the adjacent stream seen on the approach, the gap they"
        " arrive beside; a driver who refuses the gap beside them eases off or speeds up to bring the next one"
        f" alongside (at least {show(b.search_differential, 'speed', system)} relative); the part of a gap behind the driver"
        " must hold the lag, and a vehicle slower than the stream needs a longer gap, the more so the weaker it"
        f" accelerates; within {show(b.pressure_distance, 'length', system)} of the end of the lane drivers accept shorter gaps (down"
        f" to {b.lane_end_share:.0%} of their own); lag drivers let a merger in more often as the lane fills"
        f" ({b.yield_at_capacity:.0%} of refused gaps at capacity); at the end of the lane drivers force into any"
        f" gap of {show(b.forced_gap, 'time', system)} or more plus the closing time; a merge counts where the lane change is half"
        " done. The length for the reliability target is read without the lane-end pressure and forced merges."
    )
