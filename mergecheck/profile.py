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
        result = np.full_like(x, self.initial_grade, dtype=float)
        previous = self.initial_grade
        for change in self.changes:
            step = change.grade - previous
            result = result + step * self._ramp(x, change)
            previous = change.grade
        return result

    def elevation(self, station: ArrayLike) -> FloatArray:
        """Elevation relative to station 0 (integral of the grade). [m]

        The integral of each ramp is a quadratic over the curve (the parabola
        of the vertical curve) and linear beyond it.
        """
        x = np.asarray(station, dtype=float)
        result = self.initial_grade * x
        previous = self.initial_grade
        for change in self.changes:
            step = change.grade - previous
            result = result + step * (self._ramp_integral(x, change) - self._ramp_integral(np.zeros_like(x), change))
            previous = change.grade
        return result

    @staticmethod
    def _ramp(x: FloatArray, change: GradeChange) -> FloatArray:
        if change.curve_length > 0:
            start = change.station - change.curve_length / 2
            return np.clip((x - start) / change.curve_length, 0.0, 1.0)
        return (x >= change.station).astype(float)

    @staticmethod
    def _ramp_integral(x: FloatArray, change: GradeChange) -> FloatArray:
        """Integral of the ramp from -infinity to x."""
        length = change.curve_length
        start = change.station - length / 2
        if length > 0:
            inside = np.clip(x - start, 0.0, length)
            return inside**2 / (2 * length) + np.maximum(x - start - length, 0.0)
        return np.maximum(x - change.station, 0.0)
