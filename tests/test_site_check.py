"""The site check end to end through the real command line, and the policy lookup."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from mergecheck.assessment import assess
from mergecheck.narrative import assumptions
from mergecheck.policy import load_policy, policy_minimum
from mergecheck.site import load_site
from mergecheck.trajectory import accelerate

MPH, FT = 0.44704, 0.3048


def test_example_level_site_meets(cli: Any, repo: Path) -> None:
    run = cli("check", repo / "examples" / "willowmere-level.yaml", "--json")
    assert run.code == 0, run.stderr
    doc = run.json()
    # the coach governs: its driver uses half its surplus acceleration (vehicle_profiles/bus.yaml)
    assert doc["verdict"] == "meets" and doc["governing_vehicle"] == "bus"
    car = next(v for v in doc["vehicles"] if v["id"] == "passenger-car")
    assert car["required_length_m"] < car["available_length_m"] == 300.0
    assert car["merge_probability_by_lane_end"] >= doc["merge_reliability_target"] == 0.95
    assert car["length_for_reliability_m"] <= car["available_length_m"]
    assert doc["policy"]["minimum_length_m"] > 0 and "from memory" in doc["policy"]["caution"]
    assert len(doc["cautions"]) >= 3 and all(a["source"] for a in doc["assumptions"])


def test_example_truck_upgrade_cannot_reach(cli: Any, repo: Path) -> None:
    """Loaded trucks on a sustained 4-5 % upgrade: crawl speed below merge speed (physically: see test_design_vehicles)."""
    run = cli("check", repo / "examples" / "quarry-hill-upgrade.yaml", "--json")
    assert run.code == 1
    doc = run.json()
    assert doc["verdict"] == "short" and doc["governing_vehicle"] == "semitrailer-design"
    trucks = {v["id"]: v for v in doc["vehicles"]}
    for truck in ("semitrailer-design", "semitrailer-fleet", "single-unit-truck"):
        assert trucks[truck]["verdict"] == "cannot-reach"
        assert trucks[truck]["required_length_m"] is None
        assert trucks[truck]["crawl_speed_m_s"] < trucks[truck]["merge_speed_m_s"]
    assert trucks["semitrailer-design"]["crawl_speed_m_s"] < trucks["semitrailer-fleet"]["crawl_speed_m_s"]


def test_example_constrained_site_is_short_with_agency_table(cli: Any, repo: Path) -> None:
    run = cli("check", repo / "examples" / "harbour-street-constrained.yaml", "--json")
    assert run.code == 1
    doc = run.json()
    assert doc["verdict"] == "short"
    assert "invented" in doc["policy"]["title"]
    # 100 km/h highway, 40 km/h ramp: the cell of the invented example table (checks the lookup, not a standard)
    assert doc["policy"]["minimum_length_m"] == pytest.approx(340.0)
    car = next(v for v in doc["vehicles"] if v["id"] == "passenger-car")
    assert car["available_length_m"] == pytest.approx(150.0 + 0.5 * 75.0)  # half the taper credited
    assert car["verdict"] == "short" and car["required_length_m"] > car["available_length_m"]
    assert car["merge_probability_by_lane_end"] < 0.95
    # the single-unit truck is still below the minimum merge speed at the end of the lane: it never merges at
    # leisure there, but forces in at the lane end (active merge model), and some of it stops
    truck = next(v for v in doc["vehicles"] if v["id"] == "single-unit-truck")
    assert truck["merge_eligible_station_m"] is None or truck["merge_eligible_station_m"] > truck["available_length_m"]
    assert truck["verdict"] in ("short", "cannot-reach") and 0.0 < truck["stops_per_h"] < 0.2 * truck["flow_veh_h"]


def test_issue_minimal_form(cli: Any, repo: Path) -> None:
    run = cli("check", repo / "examples" / "larkspur-road.yaml")
    assert run.code == 1
    assert "Verdict: SHORT" in run.stdout and "semitrailer-design" in run.stdout
    assert "Caution:" in run.stdout and "licensed engineer" in run.stdout
    assert "Finding a gap" in run.stdout and "Stops" in run.stdout


@pytest.mark.parametrize(
    "example", ["willowmere-level", "quarry-hill-upgrade", "harbour-street-constrained", "larkspur-road"]
)
def test_required_length_is_the_trajectory_distance(repo: Path, example: str) -> None:
    """Required length = distance at which an independent run of the integrator reaches merge speed, less the ramp."""
    assessment = assess(load_site(str(repo / "examples" / f"{example}.yaml")))
    site = assessment.site
    for result in assessment.vehicles:
        run = accelerate(
            result.vehicle.model, site.profile, assessment.initial_speed, result.merge_speed, elevation=site.elevation
        )
        if run.distance is None:
            assert result.required_length is None and result.verdict == "cannot-reach"
        else:
            assert result.required_length == pytest.approx(
                max(0.0, run.distance - site.convergence), rel=1e-9, abs=1e-9
            )


def test_units_of_display_do_not_change_results(cli: Any, repo: Path, tmp_path: Path) -> None:
    si = cli("check", repo / "examples" / "larkspur-road.yaml", "--units", "si", "--json").json()
    us = cli("check", repo / "examples" / "larkspur-road.yaml", "--units", "us", "--json").json()
    assert si == us
    text = cli("check", repo / "examples" / "larkspur-road.yaml", "--units", "us").stdout
    assert "mph" in text and "(ft)" in text


def test_markdown_and_json_files(cli: Any, repo: Path, tmp_path: Path) -> None:
    md, js = tmp_path / "report.md", tmp_path / "report.json"
    run = cli("check", repo / "examples" / "harbour-street-constrained.yaml", "--markdown", md, "--json", js)
    assert run.code == 1
    text = md.read_text()
    for heading in (
        "# Acceleration-lane check",
        "## Layout",
        "## Speed along the ramp",
        "## Finding a gap",
        "## Length required and available",
        "| Policy minimum acceleration length |",
        "## Design exception",
        "## Assumptions",
        "## Cautions",
    ):
        assert heading in text
    assert json.loads(js.read_text())["verdict"] == "short"


def test_output_into_missing_folder_writes_nothing(cli: Any, repo: Path, tmp_path: Path) -> None:
    md = tmp_path / "report.md"
    run = cli(
        "check", repo / "examples" / "willowmere-level.yaml", "--markdown", md, "--json", tmp_path / "no" / "r.json"
    )
    assert run.code == 2 and "does not exist" in run.stderr
    assert not md.exists()


def test_schema_command_and_published_copy(cli: Any, repo: Path) -> None:
    run = cli("schema")
    assert run.code == 0
    schema = run.json()
    assert set(schema["required"]) >= {"name", "mainline", "ramp", "geometry"}
    assert "from" in json.dumps(schema)  # the YAML key of a profile point, not the Python name
    assert json.loads((repo / "examples" / "site.schema.json").read_text()) == schema


# --- policy lookup --------------------------------------------------------------------------


def test_bundled_table_reproduces_every_reference_cell(green_book_lengths: list) -> None:  # type: ignore[type-arg]
    """The shipped table against the test copy of the Green Book 2011 table (FROM MEMORY): exact at every cell.

    The reference rows are keyed by the table's initial speed Va'; ramp speed V' = stop, 15, 20, ... 50 mph.
    """
    table = load_policy("us")
    ramp_for_initial = {0: None, 14: 15, 18: 20, 22: 25, 26: 30, 30: 35, 36: 40, 40: 45, 44: 50}
    for cell in green_book_lengths:
        ramp = ramp_for_initial[round(cell.initial_speed / MPH)]
        value = policy_minimum(table, cell.highway_speed_mph * MPH, None if ramp is None else ramp * MPH, 0.0)
        assert value.minimum_length == pytest.approx(cell.length, rel=1e-9)
        assert value.merge_speed == pytest.approx(cell.merge_speed, rel=1e-9)


def test_bilinear_interpolation_by_hand() -> None:
    """Midway between 60 and 65 mph and between ramp speeds 30 and 35 mph:
    mean of 910, 800, 1120, 1000 ft = 957.5 ft (interpolation rule in the table file)."""
    value = policy_minimum(load_policy("us"), 62.5 * MPH, 32.5 * MPH, 0.01)
    assert value.minimum_length == pytest.approx(957.5 * FT, rel=1e-9)


def test_stop_column_and_limits() -> None:
    table = load_policy("us")
    # stop column midway between 65 and 70 mph: (1410 + 1620) / 2 = 1515 ft (Green Book 2011, FROM MEMORY; by hand)
    assert policy_minimum(table, 67.5 * MPH, None, 0.0).minimum_length == pytest.approx(1515 * FT)
    assert policy_minimum(table, 75 * MPH, 30 * MPH, 0.0).minimum_length is None  # beyond the table: no extrapolation
    assert policy_minimum(table, 40 * MPH, 40 * MPH, 0.0).minimum_length is None  # blank cell


def test_grade_factor_applied_within_block() -> None:
    """3 to 4 % upgrade, 60 mph highway, 30 mph ramp: 910 ft x 1.5 (Green Book 2011, FROM MEMORY)."""
    value = policy_minimum(load_policy("us"), 60 * MPH, 30 * MPH, 0.035)
    assert value.grade_factor == pytest.approx(1.5)
    assert value.minimum_length == pytest.approx(910 * FT * 1.5)
    steep = policy_minimum(load_policy("us"), 60 * MPH, 30 * MPH, 0.055)
    assert steep.grade_factor == pytest.approx(1.9)  # 5-6 % block (FROM MEMORY, about 50 % sure)
    # between the blocks, linear in grade from the 4 % end (1.5) to the 5 % end (1.9): 1.7 at 4.5 % (by hand);
    # 4.99 % (printed +5.0 %) is no longer refused
    between = policy_minimum(load_policy("us"), 60 * MPH, 30 * MPH, 0.045)
    assert between.grade_factor == pytest.approx(1.7) and "interpolated in grade" in between.note
    almost = policy_minimum(load_policy("us"), 60 * MPH, 30 * MPH, 0.0499)
    assert almost.grade_factor == pytest.approx(1.5 + 0.99 * 0.4)
    beyond = policy_minimum(load_policy("us"), 60 * MPH, 30 * MPH, 0.07)
    assert (
        beyond.minimum_length is None
        and "beyond the table's steepest" in beyond.note
        and "not extrapolated" in beyond.note
    )
    down = policy_minimum(load_policy("us"), 60 * MPH, 30 * MPH, -0.035)
    assert down.minimum_length == pytest.approx(910 * FT * 0.6)  # 3-4 % downgrade factor 0.6 (FROM MEMORY)


def test_metric_table_cells() -> None:
    """The bundled metric table (Green Book 2011 metric acceleration-length table, FROM MEMORY, about 60 % sure):
    100 km/h stop 345 m, 100 km/h with a 60 km/h ramp curve 205 m, 80 km/h with 40 km/h 145 m, 120 km/h stop
    545 m; merge speed Va 74 km/h at 100 km/h. It is its own table, not the US customary one converted: the US
    stop column at 100 km/h (62.14 mph, between 1200 ft at 60 mph and 1410 ft at 65 mph, FROM MEMORY) gives
    1290 ft = 393 m by the interpolation rule, some 14 % longer."""
    metric = load_policy("metric")
    kmh = 1 / 3.6
    assert policy_minimum(metric, 100 * kmh, None, 0.0).minimum_length == pytest.approx(345.0)
    assert policy_minimum(metric, 100 * kmh, 60 * kmh, 0.0).minimum_length == pytest.approx(205.0)
    assert policy_minimum(metric, 80 * kmh, 40 * kmh, 0.0).minimum_length == pytest.approx(145.0)
    assert policy_minimum(metric, 120 * kmh, None, 0.0).minimum_length == pytest.approx(545.0)
    assert policy_minimum(metric, 100 * kmh, None, 0.0).merge_speed == pytest.approx(74 * kmh)
    us_stop = policy_minimum(load_policy("us"), 100 * kmh, None, 0.0).minimum_length
    assert us_stop == pytest.approx((1200 + (100 / 3.6 / 0.44704 - 60) / 5 * 210) * 0.3048, rel=1e-9)


def test_the_table_follows_the_units_of_the_design_speed_unless_named(make_site: Any) -> None:
    """Omitted, the policy table is the bundled one in the unit system the design speed is written in; a site
    names another with `policy: us` or `policy: metric`. A 120 km/h design speed, beyond the US table's 70 mph,
    now gets a policy value from the metric table (120 km/h row, 60 km/h column: 410 m, FROM MEMORY)."""
    in_kmh = assess(make_site(mainline__design_speed="120 km/h"))
    assert in_kmh.site.policy_choice.table == "metric" and in_kmh.policy is not None
    assert in_kmh.policy.minimum_length == pytest.approx(410.0)
    chosen = next(a for a in assumptions(in_kmh) if a.name == "Policy table").source
    assert "metric table, as the design speed is in metric units" in chosen
    named_us = assess(make_site(mainline__design_speed="120 km/h", policy="us"))
    assert named_us.site.policy_choice.table == "us" and named_us.policy is not None
    assert named_us.policy.minimum_length is None and "outside" in named_us.policy.note  # 74.6 mph > 70 mph
    in_mph = assess(make_site(mainline__design_speed="60 mph", mainline__operating_speed="60 mph"))
    assert in_mph.site.policy_choice.table == "us" and in_mph.policy is not None
    # 60 mph row, ramp curve 60 km/h = 37.28 mph between the 35 and 40 mph columns (800, 550 ft; FROM MEMORY)
    ramp_mph = 60 / 3.6 / 0.44704
    assert in_mph.policy.minimum_length == pytest.approx((800 + (ramp_mph - 35) / 5 * (550 - 800)) * 0.3048, rel=1e-9)
    named_metric = assess(make_site(mainline__design_speed="60 mph", mainline__operating_speed="60 mph",
                                    policy="METRIC"))  # fmt: skip
    assert named_metric.site.policy_choice.table == "metric"


def test_a_per_vehicle_critical_gap_overrides_the_default(make_site: Any) -> None:
    """gap_acceptance.critical_gaps (documented in the README's site file): the vehicle named gets the
    given distribution at speed and from a stop, the others keep the defaults, and a longer critical gap
    needs a longer lane for the same reliability (more gaps are refused: monotone by the renewal argument)."""
    plain = assess(make_site())
    given = {"passenger-car": {"mean": "3.0 s", "sd": "0.6 s", "from_stop_mean": "9 s", "from_stop_sd": "2 s"}}
    choosy = assess(make_site(gap_acceptance__critical_gaps=given))
    car, default = choosy.vehicles[0], plain.vehicles[0]
    assert (car.critical_gap.mean, car.critical_gap.sd) == (3.0, 0.6) and car.critical_gap.source == "site file"
    assert (car.stop_critical_gap.mean, car.stop_critical_gap.sd) == (9.0, 2.0)
    assert default.critical_gap.mean == 2.0  # the default for cars (mergecheck/data/critical-gaps.yaml)
    assert car.merge.length_for_reliability is not None and default.merge.length_for_reliability is not None
    assert car.merge.length_for_reliability > default.merge.length_for_reliability
    assert car.merge.by_lane_end < default.merge.by_lane_end
