"""Property-based checks (hypothesis): closed forms and probability laws over random inputs."""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from mergecheck.acceleration import LinearDecreasing
from mergecheck.critical_gaps import CriticalGap
from mergecheck.headways import CowanM3
from mergecheck.profile import VerticalProfile
from mergecheck.renewal import not_merged
from mergecheck.trajectory import accelerate


@settings(max_examples=40, deadline=None)
@given(
    alpha=st.floats(0.5, 3.0),
    beta=st.floats(0.005, 0.08),
    v0_share=st.floats(0.0, 0.6),
    v1_share=st.floats(0.65, 0.95),
)
def test_linear_decreasing_distance_matches_closed_form(
    alpha: float, beta: float, v0_share: float, v1_share: float
) -> None:
    """Long (2000): x(v) closed form, for any parameters, start and target below alpha/beta (rel. 1e-4)."""
    top = alpha / beta
    v0, v1 = v0_share * top, v1_share * top
    run = accelerate(LinearDecreasing(alpha, beta, 0.5), VerticalProfile.constant(0.0), v0, v1, max_distance=1e6)
    expected = ((v0 - v1) + top * math.log((alpha - beta * v0) / (alpha - beta * v1))) / beta
    assert run.distance is not None
    assert math.isclose(run.distance, expected, rel_tol=1e-4)


@settings(max_examples=25, deadline=None)
@given(flow=st.floats(100, 2200), delta=st.floats(0.0, 1.4), mean=st.floats(1.5, 8.0), cv=st.floats(0.0, 0.5))
def test_merge_probability_is_a_distribution_function(flow: float, delta: float, mean: float, cv: float) -> None:
    """P(merged by tau) lies in [0, 1], never decreases with tau, and is below 1 at tau = 0 unless gaps are certain."""
    q = flow / 3600
    if delta * q >= 0.95:
        delta = 0.9 / q
    tau = np.linspace(0.0, 60.0, 121)
    merged = 1 - not_merged(CowanM3.tanner(q, delta), CriticalGap(mean, cv * mean), tau)
    assert np.all((merged >= -1e-12) & (merged <= 1 + 1e-12))
    assert np.all(np.diff(merged) >= -1e-9)
