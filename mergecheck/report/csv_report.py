"""CSV renderer for batch results: one row per site, ranked worst first."""

from __future__ import annotations

import csv
import io

from ..batch import BatchResult
from ..cautions import CAUTIONS
from ..units import UnitSystem, unit_symbol
from .table_rows import COLUMNS, batch_row


def batch_table(results: list[BatchResult], system: UnitSystem) -> tuple[list[str], list[list[str]]]:
    """The header (units in the column names) and one row per site, ranked worst first."""
    length, speed = unit_symbol("length", system), unit_symbol("speed", system)
    units = {
        "length_needed": length,
        "available": length,
        "deficit": length,
        "policy_minimum": length,
        "speed_differential_at_taper_start": speed,
    }
    header = [f"{c}_{units[c].replace('/', '_')}" if c in units else c for c in COLUMNS]
    rows = []
    for rank, result in enumerate(results, start=1):
        row = batch_row(rank, result, system)
        rows.append([row[c] for c in COLUMNS])
    return header, rows


def batch_csv(results: list[BatchResult], system: UnitSystem) -> str:
    """The batch as CSV: the cautions as comment lines (``#``, as mergecheck's own CSV inputs take them), then a
    header and one row per site."""
    header, rows = batch_table(results, system)
    buffer = io.StringIO()
    buffer.writelines(f"# Caution: {caution}\n" for caution in CAUTIONS)
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    return buffer.getvalue()


def batch_xlsx(results: list[BatchResult], system: UnitSystem) -> bytes:
    """The batch as an .xlsx workbook: the CSV's columns (numbers as numbers) and the cautions."""
    from ..spreadsheet import workbook

    header, rows = batch_table(results, system)
    return workbook(header, rows, CAUTIONS)
