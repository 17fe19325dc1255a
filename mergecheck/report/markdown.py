"""Markdown renderer: the check as a document a reviewer can read. Reads results only."""

from __future__ import annotations

import html
import re

from ..assessment import SiteAssessment
from ..batch import BatchResult, BatchSummary
from ..cautions import CAUTIONS
from ..exception import DesignException
from ..narrative import assumptions, summary_sentence
from ..units import UnitSystem, number, show, unit_symbol
from .table_rows import batch_row
from .wording import clearing, merge_behaviour, mitigation_change, slowing_notes, verdict_bases

_PUNCTUATION = re.compile(r"([\\`*\[\]|#!]|(?<![A-Za-z0-9])_|_(?![A-Za-z0-9]))")
"""Markdown punctuation that can start emphasis, code, a link, an image, a heading or a table cell (an
underscore inside a word, as in P_FM, cannot: CommonMark 0.31, section 6.2)."""


def _cell(text: object) -> str:
    """User or free text, safe anywhere in a line of Markdown, a table cell included: HTML is written as
    entities (never passed through as markup), Markdown punctuation is escaped with a backslash (CommonMark
    0.31, section 2.4) and line breaks become spaces."""
    escaped = html.escape(str(text), quote=False).replace("\n", " ")
    return _PUNCTUATION.sub(r"\\\1", escaped)


def site_markdown(assessment: SiteAssessment, system: UnitSystem, exception: DesignException | None = None) -> str:
    site = assessment.site
    v_unit, l_unit = unit_symbol("speed", system), unit_symbol("length", system)
    lines = [
        f"# Acceleration-lane check: {_cell(site.name)}",
        "",
        f"**Verdict: {assessment.verdict.upper()}** — governing vehicle: `{assessment.governing.vehicle.id}`",
        "",
        *[f"- {line}" for line in verdict_bases(assessment, system)],
        *[f"- {line}" for line in slowing_notes(assessment, system)],
        "",
        summary_sentence(assessment, system),
        "",
    ]
    if site.notes:
        lines += [f"> {_cell(site.notes)}", ""]
    ramp_start = (
        "stop (stop line or ramp meter)"
        if site.controlling_speed is None
        else show(site.controlling_speed, "speed", system)
    )
    lines += [
        "## Layout",
        "",
        "| Item | Value |",
        "|---|---|",
        f"| Site file | {_cell(site.source)} |",
        f"| Mainline design speed / operating speed | {show(site.design_speed, 'speed', system)} / {show(site.operating_speed, 'speed', system)} |",
        f"| Through lanes per direction | {site.lanes} |",
        f"| Adjacent-lane flow | {site.adjacent_lane_flow * 3600:.0f} veh/h |",
        f"| Ramp controlling speed | {ramp_start} |",
        f"| Speed leaving the controlling curve | {show(assessment.initial_speed, 'speed', system)} |",
        f"| Ramp flow | {site.ramp_flow * 3600:.0f} veh/h |",
        f"| Entrance type | {site.entrance} |",
        f"| Convergence point (from the end of the controlling curve) | {show(site.convergence, 'length', system)} |",
        f"| Acceleration lane (convergence point to start of taper) | {show(site.lane_length, 'length', system)} |",
        f"| Taper | {show(site.taper_length, 'length', system)} |",
        f"| Average grade over the lane | {assessment.average_grade:+.2%} |",
        f"| Elevation at station 0 | {show(site.elevation, 'length', system)} |",
        "",
        "## Speeds along the ramp",
        "",
        f"| Vehicle | Merge speed ({v_unit}) | At convergence point | At end of lane | At end of taper | Differential at end of lane | Crawl speed |",
        "|---|--:|--:|--:|--:|--:|--:|",
    ]
    for v in assessment.vehicles:
        flag = " ⚑ large" if v.large_differential else ""
        lines.append(
            f"| `{v.vehicle.id}` | {number(v.merge_speed, 'speed', system)} | {number(v.speed_at_convergence, 'speed', system)} | "
            f"{number(v.speed_at_taper_start, 'speed', system)} | {number(v.speed_at_taper_end, 'speed', system)} | "
            f"{number(v.speed_differential_at_lane_end, 'speed', system)}{flag} | {number(v.crawl_speed, 'speed', system)} |"
        )
    lines += [
        "",
        f"Speeds in {v_unit}. The differential is the mainline operating speed minus the vehicle's speed where the "
        f"full-width lane ends; values above {show(site.flag_speed_differential, 'speed', system)} are flagged.",
        "",
        "## Acceleration length",
        "",
        "Lengths are measured as the policy tables measure them, from the convergence point: to where the vehicle "
        f"reaches its merge speed, and to where {site.gaps.reliability:.0%} of drivers have found an acceptable gap.",
        "",
        f"| Vehicle | Share of ramp flow | To merge speed ({l_unit}) | For {site.gaps.reliability:.0%} gaps ({l_unit}) "
        f"| Available ({l_unit}) | Deficit ({l_unit}) | Verdict |",
        "|---|--:|--:|--:|--:|--:|---|",
    ]
    for v in assessment.vehicles:
        required = "never reached" if v.required_length is None else number(v.required_length, "length", system)
        lines.append(
            f"| `{v.vehicle.id}` | {v.share:.0%} | {required} | {number(v.merge.length_for_reliability, 'length', system)} | "
            f"{number(v.available_length, 'length', system)} | {number(v.deficit, 'length', system)} | **{v.verdict}** |"
        )
    lines += [
        "",
        f"## Merging into the adjacent lane ({site.adjacent_lane_flow * 3600:.0f} veh/h)",
        "",
        "| Vehicle | May merge from | Merged by end of lane | By end of taper | Forced merges in taper (veh/h) "
        "| Stops at end of taper (veh/h) | Mean wait when stopped (s) |",
        "|---|--:|--:|--:|--:|--:|--:|",
    ]
    for v in assessment.vehicles:
        m = v.merge
        start = "never" if m.eligible_station is None else show(m.eligible_station - site.convergence, "length", system)
        simulated = "" if v.monte_carlo is None else f" (simulated {v.monte_carlo.by_lane_end:.1%})"
        lines.append(
            f"| `{v.vehicle.id}` | {start} | {m.by_lane_end:.1%}{simulated} | {m.by_taper_end:.1%} | "
            f"{m.forced_merges_per_h:.1f} | {m.stops_per_h:.1f} | {m.mean_stopped_wait:.0f} |"
        )
    lines += [
        "",
        merge_behaviour(site),
        "",
        "'May merge from' is measured from the convergence point: where the vehicle first comes within the minimum "
        "merge speed of the stream. A stopped vehicle waits for a gap at its from-stop critical gap (Adams' formula "
        "for random arrivals, its renewal-theory equivalent for Cowan's M3).",
    ]
    policy = assessment.policy
    lines += ["", "## Policy minimum", ""]
    if policy is None:
        lines.append("No policy table was applied (the site file says `policy: none`).")
    else:
        value = "none" if policy.minimum_length is None else show(policy.minimum_length, "length", system)
        lines += [
            f"- Policy minimum acceleration length: **{value}** ({_cell(policy.note)})",
            f"- Merge speed the table assumes for this highway: {show(policy.merge_speed, 'speed', system)}"
            " (the computed requirement uses the site's merge speeds above)",
            f"- Table: {_cell(policy.table.title)} — {_cell(policy.table.source)}",
            f"- Length measured: {_cell(policy.table.length_definition)}",
            f"- Interpolation: {_cell(policy.table.interpolation)}",
        ]
        if policy.table.caution:
            lines.append(f"- **Caution:** {_cell(policy.table.caution)}")
    operations = assessment.merge_area
    if operations is not None:
        area = operations.area
        lines += [
            "",
            "## Merge area (Highway Capacity Manual, chapter 14)",
            "",
            f"Acceleration length as the manual measures it (lane plus taper): {show(operations.acceleration_length, 'length', system)}.",
            "",
            "| Figure | Value |",
            "|---|---|",
            f"| Mainline demand | {area.mainline_pc_h:.0f} pc/h |",
            f"| Ramp demand | {area.ramp_pc_h:.0f} pc/h |",
            f"| P_FM | {area.p_fm:.3f} |",
            f"| v12 | {area.v12_pc_h:.0f} pc/h{f' (raised by the check: {area.lane_distribution})' if area.lane_distribution else ''} |",
            *([f"| Lane 5 (taken off first) | {area.lane_five_pc_h:.0f} pc/h |"] if area.lane_five_pc_h else []),
            f"| Flow entering the influence area | {area.vr12_pc_h:.0f} pc/h |",
            f"| Influence-area density | {area.density_pc_mi_ln:.1f} pc/mi/ln ({area.density_pc_km_ln:.1f} pc/km/ln) |",
            f"| Level of service | **{area.los}** |",
            f"| Capacity lost to slow trucks on the ramp | {operations.capacity_lost_pc_h:.0f} pc/h |",
        ]
        lines += [
            f"| Check: {c.name} | {c.demand_pc_h:.0f} of {c.capacity_pc_h:.0f} pc/h{' — **exceeded**' if c.exceeded else ''} |"
            for c in area.checks
        ]
        if operations.queue is not None:
            queue = operations.queue
            clears = clearing(operations)
            lines += [
                "",
                f"**Breakdown.** Demand exceeds the downstream capacity. The back of the queue moves upstream at "
                f"{show(-queue.shock_speed, 'speed', system)}, the queue gains {queue.growth * 3600:.0f} veh/h at the peak 15-minute rate, "
                f"stretches {show(operations.queue_length_after_hour or 0.0, 'length', system)} after one hour, and clears {clears}.",
            ]
    if exception is not None:
        lines += _exception_lines(assessment, exception, system)
    lines += ["", "## Assumptions", "", "| Item | Value | Source |", "|---|---|---|"]
    lines += [f"| {_cell(a.name)} | {_cell(a.value)} | {_cell(a.source)} |" for a in assumptions(assessment)]
    lines += ["", "## Cautions", ""]
    lines += [f"- {c}" for c in CAUTIONS]
    return "\n".join(lines) + "\n"


def _exception_lines(assessment: SiteAssessment, exception: DesignException, system: UnitSystem) -> list[str]:
    if exception.policy_deficit is None:
        short_of_policy = "no policy value applies"
    elif exception.policy_deficit > 0:
        short_of_policy = show(exception.policy_deficit, "length", system)
    else:
        short_of_policy = "not short of policy (the computed needs govern)"
    lines = [
        "",
        "## Design exception",
        "",
        "The figures of this report are in the HTML version (`--html`); they are omitted here.",
        "",
        "| Item | Value |",
        "|---|---|",
        f"| Policy minimum acceleration length | {show(exception.policy_length, 'length', system)} |",
        f"| Length provided | {show(exception.provided_length, 'length', system)} |",
        f"| Short of policy by | {short_of_policy} |",
        "",
        "Operational consequences at the design hour:",
        "",
        "| Vehicle | Speed differential at end of lane | Merged by end of lane | Forced merges in taper (veh/h) | Stops (veh/h) |",
        "|---|--:|--:|--:|--:|",
    ]
    for v in assessment.vehicles:
        lines.append(
            f"| `{v.vehicle.id}` | {show(v.speed_differential_at_lane_end, 'speed', system)} | {v.merge.by_lane_end:.1%} "
            f"| {v.merge.forced_merges_per_h:.1f} | {v.merge.stops_per_h:.1f} |"
        )
    lines += [
        "",
        "Mitigation options, each computed by rerunning the assessment on the modified layout:",
        "",
        "| Option | Change | Result | Governing need | Note |",
        "|---|---|---|---|---|",
    ]
    for m in exception.mitigations:
        if m.assessment is None:
            result, need = "-", "-"
        else:
            g = m.assessment.governing
            result = f"**{m.assessment.performance_verdict}**"
            need = f"`{g.vehicle.id}`: " + (
                "no length suffices" if g.length_needed is None else show(g.length_needed, "length", system)
            )
        lines.append(f"| {m.name} | {mitigation_change(m, system)} | {result} | {need} | {_cell(m.note)} |")
    lines += ["", f"> {exception.sign_off}"]
    return lines


def batch_markdown(results: list[BatchResult], summary: BatchSummary, system: UnitSystem) -> str:
    """A corridor report: the summary, then every site ranked worst first."""
    l_unit, v_unit = unit_symbol("length", system), unit_symbol("speed", system)
    lines = [
        "# Corridor screening: acceleration lanes",
        "",
        f"{summary.total} sites: {summary.meets} meet, {summary.short} short "
        f"({summary.cannot_reach} where the governing vehicle never reaches merge speed), {summary.unreadable} unreadable.",
        "",
        "Short sites by governing vehicle: "
        + ("; ".join(f"`{v}` {n}" for v, n in summary.short_by_vehicle.items()) or "none"),
        "",
        f"| # | Site | Verdict | Governing vehicle | Needed ({l_unit}) | Available ({l_unit}) | Deficit ({l_unit}) "
        f"| Policy minimum ({l_unit}) | Differential at end of lane ({v_unit}) | Merged by end of lane | LOS |",
        "|--:|---|---|---|--:|--:|--:|--:|--:|--:|---|",
    ]
    for rank, result in enumerate(results, start=1):
        row = batch_row(rank, result, system)
        if result.assessment is None:
            lines.append(f"| {rank} | {_cell(result.label)} | **unreadable**: {_cell(row['error'])} | | | | | | | | |")
            continue
        lines.append(
            f"| {rank} | {_cell(row['site'])} | **{row['verdict']}** | `{row['governing_vehicle']}` ({row['governing_verdict']}) "
            f"| {row['length_needed']} | {row['available']} | {row['deficit'] or '-'} | {row['policy_minimum'] or '-'} "
            f"| {row['speed_differential_at_lane_end']} | {float(row['merged_by_lane_end']):.1%} | {row['los'] or '-'} |"
        )
    lines += ["", "## Cautions", ""]
    lines += [f"- {c}" for c in CAUTIONS]
    return "\n".join(lines) + "\n"
