"""Corridor inventories in .xlsx workbooks: the same sites and results as the CSV, clear errors for bad files."""

from __future__ import annotations

import csv
import json
from pathlib import Path
from typing import Any

import openpyxl
import pytest


def _workbook_from_csv(source: Path, target: Path, drop: str | None = None) -> None:
    """The corridor CSV typed into a workbook as a spreadsheet user would (numbers as numbers)."""
    lines = [line for line in source.read_text().splitlines() if line and not line.startswith("#")]
    rows = list(csv.reader(lines))
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "sites"
    keep = [i for i, name in enumerate(rows[0]) if name != drop]
    for row in rows:
        cells: list[Any] = []
        for i in keep:
            try:
                cells.append(float(row[i]))
            except ValueError:
                cells.append(row[i])
        sheet.append(cells)
    book.save(target)


def test_a_workbook_gives_the_csv_results_and_writes_them_back(cli: Any, repo: Path, tmp_path: Path) -> None:
    workbook = tmp_path / "corridor.xlsx"
    _workbook_from_csv(repo / "examples" / "corridor.csv", workbook)
    from_csv = cli("batch", repo / "examples" / "corridor.csv", "--json", tmp_path / "a.json", "--workers", "1")
    from_xlsx = cli("batch", workbook, "--json", tmp_path / "b.json", "--xlsx", tmp_path / "out.xlsx", "--workers", "1")
    assert from_xlsx.code == from_csv.code
    a, b = (json.loads((tmp_path / n).read_text()) for n in ("a.json", "b.json"))
    assert [s["check"]["site"] for s in a["sites"]] == [s["check"]["site"] for s in b["sites"]]
    assert [s["check"]["vehicles"] for s in a["sites"]] == [s["check"]["vehicles"] for s in b["sites"]]
    written = openpyxl.load_workbook(tmp_path / "out.xlsx", read_only=True)
    rows = list(written["sites"].iter_rows(values_only=True))
    assert "length_needed_m" in rows[0] and "speed_differential_at_taper_start_km_h" in rows[0]
    assert len(rows) == 1 + a["summary"]["sites"]
    available = rows[0].index("available_m")
    assert all(isinstance(r[available], (int, float)) for r in rows[1:])  # numbers stay numbers
    assert "licensed engineer" in str(next(written["cautions"].iter_rows(values_only=True))[0])


def test_a_missing_column_names_the_file_the_sheet_and_the_row(cli: Any, repo: Path, tmp_path: Path) -> None:
    workbook = tmp_path / "inventory.xlsx"
    _workbook_from_csv(repo / "examples" / "corridor.csv", workbook, drop="lane_length_m")
    run = cli("batch", workbook, "--workers", "1")
    assert run.code == 2
    assert "inventory.xlsx: sheet 'sites', row 2: lane_length: column missing or empty" in " ".join(run.stdout.split())


@pytest.mark.parametrize("content", [b"", b"not a zip at all", b"PK\x03\x04broken"])
def test_a_file_that_is_not_a_workbook_ends_with_exit_2(cli: Any, tmp_path: Path, content: bytes) -> None:
    workbook = tmp_path / "sites.xlsx"
    workbook.write_bytes(content)
    run = cli("batch", workbook)
    assert run.code == 2 and "sites.xlsx" in run.stderr and "Traceback" not in run.stderr


def test_a_workbook_that_unpacks_too_large_is_refused_before_it_is_read(
    cli: Any, repo: Path, tmp_path: Path, monkeypatch: Any
) -> None:
    """A few kilobytes of zip can unpack to gigabytes of sheet XML: the sizes the zip's directory states (which
    reading holds to) are summed first. Shown on a real workbook against a limit lowered for the test."""
    from mergecheck import spreadsheet

    book = tmp_path / "corridor.xlsx"
    _workbook_from_csv(repo / "examples" / "corridor.csv", book)
    monkeypatch.setattr(spreadsheet, "UNPACKED_LARGEST", 1_000)
    run = cli("batch", book)
    assert run.code == 2 and "the workbook unpacks to more than 1,000 bytes" in run.stderr
