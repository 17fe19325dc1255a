"""Headway models and waits against independent computations (scipy.stats, closed forms, simulation)."""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pytest
from scipy import stats

from mergecheck.headways import (
    CowanM3,
    Exponential,
    adams_wait,
    headway_model,
    m3_survival,
    m3_survival_integral,
    mean_wait,
)


@pytest.mark.parametrize("flow_veh_h", [300.0, 1200.0, 1900.0])
def test_exponential_survival_matches_scipy(flow_veh_h: float) -> None:
    """P(h > t) = exp(-q t): scipy.stats.expon with scale 1/q (general-purpose reference library)."""
    q = flow_veh_h / 3600
    t = np.linspace(0.0, 20.0, 41)
    assert np.allclose(Exponential(q).survival(t), stats.expon(scale=1 / q).sf(t), rtol=1e-12)
    assert Exponential(q).mean() == pytest.approx(stats.expon(scale=1 / q).mean())


def test_m3_survival_by_hand() -> None:
    """Cowan (1975) M3 at q = 1200 veh/h, Delta = 1 s, Tanner's alpha = 1 - Delta q = 2/3:
    lambda = alpha q / (1 - Delta q) = 1/3 1/s, so P(h > 4 s) = (2/3) e^{-1} = 0.24525 (by hand)."""
    m3 = CowanM3.tanner(1200 / 3600, 1.0)
    assert m3.free_fraction == pytest.approx(2 / 3)
    assert m3.decay == pytest.approx(1 / 3)
    assert float(m3.survival(4.0)) == pytest.approx(2 / 3 * math.exp(-1), rel=1e-12)
    assert float(m3.survival(0.5)) == 1.0  # no headway below the minimum
    assert m3.mean() == pytest.approx(3.0)  # 1/q


def test_m3_free_part_matches_shifted_scipy_exponential() -> None:
    """For t >= Delta the M3 survival is alpha times a shifted exponential's (scipy.stats.expon, loc = Delta)."""
    m3 = CowanM3(1500 / 3600, 1.2, 0.55)
    t = np.linspace(1.2, 15.0, 30)
    assert np.allclose(m3.survival(t), 0.55 * stats.expon(loc=1.2, scale=1 / m3.decay).sf(t), rtol=1e-12)


def _scalar(model: Exponential | CowanM3) -> Callable[[float], float]:
    return lambda r: float(model.survival(r))


def test_m3_columns_give_every_stream_at_once() -> None:
    """The family form over many streams (parameters as columns) against scipy.stats.expon, stream by stream:
    S(t) = alpha sf(t; loc Delta, scale 1/lambda) beyond Delta, 1 below, and its integral against
    scipy.integrate.quad (general-purpose reference libraries)."""
    from scipy.integrate import quad

    models = [Exponential(0.4), CowanM3.tanner(0.3, 1.0), CowanM3(0.35, 1.5, 0.4)]
    alpha, decay, shift = (np.array(column)[:, None] for column in zip(*(m.m3_form for m in models), strict=True))
    t = np.linspace(0.0, 12.0, 25)
    survival, integral = m3_survival(t, alpha, decay, shift), m3_survival_integral(t, alpha, decay, shift)
    for row, m in enumerate(models):
        a, lam, d = m.m3_form
        reference = np.where(t < d, 1.0, a * stats.expon(loc=d, scale=1 / lam).sf(t))
        assert np.allclose(survival[row], reference, rtol=1e-12)
        assert np.allclose(survival[row], m.survival(t), rtol=1e-12)
        by_quad = [quad(_scalar(m), 0.0, x, points=[d] if 0 < d < x else None)[0] for x in t]
        assert np.allclose(integral[row], by_quad, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("model", [Exponential(0.4), CowanM3.tanner(0.4, 1.0), CowanM3(0.35, 1.5, 0.4)])
def test_sampling_matches_survival(model: Exponential | CowanM3) -> None:
    """Sampled headways follow the survival function: one-sample Kolmogorov-Smirnov distance below 0.01
    for 200,000 draws (the 1 % critical value is about 0.0036; mean within 1 %)."""
    sample = model.sample(np.random.default_rng(7), 200_000)
    grid = np.linspace(0.0, 20.0, 401)
    empirical = np.array([(sample > t).mean() for t in grid])
    assert np.max(np.abs(empirical - model.survival(grid))) < 0.01
    assert sample.mean() == pytest.approx(model.mean(), rel=0.01)


@pytest.mark.parametrize(("flow", "gap"), [(0.1, 4.0), (0.2, 6.0), (0.4, 8.0)])
def test_adams_formula_and_renewal_form_agree(flow: float, gap: float) -> None:
    """Adams (1936): w = (e^{qT} - 1)/q - T, by hand; the renewal-theory form must reduce to it."""
    by_hand = (math.exp(flow * gap) - 1) / flow - gap
    assert adams_wait(flow, gap) == pytest.approx(by_hand, rel=1e-12)
    assert mean_wait(Exponential(flow), gap) == pytest.approx(by_hand, rel=1e-8)


def test_m3_wait_against_simulation() -> None:
    """Mean wait in an M3 stream for a gap >= 6 s: simulate random arrivals in a long headway sequence
    (the driver may take the lag) and compare; 2 % for 20,000 arrivals over 400,000 headways."""
    m3 = CowanM3.tanner(1000 / 3600, 1.2)
    rng = np.random.default_rng(11)
    h = m3.sample(rng, 400_000)
    ends = np.cumsum(h)
    starts = ends - h
    arrivals = rng.uniform(0, ends[-1] * 0.99, 20_000)
    good_starts = starts[h >= 6.0]
    # the lag counts: if the headway in progress ends 6 s or more after arrival, no wait
    index = np.searchsorted(ends, arrivals)
    lag_ok = ends[index] - arrivals >= 6.0
    next_good = good_starts[np.searchsorted(good_starts, arrivals)]
    waits = np.where(lag_ok, 0.0, next_good - arrivals)
    # a lag shorter than 6 s is never followed by acceptance of its remainder, so the next good gap starts later
    waits = np.where(lag_ok, 0.0, np.maximum(waits, ends[index] - arrivals))
    assert mean_wait(m3, 6.0) == pytest.approx(waits.mean(), rel=0.02)


def test_unknown_headway_model_lists_valid_ones() -> None:
    with pytest.raises(KeyError, match="valid models: exponential, m3"):
        headway_model("poisson-gamma", 0.3)


def test_m3_refuses_impossible_parameters() -> None:
    with pytest.raises(ValueError, match="minimum headway times the flow"):
        CowanM3(0.6, 2.0, 0.5)


@pytest.mark.parametrize("model", [Exponential(0.35), CowanM3.tanner(0.3, 1.2), CowanM3(0.4, 0.8, 0.5)])
def test_survival_integrals_match_quadrature(model: Exponential | CowanM3) -> None:
    """The closed-form integrals of S and r S (used by the wait formula) against scipy.integrate.quad."""
    from scipy.integrate import quad

    for t in (0.3, 1.0, 2.5, 7.0, 15.0):
        points = [b for b in model.breakpoints if 0 < b < t] or None
        area, _ = quad(lambda r: float(model.survival(r)), 0, t, points=points)
        moment, _ = quad(lambda r: r * float(model.survival(r)), 0, t, points=points)
        assert float(model.survival_integral(t)) == pytest.approx(area, rel=1e-9)
        assert float(model.survival_moment(t)) == pytest.approx(moment, rel=1e-9)
