"""The site report as one document, built once from an assessment; the writers (terminal, Markdown, HTML) only
lay it out.

A document is a headline and sections; a section is a run of blocks: labelled values (:class:`Items`), a
:class:`Table`, a :class:`Paragraph` or a :class:`Figure` (drawn by the HTML writer only). Every number is
a :class:`Value`: the SI value and its kind, formatted in the report's unit system by :meth:`Value.text`, the
one place where a report turns numbers into text. The words come from :mod:`mergecheck.narrative` and
:mod:`mergecheck.report.wording`.
"""

from __future__ import annotations

import datetime
from dataclasses import dataclass
from typing import Literal

from ..assessment import SiteAssessment, SiteCheck
from ..cautions import CAUTIONS
from ..exception_study import DesignException
from ..merge_area import MergeArea
from ..merge_operations import MergeOperations
from ..narrative import assumptions, summary_sentence
from ..units import DISPLAY, UnitSystem, show
from .wording import clearing, merge_behaviour, mitigation_change, slowing_notes, verdict_bases

Kind = Literal["text", "length", "speed", "time", "flow", "grade", "share", "probability", "per_hour", "count"]
"""What a value is: a quantity with a display unit (length, speed, time, flow), a grade, a share of a whole
(0 decimals) or a probability (1 decimal) in percent, a rate per hour or a count of vehicles, or text."""
_QUANTITIES = ("length", "speed", "time", "flow")


@dataclass(frozen=True, slots=True)
class Value:
    """One value of the report: SI number or text, its kind, what to show when there is none, and a flag a
    writer may mark (``large``, ``exceeded``, a verdict)."""

    value: float | str | None
    kind: Kind = "text"
    missing: str = "-"
    flag: str = ""

    def text(self, system: UnitSystem, *, unit: bool = True) -> str:
        """The value as the report shows it; quantities with their unit unless ``unit`` is False (a column
        whose heading carries it)."""
        v = self.value
        if v is None:
            return self.missing
        if isinstance(v, str) or self.kind == "text":
            return str(v)
        match self.kind:
            case "length" | "speed" | "time" | "flow":
                if unit:
                    return show(v, self.kind, system)
                shown = DISPLAY[system][self.kind]
                return f"{shown.value(v):.{shown.digits}f}"
            case "grade":
                return f"{v:+.1%}"
            case "share":
                return f"{v:.0%}"
            case "probability":
                return f"{v:.1%}"
            case "per_hour":
                return f"{v:.1f}"
            case "count":
                return f"{v:.0f}"
        return str(v)


def unit_of(kind: Kind, system: UnitSystem) -> str:
    """The unit a column of this kind is headed with ('' for none)."""
    return DISPLAY[system][kind].symbol if kind in _QUANTITIES else ""


@dataclass(frozen=True, slots=True)
class Items:
    """Labelled values, one a line."""

    rows: tuple[tuple[str, Value], ...]


@dataclass(frozen=True, slots=True)
class Table:
    """Columns (heading, kind: the unit goes in the heading) and rows of values."""

    columns: tuple[tuple[str, Kind], ...]
    rows: tuple[tuple[Value, ...], ...]
    caption: str = ""


@dataclass(frozen=True, slots=True)
class Paragraph:
    text: str
    tone: Literal["plain", "quiet", "warning", "strong"] = "plain"


@dataclass(frozen=True, slots=True)
class Figure:
    """A figure the HTML writer draws (``key`` names it in :mod:`mergecheck.report.plots`)."""

    key: str
    caption: str


Block = Items | Table | Paragraph | Figure


@dataclass(frozen=True, slots=True)
class Section:
    key: str
    title: str
    blocks: tuple[Block, ...]


@dataclass(frozen=True, slots=True, kw_only=True)
class SiteDocument:
    """The whole site report, in one unit system."""

    system: UnitSystem
    title: str
    site: str
    source: str
    notes: str | None
    verdict: Literal["meets", "short"]
    governing: str
    governing_name: str
    headline: tuple[str, ...]
    """Which basis the verdict is on, each basis in a line, and any vehicle losing speed on the grade."""
    summary: str
    sections: tuple[Section, ...]
    cautions: tuple[str, ...]
    prepared_on: str
    """The date the report was made (ISO 8601)."""


def site_document(assessment: SiteCheck, system: UnitSystem, exception: DesignException | None = None) -> SiteDocument:
    """Every section of the site report, in the order a reader needs them."""
    a, site = assessment, assessment.site
    sections = [
        _layout(a),
        _speeds(a, system),
        _merging(a, system),
        _lengths(a, system),
    ]
    if a.merge_area is not None:
        sections.append(_merge_area(a.merge_area, system))
    if exception is not None:
        sections.append(_exception(a, exception, system))
    sections.append(
        Section(
            "assumptions",
            "Assumptions",
            (
                Table(
                    (("Item", "text"), ("Value", "text"), ("Source", "text")),
                    tuple((Value(x.name), Value(x.value), Value(x.source)) for x in assumptions(a, system)),
                ),
            ),
        )
    )
    return SiteDocument(
        system=system,
        title=f"Acceleration-lane check: {site.name}",
        site=site.name,
        source=site.source,
        notes=site.notes,
        verdict=a.verdict,
        governing=a.governing.vehicle.id,
        governing_name=a.governing.vehicle.name,
        headline=(*verdict_bases(a, system), *slowing_notes(a, system)),
        summary=summary_sentence(a, system),
        sections=tuple(sections),
        cautions=CAUTIONS,
        prepared_on=datetime.date.today().isoformat(),
    )


def _layout(a: SiteAssessment) -> Section:
    site = a.site
    ramp = (
        Value("stop (stop line or ramp meter)")
        if site.controlling_speed is None
        else Value(site.controlling_speed, "speed")
    )
    rows = (
        ("Mainline design speed", Value(site.design_speed, "speed")),
        ("Mainline operating speed at the merge", Value(site.operating_speed, "speed")),
        ("Through lanes per direction", Value(site.lanes, "count")),
        ("Flow in the adjacent lane", Value(site.adjacent_lane_flow, "flow")),
        ("Ramp controlling speed", ramp),
        ("Speed leaving the controlling curve", Value(a.initial_speed, "speed")),
        ("Ramp flow", Value(site.ramp_flow, "flow")),
        ("Entrance type", Value(site.entrance)),
        ("Convergence point, from the end of the controlling curve", Value(site.convergence, "length")),
        ("Acceleration lane, convergence point to the start of the taper", Value(site.lane_length, "length")),
        ("Taper", Value(site.taper_length, "length")),
        ("Length available for the computed needs (lane and taper credit)", Value(site.available_length, "length")),
        ("Average grade over the lane", Value(a.average_grade, "grade")),
        ("Elevation at station 0", Value(site.elevation, "length")),
    )
    return Section(
        "layout",
        "Layout",
        (
            Items(rows),
            Figure("layout", "The layout to scale along the vehicle path, with the elevation profile beneath."),
        ),
    )


def _speeds(a: SiteAssessment, system: UnitSystem) -> Section:
    rows = tuple(
        (
            Value(v.vehicle.id),
            Value(v.merge_speed, "speed"),
            Value(v.speed_at_convergence, "speed"),
            Value(v.speed_at_taper_start, "speed"),
            Value(v.speed_at_taper_end, "speed"),
            Value(v.speed_differential_at_taper_start, "speed", flag="large" if v.large_differential else ""),
            Value(v.crawl_speed, "speed"),
        )
        for v in a.vehicles
    )
    columns: tuple[tuple[str, Kind], ...] = (
        ("Vehicle", "text"),
        ("Merge speed", "speed"),
        ("At the convergence point", "speed"),
        ("At the end of the lane", "speed"),
        ("At the end of the taper", "speed"),
        ("Differential at the end of the lane", "speed"),
        ("Crawl speed", "speed"),
    )
    note = (
        "The differential is the mainline operating speed less the vehicle's speed where the full-width lane "
        f"ends; above {show(a.site.flag_speed_differential, 'speed', system)} it is flagged as large."
    )
    return Section(
        "speeds",
        "Speed along the ramp",
        (
            Figure("speed", "Speed of each design vehicle against distance; markers show where each reaches its merge speed."),
            Table(columns, rows),
            Paragraph(note, "quiet"),
        ),
    )  # fmt: skip


def _lengths(a: SiteAssessment, system: UnitSystem) -> Section:
    site, policy = a.site, a.policy
    target = f"{site.gaps.reliability:.0%}"
    columns: tuple[tuple[str, Kind], ...] = (
        ("Vehicle", "text"),
        ("Share of ramp flow", "share"),
        ("To merge speed", "length"),
        (f"For {target} to find a gap", "length"),
        ("Available", "length"),
        ("Short by", "length"),
        ("Verdict", "text"),
    )
    rows = [
        (
            Value(v.vehicle.id),
            Value(v.share, "share"),
            Value(v.required_length, "length", missing="never"),
            Value(
                v.merge.length_for_reliability,
                "length",
                missing="never near merge speed" if v.merge.eligible_station is None else "beyond the search",
            ),
            Value(v.available_length, "length"),
            Value(v.deficit, "length"),
            Value(v.verdict, flag=v.verdict),
        )
        for v in a.vehicles
    ]
    blocks: list[Block] = [
        Figure(
            "length",
            f"Length each vehicle needs from the convergence point (the longer of reaching merge speed and finding a"
            f" gap at the {target} target), against the length available and the policy minimum.",
        ),
        Table(columns, tuple(rows)),
        Paragraph(
            "Lengths are measured as the policy tables measure them, from the convergence point: to where the vehicle"
            f" reaches its merge speed, and to where {target} of its drivers have found an acceptable gap. The length"
            f" available is the lane ({show(site.lane_length, 'length', system)}) plus the taper credit"
            f" ({site.taper_credit:.0%} of the taper).",
            "quiet",
        ),
    ]
    if policy is None:
        blocks.append(Paragraph("No policy table was applied (the site file says policy: none)."))
    else:
        blocks.append(
            Items(
                (
                    ("Policy minimum acceleration length", Value(policy.minimum_length, "length", missing="none")),
                    ("How the table gives it", Value(policy.note)),
                    ("Merge speed the table assumes", Value(policy.merge_speed, "speed")),
                    ("Lane as the table measures it", Value(site.lane_length, "length")),
                    ("Table", Value(f"{policy.table.title}. {policy.table.source}")),
                    ("Length measured", Value(policy.table.length_definition)),
                    ("Interpolation", Value(policy.table.interpolation)),
                )
            )
        )
        if policy.table.caution:
            blocks.append(Paragraph(f"Caution on the policy table: {policy.table.caution}", "warning"))
    return Section("lengths", "Length required and available", tuple(blocks))


def _merging(a: SiteAssessment, system: UnitSystem) -> Section:
    site = a.site
    columns: tuple[tuple[str, Kind], ...] = (
        ("Vehicle", "text"),
        ("May merge from", "length"),
        ("Merged by the end of the lane", "probability"),
        ("By the end of the taper", "probability"),
        ("Forced merges (veh/h)", "per_hour"),
        ("Stops at the end of the taper (veh/h)", "per_hour"),
        ("Mean wait when stopped", "time"),
    )
    rows = []
    for v in a.vehicles:
        m = v.merge
        start = None if m.eligible_station is None else m.eligible_station - site.convergence
        by_lane_end = Value(m.by_lane_end, "probability")
        if v.monte_carlo is not None:
            by_lane_end = Value(f"{m.by_lane_end:.1%} (simulated {v.monte_carlo.by_lane_end:.1%})")
        rows.append(
            (
                Value(v.vehicle.id),
                Value(start, "length", missing="never"),
                by_lane_end,
                Value(m.by_taper_end, "probability"),
                Value(m.forced_merges_per_h, "per_hour"),
                Value(m.stops_per_h, "per_hour"),
                Value(m.mean_stopped_wait, "time"),
            )
        )
    return Section(
        "merging",
        f"Finding a gap ({show(site.adjacent_lane_flow, 'flow', system)} in the adjacent lane)",
        (
            Figure("merge", "Probability that a driver of each design vehicle has merged, against distance."),
            Table(columns, tuple(rows)),
            Paragraph(merge_behaviour(site), "quiet"),
            Paragraph(
                "'May merge from' is measured from the convergence point: where the vehicle first comes within the"
                " minimum merge speed of the stream. A forced merge is one made only because the lane ends: at the end"
                " of the full-width lane into a gap the driver would not accept, or nosing in along the taper; a"
                " vehicle never within the minimum merge speed merges only so. A stopped vehicle waits for a gap at"
                " its from-stop critical gap (Adams' formula for random arrivals, its renewal-theory equivalent for"
                " Cowan's M3)."
                + (
                    f" With the taper credit, 'the end of the lane' in this table is the end of the length available"
                    f" (the lane and {site.taper_credit:.0%} of the taper); the full-width lane ends"
                    f" {show(site.available_length - site.lane_length, 'length', system)} before it."
                    if site.available_length != site.lane_length
                    else ""
                ),
                "quiet",
            ),
        ),
    )


def merge_area_blocks(area: MergeArea) -> tuple[Items, Table]:
    """The capacity manual's merge-segment figures (HCM chapter 14), in our own order and words: the level of
    service and density first, then the flows that set them, then demand against each capacity."""
    rows: list[tuple[str, Value]] = [
        ("Level of service", Value(area.los, flag="exceeded" if area.los == "F" else "")),
        ("Density in the influence area", Value(f"{area.density_pc_mi_ln:.1f} pc/mi/ln ({area.density_pc_km_ln:.1f} pc/km/ln)")),
        ("Demand, mainline and ramp", Value(f"{area.mainline_pc_h:.0f} and {area.ramp_pc_h:.0f} pc/h")),
        ("Share of the mainline in lanes 1 and 2 (P_FM)", Value(f"{area.p_fm:.3f}")),
        ("Flow in lanes 1 and 2 (v12)", Value(f"{area.v12_pc_h:.0f} pc/h" + (f", raised: {area.lane_distribution}" if area.lane_distribution else ""))),
        ("Flow entering the influence area (vR12)", Value(f"{area.vr12_pc_h:.0f} pc/h")),
    ]  # fmt: skip
    if area.lane_five_pc_h:
        rows.append(("Lane 5, taken off first", Value(f"{area.lane_five_pc_h:.0f} pc/h")))
    checks = tuple(
        (Value(c.name), Value(c.demand_pc_h, "count"), Value(c.capacity_pc_h, "count"),
         Value("no, exceeded" if c.exceeded else "yes", flag="exceeded" if c.exceeded else ""))
        for c in area.checks
    )  # fmt: skip
    columns: tuple[tuple[str, Kind], ...] = (
        ("Where", "text"), ("Demand (pc/h)", "count"), ("Capacity (pc/h)", "count"), ("Within it", "text"))  # fmt: skip
    return Items(tuple(rows)), Table(columns, checks, caption="Demand against capacity")


def _merge_area(operations: MergeOperations, system: UnitSystem) -> Section:
    figures, capacity = merge_area_blocks(operations.area)
    more = (
        ("Acceleration length as the manual measures it (lane and taper)", Value(operations.acceleration_length, "length")),
        ("Capacity lost to slow trucks on the ramp", Value(f"{operations.capacity_lost_pc_h:.0f} pc/h")),
    )  # fmt: skip
    blocks: list[Block] = [Items(figures.rows + more), capacity]
    if operations.queue is not None:
        queue = operations.queue
        blocks.append(
            Paragraph(
                "Breakdown: demand exceeds the downstream capacity. The back of the queue moves upstream at"
                f" {show(-queue.shock_speed, 'speed', system)}, the queue gains {show(queue.growth, 'flow', system)}"
                " at the peak 15-minute rate, stretches"
                f" {show(operations.queue_length_after_hour or 0.0, 'distance', system)} after one hour, and clears"
                f" {clearing(operations)}.",
                "warning",
            )
        )
    return Section("merge_area", "Merge area (Highway Capacity Manual merge-segment method, chapter 14)", tuple(blocks))


def _exception(a: SiteAssessment, exception: DesignException, system: UnitSystem) -> Section:
    if exception.policy_deficit is None:
        short = Value("no policy value applies")
    elif exception.policy_deficit > 0:
        short = Value(exception.policy_deficit, "length")
    else:
        short = Value("not short of policy (the computed needs govern)")
    consequences = Table(
        (("Vehicle", "text"), ("Differential at the end of the lane", "speed"),
         ("Merged by the end of the lane", "probability"), ("Forced merges (veh/h)", "per_hour"),
         ("Stops (veh/h)", "per_hour")),
        tuple(
            (Value(v.vehicle.id), Value(v.speed_differential_at_taper_start, "speed"),
             Value(v.merge.by_lane_end, "probability"), Value(v.merge.forced_merges_per_h, "per_hour"),
             Value(v.merge.stops_per_h, "per_hour"))
            for v in a.vehicles
        ),
        caption="Operational consequences at the design hour",
    )  # fmt: skip
    options = []
    for m in exception.mitigations:
        if m.assessment is None:
            result, need = Value(None), Value(None)
        else:
            g = m.assessment.governing
            verdict = m.assessment.performance_verdict
            result = Value(verdict, flag=verdict)
            need = Value(
                f"{g.vehicle.id}: "
                + ("no length suffices" if g.length_needed is None else show(g.length_needed, "length", system))
            )
        options.append((Value(m.name), Value(mitigation_change(m, system)), result, need, Value(m.note)))
    mitigations = Table(
        (("Option", "text"), ("Change", "text"), ("Result", "text"), ("Governing need", "text"), ("Note", "text")),
        tuple(options),
        caption="Mitigation options, each computed by rerunning the assessment on the modified layout",
    )
    return Section(
        "exception",
        "Design exception",
        (
            Items(
                (
                    ("Site file", Value(a.site.source)),
                    ("SHA-256 of the site file", Value(exception.input_sha256, missing="not read from a file")),
                    ("Prepared on", Value(exception.prepared_on)),
                    ("Prepared by", Value(exception.prepared_by, missing="not given (check --prepared-by NAME)")),
                    ("Policy minimum acceleration length", Value(exception.policy_length, "length", missing="none")),
                    ("Length provided (as the table measures it)", Value(exception.provided_length, "length")),
                    ("Short of policy by", short),
                )
            ),
            consequences,
            mitigations,
            Paragraph(exception.sign_off, "strong"),
        ),
    )
