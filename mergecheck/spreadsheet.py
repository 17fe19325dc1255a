"""Corridor inventories in spreadsheets: the rows of an .xlsx workbook read as the batch CSV's rows.

The sheet named ``sites`` is read if there is one, else the first; its first non-empty row holds the column
names (the batch CSV's, units in their suffixes: ``lane_length_m``), and each later row with any value is one
site. Cells are read as their values (formulas as last computed by the spreadsheet program). Workbooks are
read with openpyxl, which parses their XML through defusedxml (no entity expansion); a file over
:data:`LARGEST` bytes or rows over :data:`MOST_ROWS` is refused before it is read through.
"""

from __future__ import annotations

import datetime
import zipfile
from pathlib import Path
from typing import Any

from .errors import InputError
from .inputs import file_kind

LARGEST = 50_000_000
"""Largest workbook read. [bytes]"""
MOST_ROWS = 100_000
"""Most rows read from a sheet."""
UNPACKED_LARGEST = 500_000_000
"""Largest a workbook may unpack to (its parts as the zip directory states them, which reading holds to). [bytes]
A few kilobytes of zip can unpack to gigabytes of sheet XML."""


def sheet_rows(path: str) -> list[tuple[str, dict[str, str]]]:
    """(label, row) for each site row of the workbook: the label names the file, the sheet and the row."""
    source = Path(path)
    if file_kind(source, path, "") not in ("file", None):
        raise InputError(path, "", "cannot read the workbook: not a regular file")
    try:
        size = source.stat().st_size
    except OSError as error:
        raise InputError(path, "", f"cannot read the workbook: {error.strerror}") from None
    if size > LARGEST:
        raise InputError(path, "", f"the workbook is larger than {LARGEST:,} bytes")
    try:
        with zipfile.ZipFile(path) as archive:
            unpacked = sum(part.file_size for part in archive.infolist())
    except (zipfile.BadZipFile, OSError) as error:
        raise _not_a_workbook(path, error) from None
    if unpacked > UNPACKED_LARGEST:
        raise InputError(path, "", f"the workbook unpacks to more than {UNPACKED_LARGEST:,} bytes")
    import openpyxl  # only when a workbook is read

    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, ValueError, OSError) as error:
        raise _not_a_workbook(path, error) from None
    except Exception as error:  # the XML inside refused by defusedxml, or malformed
        raise InputError(path, "", f"the workbook cannot be read safely ({type(error).__name__})") from None
    try:
        return _rows(book, path)
    except InputError:
        raise
    except Exception as error:  # a damaged sheet inside a readable zip: openpyxl raises what its parser meets
        raise InputError(path, "", f"the workbook is damaged ({type(error).__name__})") from None
    finally:
        book.close()


def _not_a_workbook(path: str, error: Exception) -> InputError:
    return InputError(path, "", f"not an .xlsx workbook ({type(error).__name__}: {str(error)[:100]})")


def _rows(book: Any, path: str) -> list[tuple[str, dict[str, str]]]:
    """(label, row) for each site row of the chosen sheet."""
    sheet = book["sites"] if "sites" in book.sheetnames else book.worksheets[0]
    rows: list[tuple[str, dict[str, str]]] = []
    header: list[str] | None = None
    for number, values in enumerate(sheet.iter_rows(values_only=True), start=1):
        if number > MOST_ROWS:
            raise InputError(path, f"sheet {sheet.title!r}", f"more than {MOST_ROWS:,} rows")
        cells = [_text(v) for v in values]
        if not any(cells):
            continue
        if header is None:
            header = cells
            continue
        label = f"{path}: sheet {sheet.title!r}, row {number}"
        rows.append((label, dict(zip(header, cells + [""] * (len(header) - len(cells)), strict=False))))
    if header is None:
        raise InputError(path, "sheet", "the sheet holds no header and no rows")
    if not rows:
        raise InputError(path, f"sheet {sheet.title!r}", "the sheet holds column names but no sites")
    return rows


def _text(value: Any) -> str:
    """A cell as the text a CSV would hold (whole numbers without a decimal point)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value).lower()
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, (datetime.date, datetime.datetime)):
        return value.isoformat()
    return str(value).strip()


def workbook(header: list[str], rows: list[list[str]], cautions: tuple[str, ...]) -> bytes:
    """A workbook of one ``sites`` sheet (numbers stored as numbers) and a ``cautions`` sheet."""
    import io

    import openpyxl

    book = openpyxl.Workbook(write_only=True)
    sites = book.create_sheet("sites")
    sites.append(header)
    for row in rows:
        sites.append([_number_or_text(cell) for cell in row])
    notes = book.create_sheet("cautions")
    for caution in cautions:
        notes.append([caution])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def _number_or_text(cell: str) -> float | str:
    try:
        return float(cell)
    except ValueError:
        return cell
