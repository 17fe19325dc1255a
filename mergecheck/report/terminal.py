"""Terminal renderer: rich tables readable at 100 columns. Reads results only."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..batch import BatchResult, BatchSummary
from ..cautions import CAUTION_LINE, CAUTIONS
from ..command_results import AccelerationRun, GapFigures
from ..critical_gap_estimation import CriticalGapEstimate
from ..merge_area import MergeArea
from ..merge_operations import MergeOperations
from ..shockwave import QueueGrowth
from ..sweep import Sweep
from ..units import UnitSystem, convert, show, unit_symbol
from ..vehicle_figures import VehicleFigures
from .document import Block, Items, Paragraph, SiteDocument, merge_area_blocks, unit_of
from .document import Table as DocumentTable
from .table_rows import BATCH_NOTE, batch_row
from .wording import clearing


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
    table.add_column("Vehicle (model)", no_wrap=True)
    _figure_column(table, f"W/P ({unit_symbol('weight_to_power', system)})")
    for grade, _ in figures[0].sustained_speeds if figures else ():
        _figure_column(table, f"Held {grade:.0%} ({unit_symbol('speed', system)})")
    _figure_column(table, f"Stop to {show(80 / 3.6, 'speed', system)}")
    for f in figures:
        wp = "-" if f.weight_to_power is None else f"{convert(f.weight_to_power, 'weight_to_power', system):.0f}"
        held = ["> 250" if v is None else f"{convert(v, 'speed', system):.0f}" for _, v in f.sustained_speeds]
        start = "-" if f.level_distance is None else f"{show(f.level_distance, 'length', system)}, {f.level_time:.0f} s"
        vehicle = Text.assemble((f.vehicle.id, "bold"), "\n", (f.vehicle.model_name, "dim"))  # model under the id
        table.add_row(vehicle, wp, *held, start)
    return with_cautions(table)


def _figure_column(table: Table, heading: str) -> None:
    """A right-aligned column of figures whose heading and figures break over lines on a narrow terminal instead
    of being cut off with an ellipsis (rich cannot hold a column at a least width and still fit the terminal)."""
    table.add_column(heading, justify="right", overflow="fold")


_VERDICT_STYLE = {"meets": "bold green", "short": "bold red", "cannot-reach": "bold red"}


_FLAG_STYLE = {
    "large": "red",
    "exceeded": "bold red",
    "meets": "bold green",
    "short": "bold red",
    "cannot-reach": "bold red",
}
_TONE_STYLE = {"plain": "", "quiet": "dim", "warning": "yellow", "strong": "bold"}


def site_view(document: SiteDocument, *, details: bool = False) -> RenderableType:
    """The site report (:mod:`mergecheck.report.document`): the verdict first, then each section in turn; the
    assumptions and the cautions in full only with ``details`` (a line says where they are)."""
    system = document.system
    parts: list[RenderableType] = [
        Text.assemble(
            ("Verdict: ", "bold"),
            (document.verdict.upper(), _VERDICT_STYLE[document.verdict]),
            ("   governing vehicle: ", "bold"),
            (document.governing, "bold"),
        ),
        Text(f"Site: {document.site}"),
        *(Text(line) for line in document.headline),
        Text(document.summary),
    ]
    for section in document.sections:
        if section.key == "assumptions" and not details:
            continue
        parts += [Text(""), Text(section.title, style="bold underline"), *_blocks(section.blocks, system)]
    where = "--details, or the --markdown, --html and --json reports, which carry them with every assumption"
    parts.append(cautions_block(document.cautions, full=details, where=where))
    return Group(*parts)


def _blocks(blocks: Sequence[Block], system: UnitSystem) -> list[RenderableType]:
    """Document blocks as terminal renderables (figures are drawn in the HTML report only)."""
    shown: list[RenderableType] = []
    for block in blocks:
        if isinstance(block, Items):
            grid = _grid()
            for label, value in block.rows:
                grid.add_row(label, _styled(value.text(system), value.flag))
            shown.append(grid)
        elif isinstance(block, DocumentTable):
            shown.append(_table(block, system))
        elif isinstance(block, Paragraph):
            shown.append(Text(block.text, style=_TONE_STYLE[block.tone]))
    return shown


PROSE_WIDTH = 72
"""Characters at which a text column after the first wraps (a file or pipe has no terminal width to wrap at)."""


def _table(table: DocumentTable, system: UnitSystem) -> Table:
    shown = Table(title=table.caption or None, title_justify="left")
    for i, (heading, kind) in enumerate(table.columns):
        unit = unit_of(kind, system)
        heading = f"{heading} ({unit})" if unit else heading
        if kind == "text":  # the first column (vehicle ids) whole; prose wraps, piped as on a terminal
            shown.add_column(heading, no_wrap=i == 0, max_width=None if i == 0 else PROSE_WIDTH, overflow="fold")
        else:
            _figure_column(shown, heading)
    for row in table.rows:
        shown.add_row(*(_styled(v.text(system, unit=False) + (" ⚑" if v.flag == "large" else ""), v.flag) for v in row))
    return shown


def _styled(text: str, flag: str) -> Text:
    return Text(text, style=_FLAG_STYLE.get(flag, ""))


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
    for label, state in (("Arriving", queue.arriving), ("Queued", queue.queued)):
        table.add_row(
            label,
            f"{show(state.flow, 'flow', system)} at {show(state.density, 'density', system)}"
            f" ({show(state.speed, 'speed', system)})",
        )
    direction = "upstream" if queue.shock_speed < 0 else "downstream"
    table.add_row(
        "Boundary",
        f"moves {direction} at {show(abs(queue.shock_speed), 'speed', system)}",
    )
    table.add_row("Queue gains", show(queue.growth, "flow", system))
    table.add_row(
        f"After {queue.duration / 60:.0f} min",
        f"back of queue {show(queue.length_after, 'distance', system)} upstream; {queue.joined_after:.0f} vehicles"
        f" joined the queue, {queue.excess_after:.0f} more than the same road held before",
    )
    return with_cautions(table)


def area_view(area: MergeArea) -> RenderableType:
    """The ``merge-area`` command: the same figures and words as a site report's merge-area section."""
    return with_cautions(Group(*_blocks(merge_area_blocks(area), "si")))


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
    skipped = Text(f"Left out, not site files: {'; '.join(summary.skipped)}") if summary.skipped else Text("")
    table = Table(title="Sites, worst first", title_justify="left")
    table.add_column("#", justify="right")
    table.add_column("Site, and the vehicle that governs (its own verdict)", overflow="fold", ratio=1)
    table.add_column("Verdict", overflow="fold")
    for heading in ("Need", "Have", "Short by", "Policy"):  # the unit under the heading: narrow columns
        _figure_column(table, f"{heading}\n({unit_symbol('length', system)})")
    _figure_column(table, f"Δv\n({unit_symbol('speed', system)})")
    for rank, result in enumerate(results[:BATCH_ROWS_SHOWN], start=1):
        row = batch_row(rank, result, system)
        if result.assessment is None:
            error = Text(f"{result.label}: {row['error']}", style="red")
            table.add_row(row["rank"], error, Text("unreadable", style="bold red"), *[""] * 5)
            continue
        a = result.assessment
        table.add_row(
            row["rank"],
            Text.assemble(row["site"], "\n", (f"{row['governing_vehicle']} ({row['governing_verdict']})", "dim")),
            Text.assemble((a.verdict, _VERDICT_STYLE[a.verdict]), (f" ({row['verdict_basis']})", "dim")),
            row["length_needed"],
            row["available"],
            row["deficit"] or "-",
            row["policy_minimum"] or "-",
            row["speed_differential_at_taper_start"],
        )
    note = Text(BATCH_NOTE, style="dim")
    parts: list[RenderableType] = [head, Text(f"Short sites by governing vehicle: {by_vehicle}"), skipped, table, note]
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
            Text.assemble(
                (p.assessment.verdict, _VERDICT_STYLE[p.assessment.verdict]),
                (f" ({p.assessment.basis})", "dim"),
                marker,
            ),
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


def cautions_block(cautions: tuple[str, ...] = CAUTIONS, *, full: bool = True, where: str = "") -> RenderableType:
    """The cautions every report carries: in full, or in one line with where the full text is."""
    if not full:
        return Group(Text(""), Text(f"{CAUTION_LINE} Full cautions: {where}.", style="bold"))
    return Group(Text(""), Text("Cautions", style="bold"), *(Text(f"• {c}") for c in cautions))


def with_cautions(body: RenderableType) -> RenderableType:
    """A small command's view: the cautions in one line (in full in its --json document)."""
    return Group(body, cautions_block(full=False, where="in the --json document"))
