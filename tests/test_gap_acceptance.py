"""Merge probability: the renewal computation against Monte Carlo, closed forms and monotone behaviour."""

from __future__ import annotations

import itertools
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, stats

from mergecheck.assessment import assess
from mergecheck.critical_gaps import CriticalGap
from mergecheck.headways import CowanM3, Exponential
from mergecheck.merge_reliability import MergeSetting, merge_reliabilities, merge_reliability
from mergecheck.renewal import not_merged, simulate_merges, solve_renewals
from mergecheck.site import load_site
from mergecheck.stream_time import stream_time

CAR = CriticalGap(3.0, 0.8)
TAU = np.array([0.0, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0, 32.0])


@pytest.mark.parametrize(
    "headways",
    [
        Exponential(600 / 3600),
        Exponential(1400 / 3600),
        CowanM3.tanner(1000 / 3600, 1.0),
        CowanM3.tanner(1800 / 3600, 1.2),
    ],
    ids=["exp-600", "exp-1400", "m3-1000", "m3-1800"],
)
def test_analytic_agrees_with_monte_carlo(headways: Exponential | CowanM3) -> None:
    """Monte Carlo with 100,000 drivers, seeded. Tolerance 0.008: four standard errors (at most 0.0016)
    plus the analytic grid's known bias (a residual is counted as passed at the end of its 0.05 s cell,
    so the analytic curve is at most one cell late: conservative)."""
    analytic = 1 - not_merged(headways, CAR, TAU)
    merged_at = simulate_merges(headways, CAR, 100_000, float(TAU[-1]), np.random.default_rng(2024))
    simulated = np.array([(merged_at <= t).mean() for t in TAU])
    assert np.max(np.abs(analytic - simulated)) < 0.008


def test_first_gap_is_length_biased() -> None:
    """At tau = 0 the driver is beside a length-biased gap: P(accept) = E[e^{-qT}(1 + qT)] over the
    log-normal critical gap (inspection paradox; integrated independently with scipy.integrate.quad)."""
    q = 1400 / 3600
    mu, sigma = CAR.log_parameters
    density = stats.lognorm(sigma, scale=math.exp(mu)).pdf
    expected, _ = integrate.quad(lambda t: density(t) * math.exp(-q * t) * (1 + q * t), 0, 60)
    assert 1 - float(not_merged(Exponential(q), CAR, np.array([0.0]))[0]) == pytest.approx(expected, abs=2e-4)


def test_fixed_critical_gap_mean_merge_time() -> None:
    """A consistent driver (sd 0) in random traffic, T = 4 s, q = 0.3 veh/s. Mean stream time to merge from
    a length-biased start: E = int_0^T r w(r) dr + P(reject first) E[h; h < T] / e^{-qT}, w(r) = q(e^{-qr} - e^{-qT})
    (renewal argument; integrated with scipy.integrate.quad). The integral of P_not over tau must equal it."""
    q, t_c = 0.3, 4.0
    p = math.exp(-q * t_c)
    w = lambda r: q * (math.exp(-q * r) - p)  # noqa: E731
    lag, _ = integrate.quad(lambda r: r * w(r), 0, t_c)
    reject_first, _ = integrate.quad(w, 0, t_c)
    short, _ = integrate.quad(lambda h: h * q * math.exp(-q * h), 0, t_c)
    expected = lag + reject_first * short / p
    tau = np.linspace(0, 200, 4001)
    p_not = not_merged(Exponential(q), CriticalGap(t_c, 0.0), tau, step=0.01)
    assert np.trapezoid(p_not, tau) == pytest.approx(expected, rel=5e-3)


def test_monotone_in_flow_gap_and_time() -> None:
    """More flow or a longer critical gap: lower probability; more stream time (a longer lane): higher."""
    tau = np.linspace(0, 30, 61)
    flows = [400, 800, 1200, 1600]
    curves = [1 - not_merged(CowanM3.tanner(f / 3600, 1.0), CAR, tau) for f in flows]
    for low, high in itertools.pairwise(curves):
        assert np.all(high <= low + 1e-12)
    gaps = [CriticalGap(m, 0.8) for m in (2.5, 3.0, 4.0, 5.0)]
    curves = [1 - not_merged(Exponential(0.3), g, tau) for g in gaps]
    for low, high in itertools.pairwise(curves):
        assert np.all(high <= low + 1e-12)
    for curve in curves:
        assert np.all(np.diff(curve) >= -1e-12) and np.all((curve >= 0) & (curve <= 1))


def test_stream_time_constant_speeds_closed_form() -> None:
    """Moving observer at constant speed v_r in a stream at v_m: tau = L (v_m - v_r) / (v_m v_r)."""
    x = np.linspace(0.0, 400.0, 401)
    tau = stream_time(x, np.full_like(x, 20.0), 30.0, 1.0, 100.0, 40.0)
    assert tau[-1] == pytest.approx(300.0 * 10.0 / (30.0 * 20.0))
    assert np.all(tau[x < 100.0] == 0.0)
    matched = stream_time(x, np.full_like(x, 30.0), 30.0, 4.0, 0.0, 40.0)
    assert matched[-1] == pytest.approx(400.0 * 4.0 / (30.0 * 30.0))  # the search speed keeps gaps passing


def test_reliability_consequences() -> None:
    """Forced merges and stops are the class flow times the probabilities (issue 4)."""
    x = np.linspace(0.0, 1500.0, 1501)
    speed = np.minimum(15.0 + 0.03 * x, 26.0)
    result, curves = merge_reliability(
        x,
        speed,
        convergence=100.0,
        lane_end=350.0,
        taper_end=440.0,
        stream_speed=28.0,
        merge_speed=26.0,
        minimum_merge_speed=20.0,
        search_speed=4.0,
        headways=CowanM3.tanner(1200 / 3600, 1.0),
        critical_gap=CAR,
        stop_critical_gap=CriticalGap(8.0, 1.5),
        reliability=0.95,
        flow=300 / 3600,
    )
    # 15 + 0.03 x = 20 m/s at x = 166.67 m (by hand); between 1 m samples the crossing is interpolated in v^2
    assert result.eligible_station == pytest.approx(500.0 / 3.0, abs=1e-3)
    assert 0 < result.by_lane_end <= result.by_taper_end < 1
    assert result.stops_per_h == pytest.approx(300 * (1 - result.by_taper_end))
    assert result.forced_merges_per_h == pytest.approx(300 * (result.by_taper_end - result.by_lane_end))
    assert result.length_for_reliability is not None
    assert float(
        np.interp(100.0 + result.length_for_reliability, curves.site.station, curves.site.probability)
    ) == pytest.approx(0.95, abs=1e-3)
    assert result.mean_stopped_wait > 0


@pytest.mark.parametrize(
    ("flow", "lane"),
    [("600 veh/h", "150 m"), ("1400 veh/h", "300 m"), ("1800 veh/h", "600 m")],
)
def test_site_analytic_agrees_with_simulation_along_trajectories(
    repo: Path, tmp_path: Path, flow: str, lane: str
) -> None:
    """The site check's analytic merge probabilities against its Monte Carlo along the same trajectories
    (100,000 drivers): within four standard errors plus 0.004 (the analytic grid's one-cell lateness)."""
    text = (repo / "examples" / "larkspur-road.yaml").read_text()
    text = text.replace("adjacent_lane_flow: 1400 veh/h", f"adjacent_lane_flow: {flow}").replace(
        "lane_length: 300 m", f"lane_length: {lane}"
    )
    site_file = tmp_path / "site.yaml"
    site_file.write_text(text)
    assessment = assess(load_site(str(site_file)), monte_carlo=100_000)
    for result in assessment.vehicles:
        simulated = result.monte_carlo
        assert simulated is not None
        tolerance = 4 * simulated.standard_error + 0.004
        assert result.merge.by_lane_end == pytest.approx(simulated.by_lane_end, abs=tolerance)
        assert result.merge.by_taper_end == pytest.approx(simulated.by_taper_end, abs=tolerance)


def test_longer_lane_gives_higher_merge_probability(repo: Path, tmp_path: Path) -> None:
    text = (repo / "examples" / "larkspur-road.yaml").read_text()
    probabilities = []
    for lane in ("200 m", "300 m", "450 m", "700 m"):
        site_file = tmp_path / "site.yaml"
        site_file.write_text(text.replace("lane_length: 300 m", f"lane_length: {lane}"))
        car = assess(load_site(str(site_file))).vehicles[0]
        probabilities.append(car.merge.by_lane_end)
    assert all(b > a for a, b in itertools.pairwise(probabilities))


def test_fourier_solution_equals_the_direct_recursion() -> None:
    """The damped-FFT solution of the discrete renewal equation (Eqs. 2-3 on the cell grid) equals the
    same equations stepped directly in time, cell by cell. Random arrivals (scipy.stats.expon survival),
    q = 0.3 veh/s, a consistent driver T = 4 s, dt = 0.05 s; agreement to 1e-8."""
    q, t_c, dt = 0.3, 4.0, 0.05
    survival = stats.expon(scale=1 / q).sf
    cells = math.ceil(t_c / dt + 0.5) + 1
    lower = np.maximum((np.arange(cells) - 0.5) * dt, 0.0)
    upper = np.minimum((np.arange(cells) + 0.5) * dt, t_c)
    r = np.where(lower < t_c, survival(lower) - survival(upper), 0.0)
    start = np.arange(cells) * dt
    end = np.maximum(np.minimum(start + dt, t_c), start)
    w = np.concatenate([[0.0], ((survival(start) - survival(end)) / q - survival(t_c) * (end - start)) * q])
    n = 600
    u = np.zeros(n)
    for i in range(n):
        drive = r[i + 1 :].sum()
        u[i] = (drive + sum(r[j] * u[i - j] for j in range(1, min(i, cells - 1) + 1))) / (1.0 - r[0])
    p_not = np.array([sum(w[m] * u[i - m] for m in range(min(i, w.size - 1) + 1)) + w[i + 1 :].sum() for i in range(n)])
    tau = np.arange(n, dtype=np.float64) * dt
    assert np.allclose(not_merged(Exponential(q), CriticalGap(t_c, 0.0), tau, step=dt), p_not, rtol=0, atol=1e-8)


def test_one_solution_serves_several_critical_gaps() -> None:
    """Solving several drivers' distributions and streams together gives each its own solution (to 1e-8)."""
    stream = CowanM3.tanner(1300 / 3600, 1.0)
    truck = CriticalGap(4.0, 1.0)
    other = Exponential(900 / 3600)
    together = solve_renewals([(stream, CAR, 25.0), (stream, truck, 10.0), (other, CAR, 40.0)])
    assert together[0][0] is together[1][0]  # one solution for the stream, to the farthest reach
    tau = np.linspace(0.0, 12.0, 49)
    for (renewal, which), (headways, gap) in zip(together, [(stream, CAR), (stream, truck), (other, CAR)], strict=True):
        alone = not_merged(headways, gap, tau)
        assert np.allclose(renewal.not_merged(tau, which), alone, rtol=0, atol=1e-8)


def test_many_vehicles_at_once_equal_one_at_a_time() -> None:
    """Merge reliability for several vehicles in one pass (issue 6) equals each vehicle alone: different
    streams, an empty adjacent lane, a vehicle that never reaches the minimum merge speed."""
    x = np.arange(0.0, 800.0, 5.0)
    cases = [
        (np.minimum(15.0 + 0.03 * x, 27.0), CowanM3.tanner(1200 / 3600, 1.0), CAR),
        (np.minimum(12.0 + 0.02 * x, 24.0), Exponential(900 / 3600), CriticalGap(4.0, 1.0)),
        (np.minimum(14.0 + 0.04 * x, 26.0), None, CAR),
        (np.full_like(x, 12.0), CowanM3.tanner(1500 / 3600, 1.0), CAR),
    ]
    common = dict(convergence=100.0, lane_end=350.0, taper_end=440.0, stream_speed=28.0, merge_speed=26.0,
                  minimum_merge_speed=20.0, search_speed=4.0, stop_critical_gap=CriticalGap(8.0, 1.5),
                  reliability=0.95, flow=300 / 3600, search_length=1500.0)  # fmt: skip
    settings = [MergeSetting(headways=h, critical_gap=g, **common) for _, h, g in cases]  # type: ignore[arg-type]
    together = merge_reliabilities([x] * len(cases), [v for v, _, _ in cases], settings)
    for (speed, headways, gap), (joint, _) in zip(cases, together, strict=True):
        alone, _ = merge_reliability(x, speed, headways=headways, critical_gap=gap, **common)  # type: ignore[arg-type]
        for field in ("by_lane_end", "by_taper_end", "length_for_reliability", "eligible_station", "stops_per_h"):
            a, b = getattr(joint, field), getattr(alone, field)
            assert (a is None and b is None) or a == pytest.approx(b, rel=1e-9, abs=1e-12), field
