"""Markdown renderer: the check as a document a reviewer can read. Reads results only."""

from __future__ import annotations

import html
import re

from ..batch import BatchResult, BatchSummary
from ..cautions import CAUTIONS
from ..units import UnitSystem, unit_symbol
from .document import Items, Paragraph, SiteDocument, Table, Value, unit_of
from .table_rows import BATCH_NOTE, batch_row

_PUNCTUATION = re.compile(r"([\\`*\[\]|#!]|(?<![A-Za-z0-9])_|_(?![A-Za-z0-9]))")
"""Markdown punctuation that can start emphasis, code, a link, an image, a heading or a table cell (an
underscore inside a word, as in P_FM, cannot: CommonMark 0.31, section 6.2)."""


def _cell(text: object) -> str:
    """User or free text, safe anywhere in a line of Markdown, a table cell included: HTML is written as
    entities (never passed through as markup), Markdown punctuation is escaped with a backslash (CommonMark
    0.31, section 2.4) and line breaks become spaces."""
    escaped = html.escape(str(text), quote=False).replace("\n", " ")
    return _PUNCTUATION.sub(r"\\\1", escaped)


def site_markdown(document: SiteDocument) -> str:
    """The site report (:mod:`mergecheck.report.document`) as Markdown; figures are in the HTML version."""
    system = document.system
    lines = [
        f"# {_cell(document.title)}",
        "",
        f"**Verdict: {document.verdict.upper()}** — governing vehicle: `{document.governing}`",
        "",
        *[f"- {_cell(line)}" for line in document.headline],
        "",
        _cell(document.summary),
        "",
        f"Site file: {_cell(document.source)}. Made {document.prepared_on}; the figures are in the HTML report"
        " (`--html`).",
        "",
    ]
    if document.notes:
        lines += [f"> {_cell(document.notes)}", ""]
    for section in document.sections:
        lines += [f"## {_cell(section.title)}", ""]
        for block in section.blocks:
            if isinstance(block, Items):
                lines += ["| Item | Value |", "|---|---|"]
                lines += [
                    f"| {_cell(label)} | {_cell(value.text(system))}{_mark(value)} |" for label, value in block.rows
                ]
                lines.append("")
            elif isinstance(block, Table):
                if block.caption:
                    lines += [f"{_cell(block.caption)}:", ""]
                headings = []
                for heading, kind in block.columns:
                    unit = unit_of(kind, system)
                    headings.append(_cell(f"{heading} ({unit})" if unit else heading))
                lines.append("| " + " | ".join(headings) + " |")
                lines.append("|" + "|".join("---" if kind == "text" else "--:" for _, kind in block.columns) + "|")
                for row in block.rows:
                    lines.append("| " + " | ".join(_cell(v.text(system, unit=False)) + _mark(v) for v in row) + " |")
                lines.append("")
            elif isinstance(block, Paragraph):
                text = _cell(block.text)
                lines += [f"**{text}**" if block.tone in ("strong", "warning") else text, ""]
    lines += ["## Cautions", ""]
    lines += [f"- {c}" for c in document.cautions]
    return "\n".join(lines) + "\n"


def _mark(value: Value) -> str:
    """A flag written as words: a large differential, an exceeded capacity."""
    return {"large": " ⚑ large", "exceeded": " ⚑"}.get(value.flag, "")


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
        *([f"Left out, not site files: {_cell('; '.join(summary.skipped))}", ""] if summary.skipped else []),
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
            f"| {rank} | {_cell(row['site'])} | **{row['verdict']}** ({row['verdict_basis']}) "
            f"| `{row['governing_vehicle']}` ({row['governing_verdict']}) "
            f"| {row['length_needed']} | {row['available']} | {row['deficit'] or '-'} | {row['policy_minimum'] or '-'} "
            f"| {row['speed_differential_at_taper_start']} | {float(row['merged_by_lane_end']):.1%} | {row['los'] or '-'} |"
        )
    lines += ["", BATCH_NOTE, "", "## Cautions", ""]
    lines += [f"- {c}" for c in CAUTIONS]
    return "\n".join(lines) + "\n"
