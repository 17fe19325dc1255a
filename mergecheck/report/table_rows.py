"""One row per site for the batch table, shared by the terminal, CSV and Markdown renderers."""

from __future__ import annotations

from ..batch import BatchResult
from ..units import UnitSystem, convert

COLUMNS = (
    "rank",
    "site",
    "input",
    "verdict",
    "verdict_basis",
    "governing_vehicle",
    "governing_verdict",
    "length_needed",
    "available",
    "deficit",
    "policy_minimum",
    "speed_differential_at_taper_start",
    "merged_by_lane_end",
    "los",
    "error",
)


BATCH_NOTE = (
    "The lengths needed and short are the governing vehicle's own (the performance basis); each site's verdict is on"
    " its verdict basis, named beside it, and a site on the policy basis meets when the lane is at least the policy"
    " minimum."
)
"""Read under every batch table: why a site may meet while its governing vehicle falls short."""


def batch_row(rank: int, result: BatchResult, system: UnitSystem) -> dict[str, str]:
    """Display values (strings) of one ranked site, in the report's units."""

    def length(value: float | None) -> str:
        return "" if value is None else f"{convert(value, 'length', system):.0f}"

    a = result.assessment
    if a is None:
        return {c: "" for c in COLUMNS} | {
            "rank": str(rank),
            "input": result.label,
            "verdict": "unreadable",
            "error": result.error or "",
        }
    g = a.governing
    policy = None if a.policy is None else a.policy.minimum_length
    return {
        "rank": str(rank),
        "site": a.site.name,
        "input": result.label,
        "verdict": a.verdict,
        "verdict_basis": a.basis,
        "governing_vehicle": g.vehicle.id,
        "governing_verdict": g.verdict,
        "length_needed": length(g.length_needed) if g.length_needed is not None else "never",
        "available": length(a.site.available_length),
        "deficit": length(g.deficit),
        "policy_minimum": length(policy),
        "speed_differential_at_taper_start": f"{convert(g.speed_differential_at_taper_start, 'speed', system):.1f}",
        "merged_by_lane_end": f"{g.merge.by_lane_end:.3f}",
        "los": "" if a.merge_area is None else a.merge_area.area.los,
        "error": "",
    }
