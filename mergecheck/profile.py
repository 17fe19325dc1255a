"""Vertical profile: grade and elevation as functions of station.

A profile is a starting grade and a list of grade changes. Each change happens
at a station (the point of vertical intersection, PVI) either abruptly or over
a symmetric parabolic vertical curve of a given length centred on the PVI, so
that the grade varies linearly from the incoming to the outgoing grade between
BVC = PVI - L/2 and EVC = PVI + L/2 (the standard equal-tangent vertical curve,
AASHTO Green Book, 7th ed. 2018, Section 3.4.6; common practice).

Stations are distances along the vehicle path [m], measured from a datum the
caller chooses (the site check uses the end of the controlling curve).
Grades are fractions (0.04 for a 4 % upgrade, negative downgrade).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .ragged_rows import RaggedRows

FloatArray = NDArray[np.float64]
IndexArray = NDArray[np.intp]


@dataclass(frozen=True, slots=True)
class GradeChange:
    """A change of grade at a PVI station.

    Attributes
    ----------
    station : float
        Station of the PVI. [m]
    grade : float
        Grade after the change. [fraction]
    curve_length : float
        Length of the vertical curve centred on the PVI; 0 for an abrupt
        change. [m]
    """

    station: float
    grade: float
    curve_length: float = 0.0


@dataclass(frozen=True, slots=True)
class VerticalProfile:
    """Piecewise grade line with optional parabolic vertical curves.

    Attributes
    ----------
    initial_grade : float
        Grade before the first change. [fraction]
    changes : tuple of GradeChange
        Grade changes in increasing station order; vertical curves must not
        overlap.
    """

    initial_grade: float
    changes: tuple[GradeChange, ...] = ()

    def __post_init__(self) -> None:
        previous_end = -np.inf
        for change in self.changes:
            if change.curve_length < 0:
                raise ValueError("vertical curve length must not be negative")
            start = change.station - change.curve_length / 2
            if start < previous_end:
                raise ValueError("grade changes must be in station order and vertical curves must not overlap")
            previous_end = change.station + change.curve_length / 2

    @classmethod
    def constant(cls, grade: float) -> VerticalProfile:
        """A single grade everywhere."""
        return cls(initial_grade=grade)

    @property
    def breakpoints(self) -> FloatArray:
        """Stations where the grade or its rate of change is not smooth. [m]"""
        points: list[float] = []
        for change in self.changes:
            if change.curve_length > 0:
                points += [change.station - change.curve_length / 2, change.station + change.curve_length / 2]
            else:
                points.append(change.station)
        return np.asarray(points, dtype=float)

    @property
    def last_change_end(self) -> float:
        """Station beyond which the grade is constant. [m]"""
        if not self.changes:
            return -np.inf
        last = self.changes[-1]
        return last.station + last.curve_length / 2

    @property
    def final_grade(self) -> float:
        """Grade after the last change. [fraction]"""
        return self.changes[-1].grade if self.changes else self.initial_grade

    def grade(self, station: ArrayLike) -> FloatArray:
        """Grade at the given stations. [fraction]

        .. math:: G(x) = G_0 + \\sum_i \\Delta G_i \\, r_i(x)

        where r_i is a unit step at the PVI for an abrupt change, or the ramp
        clip((x - BVC_i) / L_i, 0, 1) over a vertical curve: piecewise linear
        in x, evaluated from the segment that holds x (see :class:`ProfileStack`).
        """
        x = np.asarray(station, dtype=float)
        return ProfileStack.of([self]).grade(x.ravel(), np.zeros(x.size, dtype=np.intp)).reshape(x.shape)

    def elevation(self, station: ArrayLike) -> FloatArray:
        """Elevation relative to station 0 (integral of the grade). [m]

        The integral of each ramp is a quadratic over the curve (the parabola
        of the vertical curve) and linear beyond it.
        """
        x = np.asarray(station, dtype=float)
        return ProfileStack.of([self]).elevation(x.ravel(), np.zeros(x.size, dtype=np.intp)).reshape(x.shape)


@dataclass(frozen=True, slots=True)
class ProfileStack:
    """Many profiles side by side, one row each, for integrating many vehicles at once.

    Each row is cut at its knots (abrupt grade changes, and the BVC and EVC of
    each vertical curve) into segments on which the grade is linear, so that
    over segment j, from its reference station x_j,

    .. math:: G(x) = g_j + s_j (x - x_j), \\quad
              z(x) = z_j + g_j (x - x_j) + s_j (x - x_j)^2 / 2

    (z the elevation relative to station 0: the parabola of an equal-tangent
    vertical curve, a straight grade elsewhere). The segment that holds x is
    found by binary search, so one evaluation costs O(log K) for K knots and a
    surveyed profile of thousands of points integrates in time linear in its
    points. Rows are stored one after another (no padding), so one long
    profile does not widen the others.
    """

    knot: FloatArray
    """(K,) the knots of every row in turn, ascending within a row. [m]"""
    first_knot: NDArray[np.intp]
    """(n + 1,) offsets of each row's knots in ``knot``."""
    reference: FloatArray
    """(K + n,) reference station x_j of each segment, the row's segments in turn (one more than its knots). [m]"""
    segment_grade: FloatArray
    """(K + n,) grade g_j at the reference station. [fraction]"""
    slope: FloatArray
    """(K + n,) rate of change of grade s_j over the segment. [1/m]"""
    height: FloatArray
    """(K + n,) elevation z_j at the reference station, relative to station 0. [m]"""
    last_change_end: FloatArray
    """(n,) station beyond which each row's grade is constant (-inf for a single grade). [m]"""
    final_grade: FloatArray
    """(n,) grade after each row's last change. [fraction]"""
    _knots: RaggedRows
    """``knot`` by row, for the search of the segment that holds a station."""

    @classmethod
    def of(cls, profiles: Sequence[VerticalProfile]) -> ProfileStack:
        knots: list[float] = []
        first = [0]
        segments: list[tuple[float, float, float, float]] = []  # (x_j, g_j, s_j, z_j)
        for profile in profiles:
            x, g, s, z = 0.0, profile.initial_grade, 0.0, 0.0  # the segment before the first knot
            row = [(x, g, s, z)]
            for station, after, rate in _events(profile):
                z, g = z + g * (station - x) + s * (station - x) ** 2 / 2, g + s * (station - x)
                x, s = station, rate
                g = g if after is None else after
                knots.append(x)
                row.append((x, g, s, z))
            # elevations relative to station 0 even where knots lie before it (a profile read from a design
            # model begins before the ramp path does): subtract the elevation the tables give at 0
            at_zero = next(j for j in range(len(row) - 1, -1, -1) if j == 0 or row[j][0] <= 0.0)
            x0, g0, s0, z0 = row[at_zero]
            offset = z0 + g0 * (0.0 - x0) + s0 * (0.0 - x0) ** 2 / 2 if at_zero else 0.0
            segments += [(xj, gj, sj, zj - offset) for xj, gj, sj, zj in row]
            first.append(len(knots))
        reference, grade, slope, height = np.array(segments, dtype=float).reshape(-1, 4).T
        knot = np.asarray(knots, dtype=float)
        return cls(
            knot=knot,
            first_knot=np.asarray(first, dtype=np.intp),
            reference=reference,
            segment_grade=grade,
            slope=slope,
            height=height,
            last_change_end=np.array([p.last_change_end for p in profiles], dtype=float),
            final_grade=np.array([p.final_grade for p in profiles], dtype=float),
            _knots=RaggedRows.of(knot, first),
        )

    def _count(self, station: FloatArray, rows: IndexArray) -> IndexArray:
        """Number of the row's knots at or before each station (the row's segment index)."""
        return self._knots.count(station, rows)

    def _segment(self, station: FloatArray, rows: IndexArray | None) -> tuple[IndexArray, FloatArray]:
        rows = np.arange(station.size, dtype=np.intp) if rows is None else rows
        index = self.first_knot[rows] + rows + self._count(station, rows)
        return index, station - self.reference[index]

    def grade(self, station: FloatArray, rows: IndexArray | None = None) -> FloatArray:
        """Grade of each row (``rows``, default one station per row in order) at its station. [fraction]"""
        j, dx = self._segment(np.asarray(station, dtype=float), rows)
        return np.asarray(self.segment_grade[j] + self.slope[j] * dx, dtype=np.float64)

    def elevation(self, station: FloatArray, rows: IndexArray | None = None) -> FloatArray:
        """Elevation of each row at its own station, relative to station 0. [m]"""
        j, dx = self._segment(np.asarray(station, dtype=float), rows)
        return np.asarray(self.height[j] + (self.segment_grade[j] + 0.5 * self.slope[j] * dx) * dx, dtype=np.float64)

    def next_knot(self, station: FloatArray, rows: IndexArray) -> FloatArray:
        """First knot of each row after its station (``_FAR`` when none is left). [m]"""
        index = self.first_knot[rows] + self._count(station, rows)
        ahead = index < self.first_knot[rows + 1]
        following = np.full(station.shape, _FAR)
        following[ahead] = self.knot[index[ahead]]
        return following


def _events(profile: VerticalProfile) -> list[tuple[float, float | None, float]]:
    """Knots of one profile in station order: (station, grade after it or None if continuous, slope after it)."""
    events: list[tuple[float, float | None, float]] = []
    before = profile.initial_grade
    for change in profile.changes:
        half = change.curve_length / 2
        if change.curve_length > 0:
            events.append((change.station - half, None, (change.grade - before) / change.curve_length))
            events.append((change.station + half, change.grade, 0.0))
        else:
            events.append((change.station, change.grade, 0.0))
        before = change.grade
    return events


_FAR = 1e12  # m: reported as the next knot of a row that has none left
