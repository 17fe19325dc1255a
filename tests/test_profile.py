"""Vertical profiles: elevation is the integral of the grade; vertical curves are parabolic."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from mergecheck.profile import GradeChange, VerticalProfile

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
