"""CSV renderer for batch results: one row per site, ranked worst first."""

from __future__ import annotations

import csv
import io

from ..batch import BatchResult
from ..units import UnitSystem, unit_symbol
from .table_rows import COLUMNS, batch_row


def batch_csv(results: list[BatchResult], system: UnitSystem) -> str:
    length, speed = unit_symbol("length", system), unit_symbol("speed", system)
    units = {
        "length_needed": length,
        "available": length,
        "deficit": length,
        "policy_minimum": length,
        "speed_differential_at_lane_end": speed,
    }
    header = [f"{c}_{units[c].replace('/', '_')}" if c in units else c for c in COLUMNS]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for rank, result in enumerate(results, start=1):
        row = batch_row(rank, result, system)
        writer.writerow([row[c] for c in COLUMNS])
    return buffer.getvalue()
