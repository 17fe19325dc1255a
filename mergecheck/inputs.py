"""Reading common input pieces from YAML: vertical profiles and files.

Shared by the ``accel`` command's profile file and the site file.
"""

from __future__ import annotations

import csv
import difflib
import os
import re
import stat
from pathlib import Path
from typing import Any, Literal, TypeVar

import yaml
from pydantic import BaseModel, ConfigDict, Field, ValidationError

from .errors import InputError
from .profile import GradeChange, VerticalProfile
from .units import parse_quantity

Model = TypeVar("Model", bound=BaseModel)

MAX_GRADE = 0.10
"""Steepest grade accepted. [fraction] Ramp grades above 8 % are outside the
ranges of the AASHTO Green Book (7th ed. 2018, Section 10.9.6) and of other
standards we know of (from memory); 10 % leaves room for a local exception."""


class GradePoint(BaseModel):
    """One entry of a profile: the grade from a station on (YAML keys ``from``, ``grade``)."""

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)
    start: str = Field(alias="from", description="Station where this grade begins (the PVI), e.g. '250 m'.")
    grade: str = Field(description="Grade from this station on, e.g. '3 %' (negative for a downgrade).")
    vertical_curve: str | None = Field(
        default=None, description="Length of a symmetric vertical curve centred on the PVI, e.g. '120 m'."
    )


class ProfileFile(BaseModel):
    """The ``accel --profile`` file: a list of grade points and an optional elevation."""

    model_config = ConfigDict(extra="forbid", frozen=True)
    elevation: str | None = Field(default=None, description="Elevation above sea level at station 0, e.g. '850 m'.")
    profile: list[GradePoint] = Field(min_length=1)


def check_grade(grade: float, text: str, source: str, field: str) -> None:
    """Refuse a grade steeper than any standard allows (MAX_GRADE)."""
    if abs(grade) > MAX_GRADE:
        raise InputError(source, field, f"{text} is steeper than the {MAX_GRADE:.0%} any standard allows")


def build_profile(points: list[GradePoint], source: str, field: str) -> VerticalProfile:
    """Turn grade points into a :class:`VerticalProfile`, checking the rules.

    Rules: the first point is at station 0; stations increase; vertical
    curves have positive length and do not overlap each other or station 0;
    grades lie within +/- 10 %.
    """
    stations: list[float] = []
    grades: list[float] = []
    curves: list[float] = []
    for i, point in enumerate(points):
        where = f"{field}.{i}"
        station = parse_quantity(point.start, "length", source=source, field=f"{where}.from")
        grade = parse_quantity(point.grade, "grade", source=source, field=f"{where}.grade")
        check_grade(grade, point.grade, source, f"{where}.grade")
        curve = 0.0
        if point.vertical_curve is not None:
            curve = parse_quantity(point.vertical_curve, "length", source=source, field=f"{where}.vertical_curve")
            if curve <= 0:
                raise InputError(source, f"{where}.vertical_curve", "a vertical curve must have a positive length")
            if i == 0:
                raise InputError(
                    source, f"{where}.vertical_curve", "the first grade has no incoming grade to curve from"
                )
        if i == 0 and station != 0:
            raise InputError(source, f"{where}.from", "the first grade must start at station 0")
        if i > 0 and station <= stations[-1]:
            raise InputError(source, f"{where}.from", "stations must increase from one grade to the next")
        if i > 0:
            previous_end = stations[-1] + curves[-1] / 2
            if station - curve / 2 < max(previous_end, 0.0):
                raise InputError(
                    source, f"{where}.vertical_curve", "vertical curve overlaps the previous one or station 0"
                )
        stations.append(station)
        grades.append(grade)
        curves.append(curve)
    changes = tuple(GradeChange(s, g, c) for s, g, c in zip(stations[1:], grades[1:], curves[1:], strict=True))
    return VerticalProfile(initial_grade=grades[0], changes=changes)


_BASE_LOADER: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class _UniqueKeyLoader(_BASE_LOADER):  # type: ignore[misc]
    """PyYAML's safe loader (on libyaml when built with it) that refuses a key given twice in one mapping."""

    def construct_mapping(self, node: Any, deep: bool = False) -> Any:
        seen: set[str] = set()
        for key_node, _ in node.value:
            if not isinstance(key_node, yaml.ScalarNode) or key_node.tag == "tag:yaml.org,2002:merge":
                continue
            if key_node.value in seen:
                raise yaml.constructor.ConstructorError(
                    None, None, f"the key {key_node.value!r} is given twice (the last would silently win)",
                    key_node.start_mark,
                )  # fmt: skip
            seen.add(key_node.value)
        return super().construct_mapping(node, deep=deep)


_UniqueKeyLoader.add_constructor("tag:yaml.org,2002:map", _UniqueKeyLoader.construct_yaml_map)
_SAFE_LOADER: Any = _UniqueKeyLoader
"""The loader every input file goes through."""


_BIDI_CONTROLS = frozenset("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069")
"""Unicode bidirectional overrides and isolates: they reorder what a reader sees on screen and in reports."""


def _is_control(char: str) -> bool:
    code = ord(char)
    return (code < 0x20 and char not in "\t\n") or 0x7F <= code <= 0x9F or char in _BIDI_CONTROLS


def printable(text: str) -> str:
    """Text with every control character (see :func:`control_character`) written as an escape, ``\\x1b``:
    for echoing what a user gave (a file name, a refused value) without passing it to the terminal."""
    return "".join(char.encode("unicode_escape").decode("ascii") if _is_control(char) else char for char in text)


_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f" + "".join(sorted(_BIDI_CONTROLS)) + "]")
"""Every character :func:`_is_control` refuses (tested to agree with it)."""


def control_character(text: str) -> str | None:
    """The first control character in text (other than tab and line break), as 'U+001B', else None.

    Control characters (C0, DEL, C1) reach a terminal as escape sequences (cursor moves, hyperlinks, hidden
    text) and bidirectional overrides reorder what a report shows; no name, note or value needs them.
    """
    found = _CONTROL.search(text)
    return None if found is None else f"U+{ord(found.group()):04X}"


def refuse_control_characters(value: Any, source: str, field: str = "", _seen: set[int] | None = None) -> None:
    """Raise :class:`InputError` naming the field of the first string (key or value) in a loaded document that
    holds a control character (see :func:`control_character`).

    Each mapping and list is looked at once, under the first field that holds it: YAML aliases share one
    object among many fields, and nine lists of nine aliases nested nine deep hold 9^9 strings by reference.
    """
    if isinstance(value, str):
        found = control_character(value)
        if found is not None:
            rule = f"holds the control character {found}; text takes printable characters, tabs and line breaks only"
            raise InputError(source, field, rule)
        return
    if not isinstance(value, (dict, list)):
        return
    seen = set() if _seen is None else _seen
    if id(value) in seen:
        return
    seen.add(id(value))
    if isinstance(value, dict):
        for key, item in value.items():
            name = f"{field}.{key}" if field else str(key)
            refuse_control_characters(key, source, field, seen)
            refuse_control_characters(item, source, name, seen)
    else:
        for index, item in enumerate(value):
            refuse_control_characters(item, source, f"{field}.{index}" if field else str(index), seen)


def parse_yaml(text: str, source: str) -> Any:
    """YAML text through the safe loader; malformed text, or a string holding a control character, raises
    :class:`InputError`."""
    try:
        data = yaml.load(text, Loader=_SAFE_LOADER)
    except yaml.YAMLError as error:
        raise InputError(source, "", f"not valid YAML: {error}") from None
    except ValueError as error:  # e.g. an integer of thousands of digits, beyond Python's conversion limit
        raise InputError(source, "", f"not a value a site can hold: {str(error)[:120]}") from None
    if "\\" in text or _CONTROL.search(text):  # a loaded string can hold one only if the text does, or escapes it
        refuse_control_characters(data, source)
    return data


def file_kind(path: str | Path, source: str, field: str) -> Literal["file", "folder", "other"] | None:
    """What an input names at ``path`` (symbolic links followed): a regular file, a folder, something else, or
    None when nothing is there. A path the system cannot look up (a name too long, a loop of links, a folder
    that may not be searched) raises :class:`InputError` naming the source and the field."""
    try:
        mode = os.stat(path).st_mode
    except (FileNotFoundError, NotADirectoryError):
        return None
    except (OSError, ValueError) as error:  # ValueError: a NUL byte
        reason = error.strerror if isinstance(error, OSError) and error.strerror else str(error)
        raise InputError(source, field, f"cannot look up {printable(str(path))[:200]}: {reason}") from None
    return "file" if stat.S_ISREG(mode) else "folder" if stat.S_ISDIR(mode) else "other"


LARGEST_TEXT = 200_000_000
"""Largest text input read (site, vehicle, profile and policy files, batch lists and CSVs). [bytes] Far above any
of them (a batch of 100,000 sites is about 60 MB); a larger file is surely not one."""


def read_text(path: str | Path, what: str = "the file", largest: int | None = None) -> str:
    """A text file's content; a path that is not a regular file (a folder, a pipe that would wait for a writer, a
    device that never ends), a file larger than ``largest`` bytes (default :data:`LARGEST_TEXT`), one that cannot be read or one that is not
    UTF-8 raises :class:`InputError`."""
    kind = file_kind(path, str(path), "")
    if kind in ("folder", "other"):
        what_it_is = "a folder" if kind == "folder" else "a device, pipe or socket"
        raise InputError(str(path), "", f"cannot read {what}: it is {what_it_is}, not a regular file")
    try:
        largest = LARGEST_TEXT if largest is None else largest
        if kind == "file" and os.stat(path).st_size > largest:
            raise InputError(str(path), "", f"cannot read {what}: it is larger than {largest:,} bytes")
        return Path(path).read_text(encoding="utf-8")
    except OSError as error:
        raise InputError(str(path), "", f"cannot read {what}: {error.strerror}") from None
    except UnicodeDecodeError as error:
        byte = error.object[error.start : error.start + 1].hex()
        raise InputError(str(path), "", f"{what} is not UTF-8 text (byte 0x{byte} at position {error.start})") from None


CSV_LINE_LIMIT = 100_000
"""The longest line a CSV input may hold, in characters (far above any row of values with their units, and
below the csv module's own field limit, so that a long line gets its own message)."""


def csv_rows(text: str, source: str) -> list[tuple[int, list[str]]]:
    """The records of a CSV text, each with its line number in the file; blank lines and lines starting with
    ``#`` are skipped. Every line is one record: a quoted cell cannot hold a line break, and a line longer than
    :data:`CSV_LINE_LIMIT` is refused, each with an :class:`InputError` naming the row."""
    rows = []
    for number, line in enumerate(text.splitlines(), start=1):
        found = control_character(line)  # in a comment too, as the YAML reader refuses them anywhere
        if found is not None:
            raise InputError(source, f"row {number}", f"holds the control character {found}")
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        if len(line) > CSV_LINE_LIMIT:
            raise InputError(source, f"row {number}", f"the line is longer than {CSV_LINE_LIMIT:,} characters")
        try:
            rows.append((number, next(csv.reader([line], strict=True))))
        except csv.Error:
            rule = "a quoted cell is not closed on its line (cells cannot hold line breaks)"
            raise InputError(source, f"row {number}", rule) from None
    return rows


def read_yaml(path: str) -> Any:
    """Load a YAML file safely; unreadable or malformed files raise :class:`InputError`."""
    return parse_yaml(read_text(path), path)


def pydantic_error(error: ValidationError, source: str) -> InputError:
    """The first pydantic error as an :class:`InputError` naming the field path.

    A misspelt key shows twice, as an unknown field and as a required one missing beside it: the unknown one is
    named, with the missing field nearest in spelling as the likely meaning.
    """
    errors = error.errors()
    unknown = [e for e in errors if e["type"] == "extra_forbidden"]
    first = unknown[0] if unknown else errors[0]
    path = ".".join(str(part) for part in first["loc"])
    message = first["msg"].removeprefix("Value error, ")
    if first["type"] == "extra_forbidden":
        parent = first["loc"][:-1]
        missing = [str(e["loc"][-1]) for e in errors if e["type"] == "missing" and e["loc"][:-1] == parent]
        near = difflib.get_close_matches(str(first["loc"][-1]), missing, n=1, cutoff=0.6)
        message = "unknown field" + (f": did you mean {near[0]!r}?" if near else "")
    elif first["type"] == "missing":
        message = "required field is missing"
    elif first["type"] in _PLAIN:
        message = f"{_PLAIN[first['type']]}, got {first['input']!r}"[:300]
    return InputError(source, path, message)


_PLAIN = {
    "model_type": "must be a mapping of fields (one 'key: value' a line beneath it)",
    "model_attributes_type": "must be a mapping of fields (one 'key: value' a line beneath it)",
    "dict_type": "must be a mapping (one 'key: value' a line beneath it)",
    "list_type": "must be a list (one '- item' a line beneath it)",
    "string_type": "must be text",
    "int_type": "must be a whole number",
    "int_parsing": "must be a whole number",
    "int_from_float": "must be a whole number",
    "float_type": "must be a number",
    "float_parsing": "must be a number",
    "bool_type": "must be true or false",
}
"""pydantic's error types in the site file's words (its own messages name internal classes)."""


def validated(raw: Any, model: type[Model], source: str, what: str) -> Model:
    """Validate loaded YAML into a pydantic model; errors name the file, the field path and the rule."""
    if not isinstance(raw, dict):
        raise InputError(source, "", f"{what} must be a mapping of fields")
    try:
        return model.model_validate(raw)
    except ValidationError as error:
        raise pydantic_error(error, source) from None
