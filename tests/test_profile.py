"""Vertical profiles: elevation is the integral of the grade; vertical curves are parabolic."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from mergecheck.profile import GradeChange, ProfileStack, VerticalProfile

PROFILE = VerticalProfile(0.03, (GradeChange(250.0, -0.01, 120.0), GradeChange(600.0, 0.05, 0.0)))


@pytest.mark.parametrize("station", [0.0, 100.0, 190.0, 250.0, 310.0, 599.0, 601.0, 900.0])
def test_elevation_is_integral_of_grade(station: float) -> None:
    """Check against scipy.integrate.quad of the grade (general-purpose reference library)."""
    expected, _ = quad(lambda x: float(PROFILE.grade(x)), 0.0, station, points=[190.0, 310.0, 600.0], limit=200)
    assert float(PROFILE.elevation(station)) == pytest.approx(expected, abs=1e-9)


def test_vertical_curve_grade_is_linear_and_midpoint_is_average() -> None:
    """Equal-tangent parabolic curve: grade changes linearly over L, the mean of both grades at the PVI
    (AASHTO Green Book 7th ed. 2018, 3.4.6; common practice)."""
    assert float(PROFILE.grade(250.0)) == pytest.approx(0.01)
    stations = np.linspace(190.0, 310.0, 13)
    assert np.allclose(np.diff(PROFILE.grade(stations), 2), 0.0, atol=1e-12)


def test_parabola_offset_at_pvi() -> None:
    """Vertical offset of an equal-tangent curve at the PVI: E = A L / 800 with A in percent (common practice)."""
    tangent = 0.03 * 250.0  # elevation of the PVI on the incoming tangent
    offset = tangent - float(PROFILE.elevation(250.0))
    assert offset == pytest.approx(4.0 * 120.0 / 800.0)


def test_overlapping_curves_are_refused() -> None:
    with pytest.raises(ValueError, match="must not overlap"):
        VerticalProfile(0.0, (GradeChange(100.0, 0.02, 100.0), GradeChange(140.0, 0.0, 100.0)))


def _sum_of_ramps(profile: VerticalProfile, x: np.ndarray) -> np.ndarray:
    """G(x) = G0 + sum dG_i r_i(x), the defining sum written out term by term (the reference for the tables)."""
    grade = np.full(x.shape, profile.initial_grade)
    before = profile.initial_grade
    for change in profile.changes:
        if change.curve_length > 0:
            ramp = np.clip((x - change.station + change.curve_length / 2) / change.curve_length, 0.0, 1.0)
        else:
            ramp = (x >= change.station).astype(float)
        grade += (change.grade - before) * ramp
        before = change.grade
    return grade


def _surveyed(points: int, seed: int) -> VerticalProfile:
    """A dense profile as a survey gives it: a grade every 2 m, a vertical curve at every third PVI."""
    rng = np.random.default_rng(seed)
    changes = tuple(
        GradeChange(2.0 * i, float(rng.uniform(-0.05, 0.06)), 1.0 if i % 3 == 0 else 0.0) for i in range(1, points)
    )
    return VerticalProfile(float(rng.uniform(-0.03, 0.03)), changes)


def test_dense_profile_matches_the_defining_sum_everywhere_and_at_every_knot() -> None:
    """Segment tables found by binary search give the sum of ramps to 1e-12, at random stations and exactly at
    each PVI (an abrupt change counts from its station on), and elevations integrate the grade (trapezoid rule
    on the piecewise-linear grade is exact)."""
    profile = _surveyed(2000, 7)
    rng = np.random.default_rng(3)
    stations = np.concatenate([rng.uniform(-10.0, 4100.0, 5000), [c.station for c in profile.changes]])
    assert np.allclose(profile.grade(stations), _sum_of_ramps(profile, stations), rtol=0, atol=1e-12)
    fine = np.sort(np.concatenate([np.linspace(0.0, 4000.0, 40_001), profile.breakpoints]))
    left = np.concatenate([[profile.initial_grade], _sum_of_ramps(profile, fine[1:] - 1e-9)])
    trapezoid = np.concatenate([[0.0], np.cumsum(np.diff(fine) * (_sum_of_ramps(profile, fine)[:-1] + left[1:]) / 2)])
    assert np.allclose(profile.elevation(fine), trapezoid, rtol=0, atol=1e-8)


def test_stacked_rows_of_different_lengths_each_give_their_own_profile() -> None:
    """Rows stored end to end (a long surveyed row beside short ones) read only their own knots."""
    rows = [PROFILE, _surveyed(500, 1), VerticalProfile.constant(-0.02), _surveyed(40, 2)]
    stack = ProfileStack.of(rows)
    x = np.array([305.0, 311.0, 50.0, 79.0])
    index = np.arange(4, dtype=np.intp)
    assert np.array_equal(stack.grade(x, index), [float(p.grade(xi)) for p, xi in zip(rows, x, strict=True)])
    assert np.allclose(stack.elevation(x, index), [float(p.elevation(xi)) for p, xi in zip(rows, x, strict=True)])
    assert stack.next_knot(np.array([0.0, 0.0, 0.0, 500.0]), index).tolist() == [190.0, 2.0, 1e12, 1e12]


def test_elevation_is_relative_to_station_0_when_changes_lie_before_it() -> None:
    """A profile read from a design model begins before the ramp path: a change at -100 m and a curve across 0.
    Elevations stay the integral of the grade from station 0 (scipy.integrate.quad, reference library)."""
    profile = VerticalProfile(0.02, (GradeChange(-100.0, -0.01, 0.0), GradeChange(0.0, 0.04, 80.0)))
    assert float(profile.elevation(0.0)) == pytest.approx(0.0, abs=1e-12)
    for station in (-150.0, -60.0, 25.0, 200.0):
        expected, _ = quad(lambda x: float(profile.grade(x)), 0.0, station, points=[-100.0, -40.0, 40.0], limit=200)
        assert float(profile.elevation(station)) == pytest.approx(expected, abs=1e-9)
