"""The terminal view's layout: whole figures and headings on a narrow terminal, wrapped prose when piped."""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

from rich.console import Console

from mergecheck import api
from mergecheck.report.document import site_document
from mergecheck.report.terminal import PROSE_WIDTH, site_view

EX = Path(__file__).parent.parent / "examples"


def test_piped_details_wrap_the_assumptions_table(cli: Any) -> None:
    """Piped or redirected, tables keep their natural width, but the prose columns of the assumptions wrap
    (they once ran to thousands of characters a line); every word is still there."""
    full = cli("check", EX / "quarry-hill-upgrade.yaml", "--details")
    start = full.stdout.index("\nAssumptions\n")
    table = full.stdout[start:].split("\n\n")[0].splitlines()[1:]
    assert len(table) > 20 and max(len(line) for line in table) <= 60 + 2 * (PROSE_WIDTH + 3) + 1
    assert "Transportation Research C 36" in " ".join(full.stdout.split())


def test_an_80_column_terminal_cuts_no_figure_and_no_heading() -> None:
    """On a terminal 80 characters wide (the usual least), the figures stay whole and a long heading word is
    broken over two lines rather than cut off with an ellipsis."""
    assessment = api.assess(api.load_site(EX / "quarry-hill-upgrade.yaml"))
    console = Console(width=80, record=True, file=io.StringIO(), color_system=None)
    console.print(site_view(site_document(assessment, "si", None)))
    text = console.export_text()
    assert "…" not in text and max(len(line) for line in text.splitlines()) <= 80
    for figure in ("97.0", "54.6", "76.8", "80.3", "28.2 ⚑", "47.1", "177.9"):
        assert figure in text


def test_the_batch_table_names_each_verdict_basis_and_the_governing_vehicles_own_verdict(cli: Any) -> None:
    """Kestrel Way (examples/corridor) meets on the policy basis while its governing semitrailer never reaches
    merge speed: the row says both, not one in the other's words (it once read 'short, never')."""
    run = cli("batch", EX / "corridor")
    lines = run.stdout.splitlines()
    row = next(i for i, line in enumerate(lines) if "Kestrel Way" in line)
    assert "meets (policy)" in lines[row] and "short" not in lines[row]
    assert "semitrailer-design (cannot-reach)" in " ".join(lines[row : row + 3])


def test_an_80_column_batch_table_cuts_nothing() -> None:
    from mergecheck.batch import assess_all, ranked, read_batch, summarize
    from mergecheck.report.terminal import batch_view

    results = ranked(assess_all(read_batch(str(EX / "corridor")).entries, workers=1))
    console = Console(width=80, record=True, file=io.StringIO(), color_system=None)
    console.print(batch_view(results, summarize(results), "si"))
    text = console.export_text()
    assert "…" not in text and max(len(line) for line in text.splitlines()) <= 80
    assert "(policy)" in text and "Kestrel Way" in text and "1077" in text  # a verdict may wrap before its basis


def test_with_a_taper_credit_the_report_says_which_end_of_the_lane_it_means(cli: Any) -> None:
    """Harbour Street counts 50 % of its 75 m taper: the gap figures are read at the end of the length available,
    the speeds where the full-width lane ends, and the report says so; a site with no credit needs no such note."""
    credited = cli("check", EX / "harbour-street-constrained.yaml").stdout
    assert "the full-width lane ends 38 m before it" in " ".join(credited.split())
    assert "With the taper credit" not in cli("check", EX / "willowmere-level.yaml").stdout
