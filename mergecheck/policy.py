"""Policy minimum acceleration lengths, as data an agency can supply.

A policy table (YAML; two are bundled, ``mergecheck/data/policy-aashto-2011-us.yaml`` and
``mergecheck/data/policy-aashto-2011-metric.yaml``, named ``us`` and ``metric`` in a site file)
gives minimum acceleration lengths by highway design speed (rows) and ramp
controlling-curve design speed (columns, with a "stop" column), the merge
speed Va and initial speed Va' each assumes, and grade factors (ratio of the
length on grade to the length on the level) in blocks by grade range.

Interpolation rule (stated in every report): bilinear in highway design speed
and ramp controlling speed between the four surrounding cells; the "stop"
column is interpolated in highway design speed only; no extrapolation beyond
the table, and no value where any of the cells used is blank. Grades within
+/- 3 % take the flat-grade value; grade factors (upgrade and downgrade
blocks) are interpolated the same way within their block and linearly in grade
between the near ends of two blocks; a grade beyond the steepest block has no
factor (not extrapolated), and no policy value is given for it.
"""

from __future__ import annotations

import bisect
import functools
import importlib.resources
import itertools
from dataclasses import dataclass
from typing import Annotated

from pydantic import BaseModel, ConfigDict, Field, model_validator

from .inputs import parse_yaml, read_text, validated
from .units import parse_quantity

BUNDLED_POLICIES = {"us": "policy-aashto-2011-us.yaml", "metric": "policy-aashto-2011-metric.yaml"}
"""The bundled tables by the name a site file gives them (``policy: us`` or ``policy: metric``)."""


@dataclass(frozen=True, slots=True)
class PolicyChoice:
    """Which policy table a site is checked against, and why."""

    table: str | None
    """A bundled table's name (:data:`BUNDLED_POLICIES`) or a table file's path; None for no table (policy: none)."""
    why: str
    """How the choice was made, for the report."""


FLAT_GRADE_LIMIT = 0.03
"""Tables apply to grades below this without adjustment ("flat grades of less than 3 percent"). [fraction]"""


class _Units(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)
    speed: str
    length: str


# Plausible ranges in the table's own units (mph or km/h, ft or m): wide enough for either system.
_Speed = Annotated[float, Field(gt=0, le=200)]
_Initial = Annotated[float, Field(ge=0, le=200)]
_Length = Annotated[float, Field(ge=0, le=20_000)]
_Factor = Annotated[float, Field(gt=0, le=10)]


class _GradeBlock(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)
    min_grade: float = Field(ge=-0.1, le=0.1)
    max_grade: float = Field(ge=-0.1, le=0.1)
    highway_speeds: list[_Speed] = Field(min_length=1)
    ramp_speeds: list[_Speed] = Field(min_length=1)
    factors: list[list[_Factor | None]]

    @model_validator(mode="after")
    def _shape(self) -> _GradeBlock:
        if self.max_grade <= self.min_grade:
            raise ValueError("max_grade must exceed min_grade")
        if len(self.factors) != len(self.highway_speeds) or any(len(r) != len(self.ramp_speeds) for r in self.factors):
            raise ValueError("factors must have one row per highway speed and one column per ramp speed")
        return self


class _PolicyFile(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)
    title: str
    source: str
    caution: str = ""
    length_definition: str
    units: _Units
    highway_speeds: list[_Speed] = Field(min_length=2)
    merge_speeds: list[_Speed] = Field(min_length=2)
    running_speeds: list[_Speed] | None = None
    ramp_speeds: list[_Speed | str] = Field(min_length=1)
    ramp_initial_speeds: list[_Initial]
    lengths: list[list[_Length | None]]
    grade_factors: list[_GradeBlock] = Field(default_factory=list)
    interpolation: str

    @model_validator(mode="after")
    def _shape(self) -> _PolicyFile:
        if len(self.merge_speeds) != len(self.highway_speeds):
            raise ValueError("merge_speeds needs one value per highway speed")
        if self.running_speeds is not None and len(self.running_speeds) != len(self.highway_speeds):
            raise ValueError("running_speeds needs one value per highway speed")
        if len(self.ramp_initial_speeds) != len(self.ramp_speeds):
            raise ValueError("ramp_initial_speeds needs one value per ramp speed")
        if len(self.lengths) != len(self.highway_speeds) or any(len(r) != len(self.ramp_speeds) for r in self.lengths):
            raise ValueError("lengths must have one row per highway speed and one column per ramp speed")
        if any(b <= a for a, b in zip(self.highway_speeds, self.highway_speeds[1:], strict=False)):
            raise ValueError("highway_speeds must increase")
        if any(va >= v for va, v in zip(self.merge_speeds, self.highway_speeds, strict=True)):
            raise ValueError("each merge speed must be below its highway design speed")
        numeric = [s for s in self.ramp_speeds if s != "stop"]
        if any(isinstance(s, str) for s in numeric):
            raise ValueError("ramp speeds are numbers or 'stop'")
        if any(b <= a for a, b in itertools.pairwise(numeric)):  # type: ignore[operator]
            raise ValueError("ramp_speeds must increase")
        return self


@dataclass(frozen=True, slots=True)
class GradeFactors:
    """One block of grade factors in SI: applies for min_grade <= G <= max_grade."""

    min_grade: float
    max_grade: float
    highway_speeds: tuple[float, ...]
    ramp_speeds: tuple[float, ...]
    factors: tuple[tuple[float | None, ...], ...]


@dataclass(frozen=True, slots=True)
class PolicyTable:
    """A policy acceleration-length table in SI units (speeds m/s, lengths m)."""

    title: str
    source: str
    caution: str
    length_definition: str
    interpolation: str
    origin: str
    highway_speeds: tuple[float, ...]
    merge_speeds: tuple[float, ...]
    running_speeds: tuple[float, ...] | None
    """Average running speed of the highway for each design speed, if the table gives it. [m/s]"""
    ramp_speeds: tuple[float, ...]
    """Numeric ramp controlling speeds (the stop column is kept apart). [m/s]"""
    ramp_initial_speeds: tuple[float, ...]
    lengths: tuple[tuple[float | None, ...], ...]
    """Rows by highway speed, columns by numeric ramp speed. [m]"""
    stop_lengths: tuple[float | None, ...] | None
    """The stop column, by highway speed, if the table has one. [m]"""
    grade_factors: tuple[GradeFactors, ...]


@dataclass(frozen=True, slots=True)
class PolicyValue:
    """The policy minimum for one site, or why there is none."""

    table: PolicyTable
    minimum_length: float | None
    """Level length times grade factor; None when the table gives no value. [m]"""
    level_length: float | None
    """[m]"""
    grade_factor: float | None
    grade: float
    """Average grade over the acceleration length used for the factor. [fraction]"""
    merge_speed: float | None
    """Merge speed Va the table assumes for this highway speed. [m/s]"""
    note: str


@functools.cache
def _bundled_policy(name: str) -> PolicyTable:
    return _load_policy(name)


def load_policy(path: str) -> PolicyTable:
    """Load a policy table: a bundled one by name (``us``, ``metric``; read once), else a file by path."""
    return _bundled_policy(path) if path in BUNDLED_POLICIES else _load_policy(path)


def _load_policy(path: str) -> PolicyTable:
    if path in BUNDLED_POLICIES:
        source = BUNDLED_POLICIES[path]
        text = (importlib.resources.files("mergecheck.data") / source).read_text(encoding="utf-8")
        origin = f"bundled: {source}"
    else:
        text = read_text(path, "the policy table")
        source = origin = path
    data = validated(parse_yaml(text, source), _PolicyFile, source, "a policy table")
    speed = parse_quantity(f"1 {data.units.speed}", "speed", source=source, field="units.speed")
    length = parse_quantity(f"1 {data.units.length}", "length", source=source, field="units.length")
    numeric = [i for i, s in enumerate(data.ramp_speeds) if s != "stop"]
    stop = [i for i, s in enumerate(data.ramp_speeds) if s == "stop"]

    def scaled(value: float | None, factor: float) -> float | None:
        return None if value is None else value * factor

    return PolicyTable(
        title=data.title,
        source=data.source,
        caution=data.caution,
        length_definition=data.length_definition,
        interpolation=data.interpolation,
        origin=origin,
        highway_speeds=tuple(v * speed for v in data.highway_speeds),
        merge_speeds=tuple(v * speed for v in data.merge_speeds),
        running_speeds=None if data.running_speeds is None else tuple(v * speed for v in data.running_speeds),
        ramp_speeds=tuple(float(data.ramp_speeds[i]) * speed for i in numeric),
        ramp_initial_speeds=tuple(data.ramp_initial_speeds[i] * speed for i in numeric),
        lengths=tuple(tuple(scaled(row[i], length) for i in numeric) for row in data.lengths),
        stop_lengths=tuple(scaled(row[stop[0]], length) for row in data.lengths) if stop else None,
        grade_factors=tuple(
            GradeFactors(
                b.min_grade,
                b.max_grade,
                tuple(v * speed for v in b.highway_speeds),
                tuple(v * speed for v in b.ramp_speeds),
                tuple(tuple(row) for row in b.factors),
            )
            for b in data.grade_factors
        ),
    )


def _bracket(values: tuple[float, ...], x: float) -> tuple[int, int, float] | None:
    """Indices and weight of the cells around x; None outside the range."""
    tol = 1e-9
    if not values or x < values[0] - tol or x > values[-1] + tol:
        return None
    if len(values) == 1:
        return (0, 0, 0.0)
    j = min(max(bisect.bisect_right(values, x) - 1, 0), len(values) - 2)
    w = (x - values[j]) / (values[j + 1] - values[j])
    return (j, j + 1, min(max(w, 0.0), 1.0))


def _bilinear(
    rows: tuple[float, ...], cols: tuple[float, ...], cells: tuple[tuple[float | None, ...], ...], x: float, y: float
) -> float | None:
    r = _bracket(rows, x)
    c = _bracket(cols, y)
    if r is None or c is None:
        return None
    (r0, r1, wr), (c0, c1, wc) = r, c
    corners = [(r0, c0, (1 - wr) * (1 - wc)), (r0, c1, (1 - wr) * wc), (r1, c0, wr * (1 - wc)), (r1, c1, wr * wc)]
    total = 0.0
    for i, j, weight in corners:
        value = cells[i][j]
        if weight > 0 or (i, j) == (r0, c0):
            if value is None:
                return None
            total += weight * value
    return total


def _linear(xs: tuple[float, ...], ys: tuple[float | None, ...], x: float) -> float | None:
    b = _bracket(xs, x)
    if b is None:
        return None
    i, j, w = b
    if ys[i] is None or (w > 0 and ys[j] is None):
        return None
    return (1 - w) * ys[i] + (w * ys[j] if w > 0 else 0.0)  # type: ignore[operator]


def running_speed_for(table: PolicyTable, design_speed: float) -> float | None:
    """The table's average running speed for a highway design speed, interpolated; None if it has none. [m/s]"""
    if table.running_speeds is None:
        return None
    return _linear(table.highway_speeds, tuple(table.running_speeds), design_speed)


def initial_speed_for(table: PolicyTable, controlling_speed: float | None) -> float | None:
    """The table's initial speed Va' for a controlling speed (0 for a stop), interpolated. [m/s]"""
    if controlling_speed is None:
        return 0.0
    return _linear(table.ramp_speeds, table.ramp_initial_speeds, controlling_speed)


def policy_minimum(
    table: PolicyTable, design_speed: float, controlling_speed: float | None, grade: float
) -> PolicyValue:
    """Policy minimum acceleration length for a site.

    Parameters
    ----------
    design_speed
        Highway design speed. [m/s]
    controlling_speed
        Ramp controlling-curve design speed; None for a stop. [m/s]
    grade
        Average grade over the acceleration length. [fraction]
    """
    merge = _linear(table.highway_speeds, table.merge_speeds, design_speed)

    def value(minimum: float | None, level: float | None, factor: float | None, note: str) -> PolicyValue:
        return PolicyValue(table, minimum, level, factor, grade, merge, note)

    if controlling_speed is None:
        if table.stop_lengths is None:
            return value(None, None, None, "the table has no column for a ramp that starts from a stop")
        level = _linear(table.highway_speeds, table.stop_lengths, design_speed)
    else:
        level = _bilinear(table.highway_speeds, table.ramp_speeds, table.lengths, design_speed, controlling_speed)
    if level is None:
        return value(None, None, None, "the combination of highway and ramp speeds is outside the table")
    if abs(grade) < FLAT_GRADE_LIMIT:
        return value(level, level, 1.0, "flat-grade value (grade within 3 %)")
    if controlling_speed is None:
        return value(None, level, None, "the grade factors have no column for a stop")
    factor, note = _grade_factor(table, design_speed, controlling_speed, grade)
    if factor is None:
        return value(None, level, None, note)
    return value(level * factor, level, factor, f"level value times grade factor {factor:.2f} ({note})")


def _grade_factor(
    table: PolicyTable, design_speed: float, controlling_speed: float, grade: float
) -> tuple[float | None, str]:
    """Grade factor for a grade at or beyond the flat limit, and how it was found.

    Within a block, the block's factor (bilinear in the two speeds). Between two blocks on the same side
    (for example 4 % and 5 % between the 3-4 % and 5-6 % upgrade blocks), linear in the grade between the
    factor at the near end of each block. Beyond the steepest block the table does not reach: no factor
    (not extrapolated).
    """
    side = [b for b in table.grade_factors if (b.min_grade > 0) == (grade > 0)]
    if not side:
        return None, f"the table has no grade factors for {'upgrades' if grade > 0 else 'downgrades'}"
    steepness = abs(grade)
    blocks = sorted(side, key=lambda b: min(abs(b.min_grade), abs(b.max_grade)))

    def factor(block: GradeFactors) -> float | None:
        return _bilinear(block.highway_speeds, block.ramp_speeds, block.factors, design_speed, controlling_speed)

    for block in blocks:
        low, high = sorted((abs(block.min_grade), abs(block.max_grade)))
        if low - 1e-9 <= steepness <= high + 1e-9:
            f = factor(block)
            if f is None:
                return None, "no grade factor for this combination of speeds in the table"
            return f, f"block {block.min_grade:+.0%} to {block.max_grade:+.0%}"
    for below, above in itertools.pairwise(blocks):
        top = max(abs(below.min_grade), abs(below.max_grade))
        bottom = min(abs(above.min_grade), abs(above.max_grade))
        if top < steepness < bottom:
            f0, f1 = factor(below), factor(above)
            if f0 is None or f1 is None:
                return None, "no grade factor for this combination of speeds in the table"
            w = (steepness - top) / (bottom - top)
            return f0 + w * (f1 - f0), f"interpolated in grade between the {top:.0%} and {bottom:.0%} block ends"
    steepest = max(max(abs(b.min_grade), abs(b.max_grade)) for b in blocks)
    if steepness > steepest:
        return (
            None,
            f"a {grade:+.2%} grade is beyond the table's steepest grade factor ({steepest:.0%}); not extrapolated",
        )
    return None, f"no grade factors for a {grade:+.2%} grade in this table"
