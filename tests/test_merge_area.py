"""Merge-area operations (HCM chapter 14) and the queue when the merge breaks down."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest

from mergecheck.assessment import assess
from mergecheck.merge_area import level_of_service, merge_area, merge_influence_share, passenger_car_flow
from mergecheck.narrative import assumptions
from mergecheck.shockwave import Triangular, queue_history, shock_speed
from mergecheck.units import parse_quantity


def test_guidebook_case_four_lanes(cli: Any) -> None:
    """HCM Applications Guidebook, Case 4 Problem 2 (REFERENCES.md section 6, CONFIRMED): 4 lanes per
    direction, vF 1109, vR 848 pc/h, LA 500 ft, FFS 55, ramp FFS 45 mph: PFM 0.24, v12 261, vR12 1109,
    DR 10.6, LOS B. Checked to the rounding shown.

    The Guidebook works the HCM 2000 method, which had no lane-distribution checks; the later editions'
    check (outer lanes at most 1.5 times the average of lanes 1 and 2, FROM MEMORY) binds here: by hand
    v12 = 1109 / 2.5 = 443.6, DR = 5.475 + 6.224 + 3.460 - 3.135 = 12.02, still LOS B."""
    run = cli("merge-area", "--lanes", "4", "--mainline-flow", "1109 pc/h", "--ramp-flow", "848 pc/h",
              "--accel-length", "500 ft", "--ffs", "55 mph", "--ramp-ffs", "45 mph", "--json")  # fmt: skip
    assert run.code == 0, run.stderr
    doc = run.json()
    assert round(doc["p_fm"], 2) == 0.24
    assert round(1109 * doc["p_fm"]) == 261  # the Guidebook's v12, before the check
    density_without_check = 5.475 + 0.00734 * 848 + 0.0078 * 1109 * doc["p_fm"] - 0.00627 * 500
    assert round(density_without_check, 1) == 10.6 and round(1109 * doc["p_fm"] + 848) == 1109  # vR12
    assert doc["v12_pc_h"] == pytest.approx(443.6) and doc["v12_raised_by"]
    assert doc["density_pc_mi_ln"] == pytest.approx(12.02, abs=0.005)
    assert doc["los"] == "B"


def test_guidebook_case_three_lanes(cli: Any) -> None:
    """Same example, 3 lanes per direction, vF 5333, vR 2111 pc/h: PFM 0.59, v12 3154, vR12 5265 (above
    4600), DR 42.5, LOS F since the downstream demand 7444 exceeds 3 x 2250 = 6750 pc/h. DR is 42.44 with
    unrounded intermediate values; the published 42.5 allows 0.1 for the example's rounding."""
    run = cli("merge-area", "--lanes", "3", "--mainline-flow", "5333 pc/h", "--ramp-flow", "2111 pc/h",
              "--accel-length", "500 ft", "--ffs", "55 mph", "--ramp-ffs", "45 mph", "--json")  # fmt: skip
    doc = run.json()
    assert round(doc["p_fm"], 2) == 0.59
    assert round(doc["v12_pc_h"]) == 3154
    assert round(doc["vr12_pc_h"]) == 5265
    assert doc["density_pc_mi_ln"] == pytest.approx(42.5, abs=0.1)
    assert doc["los"] == "F"
    checks = {c["check"]: c for c in doc["capacity_checks"]}
    assert checks["through lanes past the merge"]["demand_pc_h"] == pytest.approx(7444)
    assert checks["through lanes past the merge"]["capacity_pc_h"] == pytest.approx(6750)
    assert checks["into the merge zone (lanes 1 and 2 with the ramp)"]["exceeded"] is True


def test_issue_example_command(cli: Any) -> None:
    """The issue's example: 3 lanes, 4000 + 1000 pc/h, 800 ft, 55/45 mph. PFM = 0.5775 + 0.000028 x 800
    = 0.5999; DR = 5.475 + 7.34 + 0.0078 x 2399.6 - 5.016 = 26.52 pc/mi/ln, LOS C (by hand)."""
    doc = cli("merge-area", "--lanes", "3", "--mainline-flow", "4000 pc/h", "--ramp-flow", "1000 pc/h",
              "--accel-length", "800 ft", "--ffs", "55 mph", "--ramp-ffs", "45 mph", "--json").json()  # fmt: skip
    assert doc["p_fm"] == pytest.approx(0.5999)
    assert doc["density_pc_mi_ln"] == pytest.approx(5.475 + 7.34 + 0.0078 * 2399.6 - 0.00627 * 800, rel=1e-6)
    assert doc["los"] == "C"


def test_pc_is_a_passenger_car_not_a_parsec() -> None:
    assert parse_quantity("1800 pc/h", "flow", source="test", field="flow") == pytest.approx(0.5)


def test_veh_flows_are_converted(cli: Any) -> None:
    """10 % heavy vehicles on level terrain (E_T 2.0), PHF 0.9: 1000 veh/h = 1000 x 1.1 / 0.9 pc/h (HCM f_HV)."""
    assert passenger_car_flow(1000, 0.10, 2.0, 0.9) == pytest.approx(1000 * 1.1 / 0.9)
    doc = cli("merge-area", "--lanes", "2", "--mainline-flow", "1000 veh/h", "--ramp-flow", "500 pc/h",
              "--accel-length", "800 ft", "--ffs", "65 mph", "--ramp-ffs", "40 mph",
              "--heavy-vehicles", "0.1", "--phf", "0.9", "--json").json()  # fmt: skip
    assert doc["mainline_pc_h"] == pytest.approx(1000 * 1.1 / 0.9)
    assert doc["ramp_pc_h"] == pytest.approx(500)
    assert doc["p_fm"] == 1.0  # two lanes per direction


@pytest.mark.parametrize(
    ("density", "los"),
    [
        (0.0, "A"),
        (10.0, "A"),
        (10.01, "B"),
        (20.0, "B"),
        (20.01, "C"),
        (28.0, "C"),
        (28.01, "D"),
        (35.0, "D"),
        (35.01, "E"),
        (60.0, "E"),
    ],
)
def test_level_of_service_boundaries(density: float, los: str) -> None:
    """LOS A <= 10, B <= 20, C <= 28, D <= 35, E > 35 pc/mi/ln (HCM ch. 14; REFERENCES.md section 6)."""
    assert level_of_service(density, False) == los
    assert level_of_service(density, True) == "F"


def test_eight_lane_share_has_no_flow_condition() -> None:
    """HCM Eq. 14-4 (REFERENCES.md section 6, CONFIRMED): P_FM = 0.2178 - 0.000125 vR + 0.01115 LA/SFR. The
    'last term dropped when vF/SFR > 72' condition was not confirmed and is gone; P_FM no longer takes vF."""
    assert merge_influence_share(4, 500, 1000, 45) == pytest.approx(0.2178 - 0.000125 * 500 + 0.01115 * 1000 / 45)


def test_four_lane_outer_lanes_are_held_to_the_checks(cli: Any) -> None:
    """Issue 17's case, by hand with the manual's lane-distribution checks (HCM 6th ed. Eqs. 14-12 to 14-14, FROM
    MEMORY): 4 lanes, vF 6000, vR 1000 pc/h, LA 1000 ft, SFR 45 mph. P_FM 0.3406 gives v12 2044 and 1978 pc/h/ln
    in lanes 3-4, above 1.5 x 2044/2 = 1533: v12 = 6000/2.5 = 2400; DR = 5.475 + 7.34 + 18.72 - 6.27 = 25.27
    pc/mi/ln, LOS C. Without the checks the method left 2,700 pc/h/ln in the outer lanes (v12 557, LOS B)."""
    doc = cli("merge-area", "--lanes", "4", "--mainline-flow", "6000 pc/h", "--ramp-flow", "1000 pc/h",
              "--accel-length", "1000 ft", "--ffs", "65 mph", "--ramp-ffs", "45 mph", "--json").json()  # fmt: skip
    assert doc["v12_pc_h"] == pytest.approx(2400.0, abs=0.01)
    assert doc["density_pc_mi_ln"] == pytest.approx(25.265, abs=0.001) and doc["los"] == "C"
    assert doc["v12_raised_by"] == "outer lanes at most 1.5 times the average of lanes 1 and 2"


def test_three_lane_outer_lane_capped_at_2700() -> None:
    """By hand: 3 lanes, vF 7000, vR 500 pc/h, LA 500 ft: P_FM 0.5915, v12 4140.5 leaves 2859.5 pc/h in lane 3,
    over the 2,700 pc/h/ln cap (and under 1.5 x 4140.5/2 = 3105): v12 = 7000 - 2700 = 4300 pc/h."""
    area = merge_area(lanes=3, mainline_pc_h=7000, ramp_pc_h=500, acceleration_length_ft=500,
                      free_flow_speed_mph=65, ramp_free_flow_speed_mph=45)  # fmt: skip
    assert area.v12_pc_h == pytest.approx(4300.0) and area.lane_distribution == "outer lanes at most 2700 pc/h/ln"


def test_checks_leave_a_reasonable_distribution_alone() -> None:
    """The Guidebook's 3-lane case (vF 5333): lane 3 carries 2179 pc/h, under both rules: v12 stays vF P_FM."""
    area = merge_area(lanes=3, mainline_pc_h=5333, ramp_pc_h=2111, acceleration_length_ft=500,
                      free_flow_speed_mph=55, ramp_free_flow_speed_mph=45)  # fmt: skip
    assert area.v12_pc_h == pytest.approx(5333 * (0.5775 + 0.000028 * 500)) and area.lane_distribution == ""


def test_five_lane_direction_takes_lane_five_off_first(cli: Any) -> None:
    """Five lanes (HCM lane-5 shares, FROM MEMORY: 0.160 of vF from 6,500 to 7,499 pc/h), by hand: vF 7000 leaves
    1120 pc/h in lane 5; the 8-lane method on 5880 pc/h gives v12 2002.6 and 1938.7 pc/h/ln in lanes 3-4, above
    1.5 x 2002.6/2: v12 = 5880/2.5 = 2352 pc/h. Before, a five-lane direction had no merge-area result at all."""
    doc = cli("merge-area", "--lanes", "5", "--mainline-flow", "7000 pc/h", "--ramp-flow", "1000 pc/h",
              "--accel-length", "1000 ft", "--ffs", "65 mph", "--ramp-ffs", "45 mph", "--json").json()  # fmt: skip
    assert doc["lane_5_pc_h"] == pytest.approx(1120.0) and doc["v12_pc_h"] == pytest.approx(2352.0)


def test_one_lane_direction_says_why_there_is_no_merge_area(cli: Any, repo: Path, tmp_path: Path) -> None:
    """The manual's merge method covers 2 to 5 lanes in one direction: one lane is refused on the command line
    and, in a site check, named in the assumptions instead of leaving the section out silently."""
    run = cli("merge-area", "--lanes", "1", "--mainline-flow", "1000 pc/h", "--ramp-flow", "500 pc/h",
              "--accel-length", "800 ft", "--ffs", "65 mph", "--ramp-ffs", "45 mph")  # fmt: skip
    assert run.code == 2 and "--lanes" in run.stderr and "2 to 5 lanes" in run.stderr
    site = (repo / "examples" / "willowmere-level.yaml").read_text().replace("lanes: 2", "lanes: 1")
    site = site.replace("adjacent_lane_flow: 500 veh/h", "adjacent_lane_flow: 500 veh/h").replace(
        "1500 veh/h", "900 veh/h"
    )
    path = tmp_path / "one-lane.yaml"
    path.write_text(site)
    doc = cli("check", path, "--json").json()
    assert doc["merge_area"] is None
    (note,) = [a for a in doc["assumptions"] if a["name"] == "Merge-area method"]
    assert note["value"].startswith("not applied: 1 lane")


def test_equations_outside_their_range_are_not_applied(cli: Any, make_site: Any) -> None:
    """P_FM is a share of the mainline flow and D_R a density: where the fitted equations leave 0 to 1 and
    0 and above, the method does not apply. Four lanes, v_R 50 pc/h, L_A 1,500 m = 4,921 ft, S_FR 80 km/h =
    49.7 mi/h: Eq. 14-4 gives 0.2178 - 0.00625 + 0.01115 x 4921 / 49.71 = 1.315 (by hand; HCM 6th ed., equation
    as in the module docstring). Before, the command printed it and a density clipped to 0."""
    run = cli("merge-area", "--lanes", "4", "--mainline-flow", "100 pc/h", "--ramp-flow", "50 pc/h",
              "--accel-length", "1500 m", "--ffs", "120 km/h", "--ramp-ffs", "80 km/h")  # fmt: skip
    assert run.code == 2 and "P_FM 1.315, outside 0 to 1" in run.stderr
    # three lanes, 1,000 m = 3,281 ft of lane plus taper at light flows: Eq. 14-22 goes below 0, by hand
    # 5.475 + 0.00734 x 106 + 0.0078 x 214 - 0.00627 x 3281 = -12.6 (v_R, v12 in pc/h with the PHF 0.94)
    light = make_site(
        mainline={"design_speed": "100 km/h", "lanes": 3, "adjacent_lane_flow": "100 veh/h", "flow": "300 veh/h"},
        ramp__flow="100 veh/h", geometry__lane_length="910 m",
    )  # fmt: skip
    assessment = assess(light)
    assert assessment.merge_area is None
    assert assessment.merge_area_not_applied.startswith("Eq. 14-22 gives an influence-area density of -12.6")
    (note,) = [a for a in assumptions(assessment) if a.name == "Merge-area method"]
    assert note.value.startswith("not applied: Eq. 14-22")


def test_queue_states_off_any_flow_density_relation_are_refused(cli: Any) -> None:
    """Two states 0.0003 veh/km apart whose flows differ by 400 veh/h would put the shock at -1.3 million km/h
    (w = dq / dk); no concave flow-density relation through the origin holds both (kinematic-wave theory:
    a chord is no steeper than the lower-density state's speed). Before, it printed a 6,000 km queue."""
    run = cli("queue", "--arrive", "4000 veh/h", "--arrive-density", "40 veh/km", "--discharge", "3600 veh/h",
              "--discharge-density", "40.0003 veh/km")  # fmt: skip
    assert run.code == 2 and "cannot lie on one flow-density relation" in run.stderr


def test_shock_speed_hand_computation(cli: Any) -> None:
    """Invented case, by hand: 1800 veh/h at 90 km/h (20 veh/km) meets a queue discharging 1200 veh/h at
    80 veh/km; w = (1200 - 1800)/(80 - 20) = -10 km/h; the queue gains 600 veh/h and reaches 5 km in 30 min."""
    run = cli("queue", "--arrive", "1800 veh/h", "--arrive-speed", "90 km/h", "--discharge", "1200 veh/h",
              "--discharge-density", "80 veh/km", "--duration", "30 min", "--json")  # fmt: skip
    assert run.code == 0, run.stderr
    doc = run.json()
    assert doc["shock_speed_m_s"] == pytest.approx(-10 / 3.6, rel=1e-6)
    assert doc["queue_growth_veh_h"] == pytest.approx(600)
    assert doc["queue_length_m"] == pytest.approx(5000, rel=1e-6)


def test_queue_command_bad_input(cli: Any) -> None:
    run = cli(
        "queue",
        "--arrive",
        "1800 veh/h",
        "--arrive-speed",
        "90 km/h",
        "--discharge",
        "1200",
        "--discharge-density",
        "80 veh/km",
    )
    assert run.code == 2 and "--discharge" in run.stderr


@pytest.mark.parametrize(
    "profile",
    [
        [(3600.0, 1900.0), (3600.0, 900.0)],
        [(1800.0, 2100.0), (900.0, 1500.0), (1800.0, 2000.0), (7200.0, 600.0)],
    ],
)
def test_queue_conserves_vehicles(profile: list[tuple[float, float]]) -> None:
    """Vehicles that entered the queue equal those discharged plus those stored, at every time."""
    road = Triangular(free_flow_speed=100 / 3.6, capacity=2 * 2200 / 3600, jam_density=2 * 0.12)
    queued = road.congested(1400 / 3600)
    periods = [(duration, road.free(flow / 3600)) for duration, flow in profile]
    history = queue_history(periods, queued, step=5.0)
    assert np.allclose(history.entered, history.discharged + history.stored, atol=1e-6)
    assert np.all(history.length >= 0)


def test_queue_clearing_time_by_hand() -> None:
    """One hour at 1900 veh/h against 1400 veh/h discharge, then 900 veh/h: the back moves up at |w1| for an hour,
    then back down at w2; it clears at 3600 (1 + |w1|/w2) s (kinematic-wave theory, by hand)."""
    road = Triangular(free_flow_speed=100 / 3.6, capacity=2 * 2200 / 3600, jam_density=2 * 0.12)
    queued = road.congested(1400 / 3600)
    rush, after = road.free(1900 / 3600), road.free(900 / 3600)
    w1, w2 = shock_speed(rush, queued), shock_speed(after, queued)
    history = queue_history([(3600.0, rush), (4 * 3600.0, after)], queued, step=1.0)
    assert history.clears_at == pytest.approx(3600 * (1 - w1 / w2), rel=1e-6)
    assert history.length.max() == pytest.approx(-w1 * 3600, rel=1e-6)


def test_flow_density_relation_is_consistent() -> None:
    """Both branches of the triangular relation carry the flow asked for (Newell 1993)."""
    tri = Triangular(free_flow_speed=30.0, capacity=0.6, jam_density=0.12)
    for flow in (0.1, 0.3, 0.55):
        congested = tri.congested(flow)
        assert congested.flow == pytest.approx(tri.wave_speed * (tri.jam_density - congested.density))
        assert tri.free(flow).speed == pytest.approx(30.0)


def test_site_merge_area_and_breakdown(cli: Any, repo: Path) -> None:
    """The constrained example breaks down: check --json carries the merge-area object with the queue figures."""
    doc = cli("check", repo / "examples" / "harbour-street-constrained.yaml", "--json").json()
    area = doc["merge_area"]
    for key in ("demand_pc_h", "capacity_pc_h", "density_pc_mi_ln", "density_pc_km_ln", "los", "breaks_down"):
        assert key in area
    assert area["breaks_down"] is True and area["los"] == "F"
    assert area["shock_speed_m_s"] < 0 and area["queue_growth_veh_h"] > 0
    # The peak-hour factor applies to the peak 15 minutes only (HCM: V/PHF is a 15-minute rate). The hourly
    # demand, 0.94 x 7245.5 = 6811 pc/h, is below the 6871 pc/h downstream capacity: the queue that the peak
    # 15 minutes build clears within the hour. Before, the peak rate was held all hour and the queue reached 7.7 km.
    assert area["queue_growth_veh_h"] > 0 and area["queue_clears_after_s"] < 3600
    assert area["queue_length_m_after_1h"] == 0.0
    assert area["acceleration_length_m"] == pytest.approx(150 + 75)  # the manual's L_A includes the taper
    fine = cli("check", repo / "examples" / "willowmere-level.yaml", "--json").json()["merge_area"]
    assert fine["breaks_down"] is False and "shock_speed_m_s" not in fine


def test_slow_trucks_cost_capacity(cli: Any, repo: Path) -> None:
    """Trucks crawling on the upgrade count for more passenger cars than on the level (speed-ratio equivalent)."""
    area = cli("check", repo / "examples" / "quarry-hill-upgrade.yaml", "--json").json()["merge_area"]
    # 2.0 is the level-terrain truck equivalent (HCM, REFERENCES.md section 6, CONFIRMED)
    assert area["ramp_equivalents"]["semitrailer-design"] > area["ramp_equivalents"]["semitrailer-fleet"] > 2.0
    assert area["capacity_lost_to_slow_trucks_pc_h"] > 0


def test_demand_profile_times_the_clearing(cli: Any, repo: Path, tmp_path: Path) -> None:
    """The lower the demand after the peak, the sooner the queue clears (kinematic waves move faster). A profile
    the user gives is taken as shares of the hourly volume, without the peak-hour factor: an hour at 1.1 of it
    exceeds the downstream capacity."""
    import yaml

    clears = []
    for share in (0.8, 0.6, 0.4):
        site = yaml.safe_load((repo / "examples" / "harbour-street-constrained.yaml").read_text())
        site["policy"] = str(repo / "examples" / "agency-policy-table.yaml")
        site["merge_area"] = {
            "demand_profile": [{"duration": "1 h", "share": 1.1}, {"duration": "5 h", "share": share}]
        }
        site_file = tmp_path / "site.yaml"
        site_file.write_text(yaml.safe_dump(site))
        area = cli("check", site_file, "--json").json()["merge_area"]
        clears.append(area["queue_clears_after_s"])
    assert all(c is not None and c > 3600 for c in clears)
    assert clears[0] > clears[1] > clears[2]
    site["merge_area"] = {"demand_profile": [{"duration": "1 kg", "share": 1.0}]}
    site_file.write_text(yaml.safe_dump(site))
    bad = cli("check", site_file)
    assert bad.code == 2 and "merge_area.demand_profile.0.duration" in bad.stderr


def test_queue_accepts_a_full_closure(cli: Any) -> None:
    """By hand (issue 17's case): 1,800 veh/h at 90 km/h (20 veh/km) stopped by a full closure, jam density
    150 veh/km: w = -1800/130 = -13.846 km/h; after one hour the queue is 13,846 m long and holds
    150 x 13.846 = 2,077 vehicles, all of which joined it, 1,800 more than the same road held before."""
    doc = cli("queue", "--arrive", "1800 veh/h", "--arrive-speed", "90 km/h", "--discharge", "0 veh/h",
              "--discharge-density", "150 veh/km", "--duration", "1 h", "--json").json()  # fmt: skip
    assert doc["shock_speed_m_s"] * 3.6 == pytest.approx(-1800 / 130, rel=1e-6)  # JSON keeps 6 decimals
    assert doc["queue_length_m"] == pytest.approx(13846.154, abs=1e-3)
    assert doc["vehicles_joined_queue"] == pytest.approx(150 * 1800 / 130, abs=1e-3)  # JSON keeps 3 decimals
    assert doc["vehicles_in_excess"] == pytest.approx(1800.0, abs=1e-3)
    refused = cli("queue", "--arrive", "1800 veh/h", "--arrive-speed", "90 km/h", "--discharge", "0 veh/h",
                  "--discharge-speed", "5 km/h", "--duration", "1 h")  # fmt: skip
    assert refused.code == 2 and "--discharge" in refused.stderr
