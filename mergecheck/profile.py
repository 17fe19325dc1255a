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

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]


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
        clip((x - BVC_i) / L_i, 0, 1) over a vertical curve.
        """
        x = np.asarray(station, dtype=float)
        return grade_at(x[..., None], self.initial_grade, *self._columns())

    def elevation(self, station: ArrayLike) -> FloatArray:
        """Elevation relative to station 0 (integral of the grade). [m]

        The integral of each ramp is a quadratic over the curve (the parabola
        of the vertical curve) and linear beyond it.
        """
        x = np.asarray(station, dtype=float)
        return elevation_at(x[..., None], self.initial_grade, *self._columns())

    def _columns(self) -> tuple[FloatArray, FloatArray, FloatArray]:
        """PVI stations, grade steps and curve lengths as arrays (one column per change)."""
        grades = [self.initial_grade] + [c.grade for c in self.changes]
        return (
            np.array([c.station for c in self.changes], dtype=float),
            np.diff(np.asarray(grades, dtype=float)),
            np.array([c.curve_length for c in self.changes], dtype=float),
        )


@dataclass(frozen=True, slots=True)
class ProfileStack:
    """Many profiles side by side, one row each, for integrating many vehicles at once.

    Rows are padded with empty changes (no grade step, far away) to a common
    number of columns. ``grade`` and ``elevation`` take one station per row
    and use the same formulas as :class:`VerticalProfile`.
    """

    initial_grade: FloatArray
    """(n,) [fraction]"""
    station: FloatArray
    """(n, c) PVI stations. [m]"""
    step: FloatArray
    """(n, c) grade change at each PVI. [fraction]"""
    curve_length: FloatArray
    """(n, c) [m]"""

    @classmethod
    def of(cls, profiles: list[VerticalProfile]) -> ProfileStack:
        width = max((len(p.changes) for p in profiles), default=0) + 1  # at least one padding column
        station = np.full((len(profiles), width), _FAR)
        step = np.zeros((len(profiles), width))
        length = np.zeros((len(profiles), width))
        for row, profile in enumerate(profiles):
            count = len(profile.changes)
            station[row, :count], step[row, :count], length[row, :count] = profile._columns()
        initial = np.array([p.initial_grade for p in profiles], dtype=float)
        return cls(initial, station, step, length)

    def take(self, rows: NDArray[np.intp]) -> ProfileStack:
        return ProfileStack(self.initial_grade[rows], self.station[rows], self.step[rows], self.curve_length[rows])

    def grade(self, station: FloatArray) -> FloatArray:
        """Grade of each row at its own station. [fraction]"""
        return grade_at(station[:, None], self.initial_grade, self.station, self.step, self.curve_length)

    def elevation(self, station: FloatArray) -> FloatArray:
        """Elevation of each row at its own station, relative to station 0. [m]"""
        return elevation_at(station[:, None], self.initial_grade, self.station, self.step, self.curve_length)

    @property
    def breakpoints(self) -> FloatArray:
        """(n, 2c) stations where each row's grade or its rate of change is not smooth (padding far away). [m]"""
        return np.concatenate([self.station - self.curve_length / 2, self.station + self.curve_length / 2], axis=1)

    @property
    def last_change_end(self) -> FloatArray:
        """(n,) station beyond which each row's grade is constant. [m]"""
        ends = np.where(self.station < _FAR, self.station + self.curve_length / 2, -np.inf)
        return np.asarray(np.max(ends, axis=1, initial=-np.inf), dtype=float)

    @property
    def final_grade(self) -> FloatArray:
        """(n,) grade after each row's last change. [fraction]"""
        return np.asarray(self.initial_grade + self.step.sum(axis=1), dtype=float)


_FAR = 1e12  # m: station of the padding changes of a ProfileStack


def _ramp(x: FloatArray, station: FloatArray, length: FloatArray) -> FloatArray:
    """0 before the change, 1 after; linear over a vertical curve of length L centred on the PVI."""
    over_curve = np.clip((x - station + length / 2) / np.where(length > 0, length, 1.0), 0.0, 1.0)
    return np.where(length > 0, over_curve, (x >= station).astype(float))


def _ramp_integral(x: FloatArray, station: FloatArray, length: FloatArray) -> FloatArray:
    """Integral of the ramp from -infinity to x."""
    start = station - length / 2
    inside = np.clip(x - start, 0.0, length)
    return np.asarray(inside**2 / (2 * np.where(length > 0, length, 1.0)) + np.maximum(x - start - length, 0.0))


def grade_at(
    x: FloatArray, initial: float | FloatArray, station: FloatArray, step: FloatArray, length: FloatArray
) -> FloatArray:
    """G(x) = G_0 + sum_i dG_i r_i(x); changes along the last axis, x broadcast against them. [fraction]"""
    return np.asarray(np.add(initial, np.sum(step * _ramp(x, station, length), axis=-1)), dtype=np.float64)


def elevation_at(
    x: FloatArray, initial: float | FloatArray, station: FloatArray, step: FloatArray, length: FloatArray
) -> FloatArray:
    """Integral of G from 0 to x, same layout as :func:`grade_at`. [m]"""
    rise = step * (_ramp_integral(x, station, length) - _ramp_integral(np.zeros_like(x), station, length))
    return np.asarray(np.multiply(initial, x[..., 0]) + np.sum(rise, axis=-1), dtype=np.float64)
