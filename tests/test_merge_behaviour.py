"""The active merge model (mergecheck.merge_behaviour) against its Monte Carlo, its limiting cases, the sanity
properties a reviewer checks first, and published field findings on where drivers merge."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from numpy.typing import NDArray

from mergecheck.assessment import SiteCheck, assess
from mergecheck.critical_gaps import CriticalGap
from mergecheck.headways import CowanM3, Exponential, HeadwayModel
from mergecheck.merge_behaviour import (
    CELL,
    MergeBehaviour,
    Rules,
    _first_rule,
    _refused_lags,
    _Streams,
    rules_along,
    simulate,
    solve,
)
from mergecheck.narrative import summary_sentence
from mergecheck.renewal import not_merged
from mergecheck.site import load_site

FloatArray = NDArray[np.float64]


def positions(result: SiteCheck) -> tuple[float, float, float]:
    """Median, mean and standard deviation of the merge position within the lane, as shares of its length,
    among drivers who merge by the end of the lane."""
    s = result.site
    curve = result.curves[0].merge.site
    x = np.linspace(s.convergence, s.taper_start, 501)
    p = np.interp(x, curve.station, curve.probability) / np.interp(s.taper_start, curve.station, curve.probability)
    share = (x - s.convergence) / s.lane_length
    density = np.diff(p)
    mid = 0.5 * (share[1:] + share[:-1])
    mean = float(np.sum(density * mid))
    return float(np.interp(0.5, p, share)), mean, math.sqrt(float(np.sum(density * (mid - mean) ** 2)))


def _rules(behaviour: MergeBehaviour, flow: float, pressured: bool = True) -> Rules:
    """A car accelerating at 0.6 m/s^2 from 70 km/h beside a 100 km/h stream; 250 m lane, 90 m taper."""
    x = np.arange(0.0, 3000.0, 5.0)
    v = np.sqrt((70 / 3.6) ** 2 + 2 * 0.6 * x)
    _, rules = rules_along(
        x, v, np.full_like(x, 0.6), eligible=0.0, until=340.0, stream_speed=100 / 3.6, merge_speed=92 / 3.6,
        flow=flow, lane_end=250.0, taper_end=340.0, behaviour=behaviour, pressured=pressured,
    )  # fmt: skip
    return rules


@pytest.mark.parametrize("flow", [600, 1500, 2000])
def test_recursion_agrees_with_a_monte_carlo_of_the_same_behaviour(flow: float) -> None:
    """Eqs. (5)-(6) against 100,000 drivers drawn gap by gap (independent code, no grid): within 4 binomial
    standard errors plus 0.003 for the 0.2 s cells, at every cell, with yielding, pressure and forcing on."""
    headways = CowanM3.tanner(flow / 3600, 1.0)
    rules = _rules(MergeBehaviour(), flow / 3600)
    gap = CriticalGap(2.0, 0.5)
    nodes, weights = gap.nodes(8)
    analytic = solve([headways], nodes[None], weights[None], rules)[0, : rules.cells[0]]
    rng = np.random.default_rng(11)
    merged_at = simulate(headways, gap.sample(rng, 100_000), rules, 0, rng)
    cells = np.arange(rules.cells[0]) * CELL
    simulated = np.array([np.mean(merged_at > t + 1e-9) for t in cells])
    error = np.sqrt(simulated * (1 - simulated) / 100_000)
    assert np.all(np.abs(analytic - simulated) <= 4 * error + 0.003)
    assert rules.force_cell[0] < rules.cells[0]  # the lane end lies within the solved range: forcing was checked


def _cell_by_cell(headways: HeadwayModel, tc: float, rules: Rules) -> FloatArray:
    """Eqs. (5)-(6) for one driver node written plainly: the mass of every refused gap carried cell by cell to
    the cell where it ends (the convolution that solve's decaying sum replaces)."""
    n, width = int(rules.cells[0]), 150
    below = 1.0 - headways.survival((np.arange(width) + 0.5) * CELL)  # P(h <= the top of each cell)
    c, a, f, b, p = _first_rule(rules, np.array([[tc]]))
    first = _refused_lags(_Streams.of([headways]), np.arange(width + 1) * CELL, c, a, f, b, p)[0, 0]
    ending = np.zeros(n + 2 * width)
    ending[1 : width + 1] = np.diff(first)
    beside = np.zeros(n)
    for s in range(n):
        need = rules.share[0, s] * tc + rules.closing[0, s]
        least, p_s = min(rules.forced[0, s], need), rules.yielding[0, s]
        cdf = [1.0 - float(headways.survival(t)) for t in (least, need)]
        refused = p_s * np.minimum(below, cdf[0]) + (1 - p_s) * np.minimum(below, cdf[1])
        mass = np.diff(refused, prepend=0.0)
        g = ending[s] / (1.0 - mass[0])
        if s == rules.force_cell[0]:
            left = np.arange(1, width + 1) + 0.5 - rules.forced_lag[0, s] / CELL
            ending[s + 1 : s + width + 1] *= 1.0 - np.clip(left, 0.0, 1.0)
        ending[s + 1 : s + width] += g * mass[1:]
        beside[s] = ending[s + 1 :].sum()
    return beside


@pytest.mark.parametrize(
    "headways", [CowanM3.tanner(1500 / 3600, 1.0), CowanM3(900 / 3600, 0.5, 0.6), Exponential(600 / 3600)], ids=repr
)
def test_the_decaying_sum_carries_refused_gaps_as_the_cell_by_cell_convolution(headways: HeadwayModel) -> None:
    """solve's bookkeeping (one decaying sum over the runs of whole cells, written out cell by cell where the
    lane ends for the forced merges) equals the plain convolution to rounding: least headways of 1, 0.5 and 0 s,
    five driver nodes, yielding, pressure and forcing on."""
    rules = _rules(MergeBehaviour(), headways.flow)
    nodes, weights = CriticalGap(2.5, 0.6).nodes(5)
    ours = solve([headways], nodes[None], weights[None], rules)[0, : rules.cells[0]]
    plain = sum(w * _cell_by_cell(headways, tc, rules) for tc, w in zip(nodes, weights, strict=True))
    assert 0 < rules.force_cell[0] < rules.cells[0]
    np.testing.assert_allclose(ours, plain, rtol=0, atol=1e-12)


def test_without_yielding_pressure_or_speed_adjustment_the_recursion_is_the_classic_renewal() -> None:
    """Limiting case: constant rule (gap >= t_c, whole first gap, no yield, no closing term) reproduces the
    classic model's renewal solution (mergecheck.renewal.not_merged, damped FFT) within 3e-3."""
    headways = CowanM3.tanner(1200 / 3600, 1.0)
    gap = CriticalGap(3.0, 0.8)
    n = 200
    flat = (
        np.zeros(n),
        np.ones(n),
        np.zeros(n),
        np.full(n, 99.0),
        np.zeros(n),
        np.zeros(n),
        np.zeros(n),
        np.array([n + 1]),
    )
    rules = Rules.stack([flat])
    nodes, weights = gap.nodes(8)
    ours = solve([headways], nodes[None], weights[None], rules)[0]
    classic = not_merged(headways, gap, np.arange(n) * CELL)
    assert np.max(np.abs(ours - classic)) < 3e-3


def test_the_classic_model_stays_available(make_site: Any) -> None:
    """merge_model: classic gives the earlier behaviour (no forced merges for a vehicle never eligible)."""
    classic = assess(make_site(gap_acceptance={"merge_model": "classic"}))
    active = assess(make_site())
    assert classic.vehicles[0].merge.model == "classic" and active.vehicles[0].merge.model == "active"
    assert classic.vehicles[0].merge.by_lane_end < active.vehicles[0].merge.by_lane_end


def test_an_empty_adjacent_lane_merges_everyone_where_merging_is_allowed(make_site: Any) -> None:
    result = assess(make_site(mainline__adjacent_lane_flow="0 veh/h")).vehicles[0]
    assert result.merge.by_lane_end == 1.0 and result.merge.stops_per_h == 0.0


def test_near_capacity_many_merges_are_forced_and_few_stop(make_site: Any) -> None:
    """Limiting case: 2,200 veh/h in the adjacent lane (near capacity, HCM basic-lane capacity about
    2,300-2,400 pc/h/ln, REFERENCES.md section 6): forced merges are several per cent of the ramp flow, many
    times those at 600 veh/h, and more of the drivers who find no gap they accept force in than stop."""
    low = assess(make_site(mainline__adjacent_lane_flow="600 veh/h")).vehicles[0].merge
    high = assess(make_site(mainline__adjacent_lane_flow="2200 veh/h")).vehicles[0].merge
    # thresholds (5 % of the ramp flow, five times the free-flow figure): common practice, forced merges being
    # routine near capacity and rare at free flow
    assert high.forced_merges_per_h > 0.05 * 500 and high.forced_merges_per_h > 5 * low.forced_merges_per_h
    assert high.forced_merges_per_h > high.stops_per_h
    assert high.stops_per_h < 0.5 * (500 * (1 - high.by_lane_end))


def test_a_vehicle_closer_to_stream_speed_never_needs_more_length(make_site: Any) -> None:
    """The perverse case of the classic model: a single-unit truck on a -9 % grade reached merge speed in
    59 m yet needed more length for gaps than on +1 %. On the same site, steeper upgrades (a slower truck)
    must never need less."""
    need = []
    for grade in ["-9 %", "-4 %", "0 %", "1 %"]:
        v = assess(make_site(ramp__vehicles={"single-unit-truck": 1.0}, mainline__adjacent_lane_flow="1500 veh/h",
                        geometry__profile=[{"from": "0 m", "grade": grade}])).vehicles[0]  # fmt: skip
        assert v.merge.length_for_reliability is not None
        need.append(v.merge.length_for_reliability)
    assert need == sorted(need)


def test_raising_the_ramp_speed_never_increases_the_length_needed(make_site: Any) -> None:
    """The perverse mitigation of the classic model (raise the controlling speed: bus 192 m to 211 m)."""
    need = []
    for speed in ["40 km/h", "50 km/h", "60 km/h", "70 km/h"]:
        v = assess(make_site(ramp__vehicles={"bus": 1.0}, ramp__controlling_speed=speed)).vehicles[0]
        assert v.merge.length_for_reliability is not None
        need.append(max(v.required_length or 0.0, v.merge.length_for_reliability))
    assert need == sorted(need, reverse=True)


def test_a_vehicle_slower_than_the_stream_needs_a_longer_gap() -> None:
    """Eq. (2): the gap asked for grows with the speed difference to the stream, most for a vehicle that
    accelerates weakly (a loaded truck) (Gipps 1986 safe-gap reasoning)."""
    b = MergeBehaviour()
    x = np.array([0.0, 1000.0])

    def gap_needed(speed_kmh: float, acceleration: float) -> float:
        v = np.full(2, speed_kmh / 3.6)
        _, rules = rules_along(x, v, np.full(2, acceleration), eligible=0.0, until=10.0, stream_speed=100 / 3.6,
                               merge_speed=100 / 3.6, flow=0.3, lane_end=900.0, taper_end=990.0, behaviour=b,
                               pressured=False)  # fmt: skip
        return float(rules.closing[0, 0])  # the closing term; t_c is the same for both

    assert gap_needed(80, 0.6) > gap_needed(92, 0.6) > 0
    assert gap_needed(80, 0.1) > 1.5 * gap_needed(80, 0.6)


def test_merges_at_free_flow_fall_mostly_in_the_first_half_of_the_lane(make_site: Any) -> None:
    """Daamen, Loot and Hoogendoorn (2010), "Empirical analysis of merging behavior at freeway on-ramp",
    TRR 2188, 108-118 (abstract read, CONFIRMED): during free flow most vehicles merge in the first half of
    the acceleration lane; under congestion relatively more merge at its end. Li, Wang, Chen and Li (2007), ATS
    International Journal (abstract read): merges occur mainly near the middle of the lane, and the
    adjacent flow strongly affects the length needed. Checked: the median merge position lies within
    0.15-0.5 of the lane at 600-1500 veh/h (between the start and the middle), and the share of the merges
    made in the last quarter of the lane grows with the adjacent flow."""
    late = []
    for flow in [600, 1000, 1500]:
        result = assess(make_site(mainline__adjacent_lane_flow=f"{flow} veh/h"))
        median, _, _ = positions(result)
        assert 0.15 <= median <= 0.5
        curve, s = result.curves[0].merge.site, result.site
        at = np.interp([s.convergence + 0.75 * s.lane_length, s.taper_start], curve.station, curve.probability)
        late.append((at[1] - at[0]) / at[1])
    assert late == sorted(late) and late[-1] > 1.5 * late[0]


def test_flow_changes_the_spread_of_merge_positions_more_than_their_mean(make_site: Any) -> None:
    """Chu, Miwa and Morikawa (2014), "An analysis of merging maneuvers at urban expressway merging sections",
    Procedia - Social and Behavioral Sciences 138, 105-115 (abstract read, CONFIRMED): traffic conditions do
    not significantly affect the mean merging position but its variation, which grows with mainline
    density. Checked: from 600 to 1,500 veh/h the mean position moves by less than 0.1 of the lane while its
    standard deviation grows."""
    _, mean_low, sd_low = positions(assess(make_site(mainline__adjacent_lane_flow="600 veh/h")))
    _, mean_high, sd_high = positions(assess(make_site(mainline__adjacent_lane_flow="1500 veh/h")))
    assert abs(mean_high - mean_low) < 0.1
    assert sd_high > sd_low


def test_a_lane_of_about_policy_length_works_at_moderate_flow(make_site: Any) -> None:
    """At 1,200 veh/h in the adjacent lane, well below capacity, a level parallel lane of 250 m (about the
    policy length for 100 km/h and a 60 km/h ramp curve, from memory) works in practice: nearly all drivers
    merge by its end and stops at the end of the taper are rare (common practice: ramps built to the policy
    length operate daily at such flows). Checked: at least 95 % by the end of the lane, stops under 2 % of
    the ramp flow, and the length for 95 % within 20 % of the lane provided."""
    v = assess(make_site()).vehicles[0]
    assert v.merge.by_lane_end >= 0.95
    assert v.merge.stops_per_h < 0.02 * 500
    assert v.merge.length_for_reliability is not None and v.merge.length_for_reliability < 1.2 * 250


def test_the_site_check_monte_carlo_agrees_with_the_analytic_figures(make_site: Any) -> None:
    """assess(monte_carlo=N) draws the same behaviour along each vehicle's own trajectory."""
    result = assess(make_site(ramp__vehicles={"passenger-car": 0.8, "semitrailer-fleet": 0.2}), monte_carlo=40_000)
    for v in result.vehicles:
        assert v.monte_carlo is not None
        tolerance = 4 * v.monte_carlo.standard_error + 0.006
        assert v.monte_carlo.by_lane_end == pytest.approx(v.merge.by_lane_end, abs=tolerance)
        assert v.monte_carlo.by_taper_end == pytest.approx(v.merge.by_taper_end, abs=tolerance)


def test_every_report_says_which_behaviour_the_probability_assumes(cli: Any, repo: Any, tmp_path: Any) -> None:
    md, html = tmp_path / "r.md", tmp_path / "r.html"
    run = cli("check", repo / "examples" / "willowmere-level.yaml", "--markdown", md, "--html", html)
    assert run.code == 0
    for text in (run.stdout, md.read_text(encoding="utf-8"), html.read_text(encoding="utf-8")):
        assert "Merge behaviour assumed: drivers pick a gap on the approach" in " ".join(text.split())
    doc = cli("check", repo / "examples" / "willowmere-level.yaml", "--json").json()
    assert {v["merge_model"] for v in doc["vehicles"]} == {"active"}


def test_a_large_monte_carlo_runs_in_batches_and_agrees(make_site: Any, monkeypatch: pytest.MonkeyPatch) -> None:
    """Drivers are drawn a batch at a time (memory bounded whatever the count): with batches of 7,000, 40,000
    drivers are reported in six steps summing to the count, the result is reproducible under its seed, and it
    agrees with the analytic figures as the one-batch run does (4 s.e. + 0.006)."""
    import mergecheck.monte_carlo as monte_carlo

    monkeypatch.setattr(monte_carlo, "MONTE_CARLO_BATCH", 7_000)
    site = make_site(ramp__vehicles={"passenger-car": 1.0})
    steps: list[int] = []
    first = assess(site, monte_carlo=40_000, progress=steps.append).vehicles[0]
    assert steps == [7_000] * 5 + [5_000]
    assert assess(site, monte_carlo=40_000).vehicles[0].monte_carlo == first.monte_carlo
    assert first.monte_carlo is not None
    tolerance = 4 * first.monte_carlo.standard_error + 0.006
    assert first.monte_carlo.by_lane_end == pytest.approx(first.merge.by_lane_end, abs=tolerance)


def test_solving_the_unhurried_curve_in_two_horizons_changes_nothing(
    make_site: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The unhurried curve is first solved over FIRST_CELLS cells and again in full for the rows still short of
    the target: with a first horizon of 10 cells (every row solved twice) the figures are the same."""
    site = make_site(
        mainline__adjacent_lane_flow="1700 veh/h",
        ramp__vehicles={"passenger-car": 0.6, "single-unit-truck": 0.2, "semitrailer-fleet": 0.2},
        geometry__profile=[{"from": "0 m", "grade": "-1 %"}],
    )
    once = assess(site)
    monkeypatch.setattr("mergecheck.merge_reliability.FIRST_CELLS", 10)
    twice = assess(site)
    for a, b in zip(once.vehicles, twice.vehicles, strict=True):
        assert a.merge == b.merge
        assert a.merge.length_for_reliability is not None


def test_stream_times_at_the_lane_and_taper_ends_are_read_from_the_site_curve(make_site: Any) -> None:
    """Both figures are tau of Eq. (1) on the active model's site curve (before, the taper end's came from the
    classic model's stream time: 0 for a vehicle never within the minimum merge speed)."""
    result = assess(make_site(ramp__vehicles={"passenger-car": 0.8, "semitrailer-design": 0.2},
                              geometry__profile=[{"from": "0 m", "grade": "4 %"}]))  # fmt: skip
    for vehicle, lines in zip(result.vehicles, result.curves, strict=True):
        curve, s = lines.merge.site, result.site
        for x, tau in ((s.taper_start, vehicle.merge.stream_time_at_lane_end),
                       (s.taper_end, vehicle.merge.stream_time_at_taper_end)):  # fmt: skip
            assert tau == pytest.approx(float(np.interp(x, curve.station, curve.stream_time)), abs=1e-9)
        assert vehicle.merge.stream_time_at_taper_end > vehicle.merge.stream_time_at_lane_end > 0


def test_a_vehicle_that_never_gets_near_the_stream_speed_merges_only_by_forcing(repo: Path) -> None:
    """Harbour Street (examples): the single-unit truck is still below the minimum merge speed where the lane and
    the taper end, so it never accepts a gap by choice; every merge it makes is forced (the forced rule of the
    module docstring), even where the taper credit puts 'the end of the lane' part way along the taper."""
    site = load_site(str(repo / "examples" / "harbour-street-constrained.yaml"))
    truck = next(v for v in assess(site).vehicles if v.vehicle.id == "single-unit-truck")
    m = truck.merge
    assert m.eligible_station is not None and m.eligible_station > site.taper_end
    assert m.unforced == 0.0 and m.by_lane_end > 0.9  # forced at the end of the full-width lane, in the taper
    flow = truck.share * site.ramp_flow * 3600
    assert m.forced_merges_per_h == pytest.approx(flow * m.by_taper_end, rel=1e-12)
    sentence = summary_sentence(assess(site), "si")  # the truck governs: the reader is told it only forces in
    assert (
        "none of them finds a gap they accept before the full-width lane ends, and 98% force their way in" in sentence
    )


def test_on_a_long_lane_merges_are_by_choice(make_site: Any) -> None:
    """A level 400 m lane at moderate flow: nearly every driver accepts a gap before the lane ends, so the forced
    merges are the small rest of those merged by the end of the taper."""
    m = assess(make_site(geometry__lane_length="400 m", mainline__adjacent_lane_flow="900 veh/h")).vehicles[0].merge
    assert m.unforced > 0.95 and m.unforced <= m.by_taper_end + 1e-12  # common practice: forced merges are rare here
    assert m.forced_merges_per_h == pytest.approx(500 * (m.by_taper_end - m.unforced), abs=1e-9)
