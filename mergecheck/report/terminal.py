"""Terminal renderer: rich tables readable at 100 columns. Reads results only."""

from __future__ import annotations

import numpy as np
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..assessment import SiteAssessment
from ..batch import BatchResult, BatchSummary
from ..cautions import CAUTIONS
from ..critical_gap_estimation import CriticalGapEstimate
from ..figures import VehicleFigures
from ..merge_area import MergeArea
from ..merge_operations import MergeOperations
from ..narrative import assumptions, summary_sentence
from ..results import AccelerationRun, GapFigures
from ..shockwave import QueueGrowth
from ..sweep import Sweep
from ..units import UnitSystem, convert, number, show, unit_symbol
from .table_rows import batch_row
from .wording import clearing, merge_behaviour, slowing_notes, verdict_bases


def _table_interval(length: float, system: UnitSystem) -> float:
    """A round sampling interval giving 10 to 25 rows. [m]"""
    unit = 0.3048 if system == "us" else 1.0
    for step in (10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000):
        if length / (step * unit) <= 25:
            return step * unit
    return 5000 * unit


def acceleration_view(run: AccelerationRun, system: UnitSystem) -> RenderableType:
    """Key figures, then station, grade, speed and time at regular intervals."""
    trajectory = run.trajectory
    vehicle = run.vehicle
    start, end = trajectory.start, trajectory.end
    slowing = trajectory.target_speed < trajectory.initial_speed
    if trajectory.reaches_target and slowing:
        verdict = Text(
            f"Falls to {show(trajectory.target_speed, 'speed', system)} after "
            f"{show(trajectory.distance, 'length', system)} in {show(trajectory.duration, 'time', system)} "
            f"(a loss of {show(trajectory.initial_speed - trajectory.target_speed, 'speed', system)}: the critical "
            "length of grade for that reduction).",
            style="bold yellow",
        )
    elif trajectory.reaches_target:
        verdict = Text(
            f"Reaches {show(trajectory.target_speed, 'speed', system)} after "
            f"{show(trajectory.distance, 'length', system)} in {show(trajectory.duration, 'time', system)}.",
            style="bold green",
        )
    elif trajectory.stalled:
        verdict = Text("Cannot move on this grade: the vehicle stalls.", style="bold red")
    elif slowing:
        verdict = Text(
            f"Never falls to {show(trajectory.target_speed, 'speed', system)}: it settles at its crawl speed of "
            f"{show(trajectory.crawl_speed, 'speed', system)} on the final grade.",
            style="bold green",
        )
    else:
        crawl = trajectory.crawl_speed
        verdict = Text(
            f"Cannot reach {show(trajectory.target_speed, 'speed', system)}: the crawl speed on the final grade is "
            f"{show(crawl, 'speed', system)}.",
            style="bold red",
        )
    head = Table.grid(padding=(0, 2))
    head.add_column(style="bold")
    head.add_column()
    head.add_row("Vehicle", f"{vehicle.id}: {vehicle.name}")
    head.add_row("Model", vehicle.model_name)
    if vehicle.weight_to_power is not None:
        head.add_row("Weight-to-power", show(vehicle.weight_to_power, "weight_to_power", system))
    head.add_row(
        "From / to",
        f"{show(trajectory.initial_speed, 'speed', system)} / {show(trajectory.target_speed, 'speed', system)}",
    )
    head.add_row("Elevation", show(run.elevation, "length", system))

    step = _table_interval(end - start, system)
    stations = np.arange(start, end, step)
    if trajectory.target_station is not None:
        stations = np.append(stations, trajectory.target_station)
    stations = np.unique(np.append(stations, end))
    rows = Table(title="Speed along the profile", title_justify="left")
    rows.add_column(f"Station ({unit_symbol('length', system)})", justify="right")
    rows.add_column("Grade (%)", justify="right")
    rows.add_column(f"Speed ({unit_symbol('speed', system)})", justify="right")
    rows.add_column("Time (s)", justify="right")
    speeds = trajectory.speed_at(stations)
    times = trajectory.time_at(stations)
    grades = run.profile.grade(stations)
    for x, g, v, t in zip(stations, grades, speeds, times, strict=True):
        marker = (
            " ◂ target" if trajectory.target_station is not None and abs(x - trajectory.target_station) < 1e-9 else ""
        )
        rows.add_row(
            f"{convert(x, 'length', system):.0f}",
            f"{100 * g:.2f}",
            f"{convert(v, 'speed', system):.1f}{marker}",
            f"{t:.1f}",
        )
    return with_cautions(Group(head, Text(""), verdict, Text(""), rows))


def vehicles_view(figures: list[VehicleFigures], system: UnitSystem) -> RenderableType:
    """One row per design vehicle with its key figures."""
    table = Table(title="Design vehicles", title_justify="left")
    table.add_column("Id", style="bold", no_wrap=True)
    table.add_column("Model", no_wrap=True)
    table.add_column(f"W/P ({unit_symbol('weight_to_power', system)})", justify="right")
    for grade, _ in figures[0].sustained_speeds if figures else ():
        table.add_column(f"Held {grade:.0%} ({unit_symbol('speed', system)})", justify="right")
    table.add_column(f"Stop to {show(80 / 3.6, 'speed', system)}", justify="right", no_wrap=True)
    for f in figures:
        wp = "-" if f.weight_to_power is None else f"{convert(f.weight_to_power, 'weight_to_power', system):.0f}"
        held = ["> 250" if v is None else f"{convert(v, 'speed', system):.0f}" for _, v in f.sustained_speeds]
        start = "-" if f.level_distance is None else f"{show(f.level_distance, 'length', system)}, {f.level_time:.0f} s"
        table.add_row(f.vehicle.id, f.vehicle.model_name, wp, *held, start)
    return with_cautions(table)


_VERDICT_STYLE = {"meets": "bold green", "short": "bold red", "cannot-reach": "bold red"}


def site_view(assessment: SiteAssessment, system: UnitSystem) -> RenderableType:
    """Verdict first, then speeds, lengths, policy, assumptions and cautions."""
    site = assessment.site
    unit_v, unit_l = unit_symbol("speed", system), unit_symbol("length", system)
    verdict = Text.assemble(
        ("Verdict: ", "bold"),
        (assessment.verdict.upper(), _VERDICT_STYLE[assessment.verdict]),
        ("   governing vehicle: ", "bold"),
        (assessment.governing.vehicle.id, "bold"),
    )
    layout = Table.grid(padding=(0, 2))
    layout.add_column(style="bold")
    layout.add_column()
    layout.add_row("Site", site.name)
    layout.add_row(
        "Mainline",
        f"design {show(site.design_speed, 'speed', system)}, operating {show(site.operating_speed, 'speed', system)}, "
        f"{site.lanes} lanes, adjacent lane {site.adjacent_lane_flow * 3600:.0f} veh/h",
    )
    ramp_start = (
        "stop"
        if site.controlling_speed is None
        else f"controlling curve {show(site.controlling_speed, 'speed', system)}"
    )
    layout.add_row(
        "Ramp",
        f"{ramp_start}, leaving at {show(assessment.initial_speed, 'speed', system)}, {site.ramp_flow * 3600:.0f} veh/h",
    )
    layout.add_row(
        "Layout",
        f"{site.entrance} entrance: convergence point at {show(site.convergence, 'length', system)}, lane "
        f"{show(site.lane_length, 'length', system)}, taper {show(site.taper_length, 'length', system)}; "
        f"average grade over the lane {assessment.average_grade:+.1%}",
    )

    speeds = Table(title="Speeds along the ramp", title_justify="left")
    speeds.add_column("Vehicle", no_wrap=True)
    for heading in ("Merge", "At conv. pt", "At lane end", "At taper end", "Δv lane end", "Crawl"):
        speeds.add_column(f"{heading} ({unit_v})", justify="right")
    for v in assessment.vehicles:
        diff = f"{convert(v.speed_differential_at_lane_end, 'speed', system):.1f}"
        speeds.add_row(
            v.vehicle.id,
            number(v.merge_speed, "speed", system),
            number(v.speed_at_convergence, "speed", system),
            number(v.speed_at_taper_start, "speed", system),
            number(v.speed_at_taper_end, "speed", system),
            Text(diff + (" ⚑" if v.large_differential else ""), style="red" if v.large_differential else ""),
            number(v.crawl_speed, "speed", system),
        )

    policy = assessment.policy
    lengths = Table(title="Acceleration length (from the convergence point)", title_justify="left")
    lengths.add_column("Vehicle", no_wrap=True)
    lengths.add_column("Share", justify="right")
    for heading in ("To merge speed", f"For {site.gaps.reliability:.0%} gaps", "Available", "Deficit"):
        lengths.add_column(f"{heading} ({unit_l})", justify="right")
    lengths.add_column("Verdict")
    for v in assessment.vehicles:
        required = "never" if v.required_length is None else number(v.required_length, "length", system)
        deficit = "-" if v.deficit is None else number(v.deficit, "length", system)
        lengths.add_row(
            v.vehicle.id,
            f"{v.share:.0%}",
            required,
            "-" if v.merge.length_for_reliability is None else number(v.merge.length_for_reliability, "length", system),
            number(v.available_length, "length", system),
            deficit,
            Text(v.verdict, style=_VERDICT_STYLE[v.verdict]),
        )
    if policy is not None:
        value = "none" if policy.minimum_length is None else number(policy.minimum_length, "length", system)
        basis = policy.note
        if policy.merge_speed is not None:
            basis += f"; assumes merge at {show(policy.merge_speed, 'speed', system)}"
        lengths.add_row("policy minimum", "", value, "", number(site.available_length, "length", system), "", "")

    merging = Table(
        title=f"Merging into the adjacent lane ({site.adjacent_lane_flow * 3600:.0f} veh/h)", title_justify="left"
    )
    merging.add_column("Vehicle", no_wrap=True)
    for heading in (
        "Merged by lane end",
        "By taper end",
        "Forced in taper (veh/h)",
        "Stops (veh/h)",
        "Stopped wait (s)",
    ):
        merging.add_column(heading, justify="right")
    for v in assessment.vehicles:
        m = v.merge
        simulated = "" if v.monte_carlo is None else f" (sim. {v.monte_carlo.by_lane_end:.1%})"
        merging.add_row(
            v.vehicle.id,
            f"{m.by_lane_end:.1%}{simulated}",
            f"{m.by_taper_end:.1%}",
            f"{m.forced_merges_per_h:.1f}",
            f"{m.stops_per_h:.1f}",
            f"{m.mean_stopped_wait:.0f}",
        )

    on, policy_line, performance_line = verdict_bases(assessment, system)
    parts: list[RenderableType] = [
        verdict,
        Text(on),
        Text(policy_line),
        Text(performance_line),
        *(Text(line, style="yellow") for line in slowing_notes(assessment, system)),
        Text(summary_sentence(assessment, system)),
        Text(""),
        layout,
        Text(""),
        speeds,
        lengths,
        merging,
        Text(merge_behaviour(site), style="dim"),
    ]
    if policy is not None:
        parts.append(Text(f"Policy minimum: {basis}.", style="bold"))
        parts.append(
            Text(
                f"Policy: {policy.table.title}. {policy.table.source} Length measured: {policy.table.length_definition}",
                style="dim",
            )
        )
        if policy.table.caution:
            parts.append(Text(f"Policy caution: {policy.table.caution}", style="yellow"))
    if assessment.merge_area is not None:
        parts += [Text(""), merge_area_view(assessment.merge_area, system)]
    listed = Table(title="Assumptions", title_justify="left", show_lines=False)
    listed.add_column("Item", no_wrap=False, ratio=2)
    listed.add_column("Value", ratio=2)
    listed.add_column("Source", ratio=5)
    for a in assumptions(assessment):
        listed.add_row(a.name, a.value, a.source)
    parts += [Text(""), listed, cautions_block(CAUTIONS)]
    return Group(*parts)


def gaps_view(figures: GapFigures) -> RenderableType:
    table = _grid()
    model = (
        "negative exponential"
        if figures.model == "exponential"
        else (f"Cowan M3, minimum headway {figures.min_headway:.2f} s, free share {figures.free_fraction:.3f}")
    )
    table.add_row("Headways", f"{model} at {figures.flow * 3600:.0f} veh/h")
    table.add_row("Critical gap", f"{figures.critical_gap:.2f} s")
    table.add_row("P(headway >= critical gap)", f"{figures.p_headway_at_least:.4f}")
    table.add_row("Acceptable gaps", f"{figures.acceptable_gaps_per_h:.1f} per hour")
    table.add_row("Mean wait, stopped driver", f"{figures.mean_wait:.1f} s (random arrival, lag may be taken)")
    return with_cautions(table)


def critical_gap_view(estimate: CriticalGapEstimate, source: str) -> RenderableType:
    table = _grid()
    table.add_row("Observations", f"{source}: {estimate.drivers} drivers")
    table.add_row("Method", estimate.note)
    label = "Mean critical gap" if estimate.method == "mle" else "Critical gap"
    table.add_row(label, f"{estimate.mean:.2f} s (95 % interval {estimate.ci_low:.2f} to {estimate.ci_high:.2f} s)")
    table.add_row(
        "Standard deviation", "not estimated by this method" if estimate.sd is None else f"{estimate.sd:.2f} s"
    )
    return with_cautions(table)


def merge_area_view(operations: MergeOperations, system: UnitSystem) -> RenderableType:
    """Capacity-manual merge-area figures and, in breakdown, the queue."""
    area = operations.area
    table = _grid()
    density = f"{area.density_pc_mi_ln:.1f} pc/mi/ln ({area.density_pc_km_ln:.1f} pc/km/ln)"
    table.add_row("Merge area (HCM ch. 14)", f"LOS {area.los}, density {density}")
    table.add_row(
        "Flows",
        f"mainline {area.mainline_pc_h:.0f} pc/h, ramp {area.ramp_pc_h:.0f} pc/h, P_FM {area.p_fm:.3f}, "
        f"v12 {area.v12_pc_h:.0f} pc/h, entering influence area {area.vr12_pc_h:.0f} pc/h",
    )
    table.add_row("L_A (lane + taper)", show(operations.acceleration_length, "length", system))
    for check in area.checks:
        state = Text("exceeded", style="bold red") if check.exceeded else Text("ok", style="green")
        table.add_row(
            f"  {check.name}", Text.assemble(f"{check.demand_pc_h:.0f} / {check.capacity_pc_h:.0f} pc/h ", state)
        )
    table.add_row("Capacity lost to slow trucks", f"{operations.capacity_lost_pc_h:.0f} pc/h")
    if operations.queue is not None:
        queue = operations.queue
        clears = clearing(operations)
        table.add_row(
            Text("Breakdown", style="bold red"),
            f"queue back moves upstream at {show(-queue.shock_speed, 'speed', system)}, gains "
            f"{queue.growth * 3600:.0f} veh/h at the peak 15-minute rate; "
            f"{show(operations.queue_length_after_hour or 0.0, 'length', system)} long after 1 h; clears {clears}",
        )
    return table


def queue_view(queue: QueueGrowth, system: UnitSystem) -> RenderableType:
    table = _grid()
    table.add_row(
        "Arriving",
        f"{queue.arriving.flow * 3600:.0f} veh/h at {queue.arriving.density * 1000:.1f} veh/km ({show(queue.arriving.speed, 'speed', system)})",
    )
    table.add_row(
        "Queued",
        f"{queue.queued.flow * 3600:.0f} veh/h at {queue.queued.density * 1000:.1f} veh/km ({show(queue.queued.speed, 'speed', system)})",
    )
    direction = "upstream" if queue.shock_speed < 0 else "downstream"
    table.add_row(
        "Boundary",
        f"moves {direction} at {show(abs(queue.shock_speed), 'speed', system)} ({queue.shock_speed:+.3f} m/s)",
    )
    table.add_row("Queue gains", f"{queue.growth * 3600:.0f} veh/h")
    table.add_row(
        f"After {queue.duration / 60:.0f} min",
        f"back of queue {show(queue.length_after, 'length', system)} upstream; {queue.joined_after:.0f} vehicles"
        f" joined the queue, {queue.excess_after:.0f} more than the same road held before",
    )
    return with_cautions(table)


def area_view(area: MergeArea) -> RenderableType:
    table = _grid()
    table.add_row(
        "Level of service",
        f"{area.los} (influence-area density {area.density_pc_mi_ln:.1f} pc/mi/ln, {area.density_pc_km_ln:.1f} pc/km/ln)",
    )
    table.add_row("P_FM", f"{area.p_fm:.4f}")
    table.add_row("v12", f"{area.v12_pc_h:.0f} pc/h")
    if area.lane_distribution:
        table.add_row("v12 raised by", area.lane_distribution)
    if area.lane_five_pc_h:
        table.add_row("Lane 5 (taken off first)", f"{area.lane_five_pc_h:.0f} pc/h")
    table.add_row("Entering the influence area", f"{area.vr12_pc_h:.0f} pc/h")
    for check in area.checks:
        state = Text("exceeded", style="bold red") if check.exceeded else Text("ok", style="green")
        table.add_row(check.name, Text.assemble(f"{check.demand_pc_h:.0f} / {check.capacity_pc_h:.0f} pc/h ", state))
    return with_cautions(table)


BATCH_ROWS_SHOWN = 25
"""Sites a batch lists on the terminal, worst first; the files written hold every site."""


def batch_view(results: list[BatchResult], summary: BatchSummary, system: UnitSystem) -> RenderableType:
    """Summary line, then the worst sites (at most :data:`BATCH_ROWS_SHOWN`) and a count of the rest."""
    head = Text.assemble(
        (f"{summary.total} sites: ", "bold"),
        (f"{summary.meets} meet", "green"),
        ", ",
        (f"{summary.short} short", "red"),
        f" ({summary.cannot_reach} where the governing vehicle never reaches merge speed), ",
        (f"{summary.unreadable} unreadable", "bold red" if summary.unreadable else ""),
    )
    by_vehicle = "; ".join(f"{v} governs {n}" for v, n in summary.short_by_vehicle.items()) or "-"
    table = Table(title="Sites, worst first", title_justify="left")
    table.add_column("#", justify="right")
    table.add_column("Site", overflow="fold", ratio=1, min_width=28)
    table.add_column("Verdict", no_wrap=True)
    table.add_column("Governing", overflow="ellipsis", max_width=20)
    for heading in ("Need", "Have", "Short by"):
        table.add_column(f"{heading} ({unit_symbol('length', system)})", justify="right", no_wrap=True)
    table.add_column(f"Δv ({unit_symbol('speed', system)})", justify="right", no_wrap=True)
    for rank, result in enumerate(results[:BATCH_ROWS_SHOWN], start=1):
        row = batch_row(rank, result, system)
        if result.assessment is None:
            table.add_row(
                row["rank"],
                Text(f"{result.label}: {row['error']}", style="red"),
                Text("unreadable", style="bold red"),
                "",
                "",
                "",
                "",
                "",
            )
            continue
        verdict = row["verdict"] if row["governing_verdict"] != "cannot-reach" else "short, never"
        table.add_row(
            row["rank"],
            row["site"],
            Text(verdict, style=_VERDICT_STYLE[result.assessment.verdict]),
            row["governing_vehicle"],
            row["length_needed"],
            row["available"],
            row["deficit"] or "-",
            row["speed_differential_at_lane_end"],
        )
    parts: list[RenderableType] = [head, Text(f"Short sites by governing vehicle: {by_vehicle}"), Text(""), table]
    rest = len(results) - BATCH_ROWS_SHOWN
    if rest > 0:
        parts.append(Text(f"... and {rest} more sites, ranked after these: --csv FILE or --json FILE lists them all."))
    return with_cautions(Group(*parts))


def sweep_view(result: Sweep, system: UnitSystem) -> RenderableType:
    kind = result.kind
    table = Table(title=f"Sweep of {result.field}", title_justify="left")
    unit = unit_symbol(kind, system) if kind in ("length", "grade", "flow", "weight_to_power") else ""
    table.add_column(f"{result.field} ({unit})", justify="right")
    table.add_column("Verdict")
    table.add_column("Governing")
    table.add_column(f"Needed ({unit_symbol('length', system)})", justify="right")
    table.add_column("Merged by lane end", justify="right")
    for p in result.points:
        g = p.assessment.governing
        needed = "never" if g.length_needed is None else f"{convert(g.length_needed, 'length', system):.0f}"
        marker = "  ◂ verdict changes" if p.verdict_changes else ""
        table.add_row(
            f"{convert(p.value, kind, system):.{2 if kind in ('grade',) else 0}f}",
            Text(p.assessment.verdict + marker, style=_VERDICT_STYLE[p.assessment.verdict]),
            g.vehicle.id,
            needed,
            f"{g.merge.by_lane_end:.1%}",
        )
    return with_cautions(table)


def _grid() -> Table:
    """A two-column grid: bold labels, then values."""
    table = Table.grid(padding=(0, 2))
    table.add_column(style="bold")
    table.add_column()
    return table


def cautions_block(cautions: tuple[str, ...] = CAUTIONS) -> RenderableType:
    """The cautions every report carries."""
    return Group(Text(""), Text("Cautions", style="bold"), *(Text(f"• {c}") for c in cautions))


def with_cautions(body: RenderableType) -> RenderableType:
    return Group(body, cautions_block())
