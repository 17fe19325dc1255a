"""The accel and vehicles commands through the real command line; units; bad input."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest


def test_accel_json_keys_and_values(cli: Any) -> None:
    """Issue 2: the JSON keys, and the passenger car's 70 mph / stop cell (Green Book 2011, FROM MEMORY)."""
    run = cli("accel", "--vehicle", "passenger-car", "--from", "0 mph", "--to", "53 mph", "--grade", "0 %", "--json")
    assert run.code == 0, run.stderr
    doc = run.json()
    for key in (
        "vehicle",
        "initial_speed_m_s",
        "target_speed_m_s",
        "reaches_target",
        "distance_m",
        "time_s",
        "crawl_speed_m_s",
    ):
        assert key in doc
    assert doc["reaches_target"] is True and doc["crawl_speed_m_s"] is None
    assert doc["distance_m"] == pytest.approx(1620 * 0.3048, rel=0.03)
    trajectory = doc["trajectory"]
    assert len(trajectory["station_m"]) == len(trajectory["speed_m_s"]) == len(trajectory["time_s"])


def test_accel_truck_cannot_reach(cli: Any) -> None:
    """Issue 2, done means: semitrailer-design, 5 % upgrade, 50 to 90 km/h."""
    run = cli(
        "accel", "--vehicle", "semitrailer-design", "--from", "50 km/h", "--to", "90 km/h", "--grade", "5 %", "--json"
    )
    assert run.code == 0, run.stderr
    doc = run.json()
    assert doc["reaches_target"] is False
    assert doc["distance_m"] is None and doc["time_s"] is None
    # band around the Green Book 120 kg/kW truck curves' crawl speed on 5 % (FROM MEMORY; see test_design_vehicles)
    assert 35 / 3.6 < doc["crawl_speed_m_s"] < 50 / 3.6
    terminal = cli("accel", "--vehicle", "semitrailer-design", "--from", "50 km/h", "--to", "90 km/h", "--grade", "5 %")
    assert "Cannot reach" in terminal.stdout and "crawl speed" in terminal.stdout


def test_same_case_in_si_and_us_units(cli: Any, tmp_path: Path) -> None:
    """The same profile written in metres and in feet gives the same distance (units at the edges)."""
    si = tmp_path / "si.yaml"
    us = tmp_path / "us.yaml"
    si.write_text("profile:\n  - {from: 0 m, grade: 2 %}\n  - {from: 152.4 m, grade: 4 %, vertical_curve: 60.96 m}\n")
    us.write_text("profile:\n  - {from: 0 ft, grade: 2 %}\n  - {from: 500 ft, grade: 4 %, vertical_curve: 200 ft}\n")
    a = cli(
        "accel", "--vehicle", "semitrailer-fleet", "--from", "40 km/h", "--to", "60 km/h", "--profile", si, "--json"
    ).json()
    b = cli(
        "accel",
        "--vehicle",
        "semitrailer-fleet",
        "--from",
        "24.8548477 mph",
        "--to",
        "37.2822715 mph",
        "--profile",
        us,
        "--json",
    ).json()
    assert a["distance_m"] == pytest.approx(b["distance_m"], rel=1e-6)
    assert a["time_s"] == pytest.approx(b["time_s"], rel=1e-6)


def test_display_in_us_units(cli: Any) -> None:
    run = cli(
        "accel", "--vehicle", "passenger-car", "--from", "0 km/h", "--to", "85 km/h", "--grade", "0 %", "--units", "us"
    )
    assert run.code == 0 and "mph" in run.stdout and "ft" in run.stdout


def test_vehicles_listing(cli: Any) -> None:
    run = cli("vehicles", "--json")
    assert run.code == 0
    ids = {v["id"] for v in run.json()}
    assert {"passenger-car", "semitrailer-design", "semitrailer-fleet"} <= ids
    table = cli("vehicles", "--units", "us")
    assert table.code == 0 and "semitrailer-design" in table.stdout


def test_user_profile_by_path(cli: Any, repo: Path) -> None:
    run = cli(
        "accel",
        "--vehicle",
        repo / "examples" / "vehicle-grain-truck.yaml",
        "--from",
        "0 km/h",
        "--to",
        "60 km/h",
        "--grade",
        "2 %",
        "--json",
    )
    assert run.code == 0, run.stderr
    assert run.json()["vehicle"] == "grain-truck"


@pytest.mark.parametrize(
    ("args", "field"),
    [
        (["--from", "0", "--to", "50 mph", "--grade", "0 %"], "--from"),  # bare number
        (["--from", "0 mph", "--to", "50 kg", "--grade", "0 %"], "--to"),  # wrong dimension
        (["--from", "nan mph", "--to", "50 mph", "--grade", "0 %"], "--from"),  # NaN
        (["--from", "0 mph", "--to", "inf mph", "--grade", "0 %"], "--to"),  # infinity
        (["--from", "0 mph", "--to", "50 mph", "--grade", "0.04"], "--grade"),  # grade without %
        (["--from", "0 mph", "--to", "50 mph", "--grade", "15 %"], "--grade"),  # steeper than any standard
        (["--from", "-5 mph", "--to", "50 mph", "--grade", "0 %"], "--from"),  # negative speed
        (["--from", "0 mph", "--to", "50 mph", "--grade", "0 %", "--elevation", "9 km"], "elevation"),
    ],
)
def test_bad_command_line_values(cli: Any, args: list[str], field: str) -> None:
    run = cli("accel", "--vehicle", "passenger-car", *args)
    assert run.code == 2
    assert field in run.stderr
    assert "Traceback" not in run.stderr and run.stdout == ""


def test_unknown_vehicle_lists_known_ids(cli: Any) -> None:
    run = cli("accel", "--vehicle", "hovercraft", "--from", "0 mph", "--to", "50 mph", "--grade", "0 %")
    assert run.code == 2 and "semitrailer-design" in run.stderr and "hovercraft" in run.stderr


@pytest.mark.parametrize(
    ("text", "field"),
    [
        ("profile:\n  - {from: 0 m, grade: 2 %}\n  - {from: 0 m, grade: 3 %}\n", "profile.1.from"),
        ("profile:\n  - {from: 10 m, grade: 2 %}\n", "profile.0.from"),
        ("profile:\n  - {from: 0 m, grade: 12 %}\n", "profile.0.grade"),
        ("profile:\n  - {from: 0 m, grade: 2}\n", "profile.0.grade"),
        ("profile:\n  - {from: 0 m, slope: 2 %}\n", "profile.0"),
        (
            "profile:\n  - {from: 0 m, grade: 2 %}\n  - {from: 100 m, grade: 3 %, vertical_curve: 300 m}\n",
            "profile.1.vertical_curve",
        ),
        ("profile: [\n", "not valid YAML"),
        ("elevation: high\nprofile:\n  - {from: 0 m, grade: 2 %}\n", "elevation"),
    ],
)
def test_bad_profile_file(cli: Any, tmp_path: Path, text: str, field: str) -> None:
    path = tmp_path / "profile.yaml"
    path.write_text(text)
    run = cli("accel", "--vehicle", "passenger-car", "--from", "0 mph", "--to", "50 mph", "--profile", path)
    assert run.code == 2, run.stdout
    assert str(path) in run.stderr and field in run.stderr
    assert "Traceback" not in run.stderr


@pytest.mark.parametrize(
    ("edit", "field"),
    [
        (("value: 36287 kg", "value: 36287"), "parameters.mass.value"),
        (("value: 36287 kg", "value: 36287 kW"), "parameters.mass.value"),
        (("value: 0.85", "value: 1.7"), "parameters.efficiency.value"),
        (("value: 1.0\n", "value: 0.0\n"), "parameters.driver_share.value"),
        (("model: power-limited", "model: rocket"), "model"),
        (("  adhesion:", "  grip:"), "parameters.grip"),
        (("category: truck", "category: tram"), "category"),
    ],
)
def test_bad_vehicle_profile(cli: Any, repo: Path, tmp_path: Path, edit: tuple[str, str], field: str) -> None:
    text = (repo / "vehicle_profiles" / "semitrailer-design.yaml").read_text()
    assert edit[0] in text
    path = tmp_path / "truck.yaml"
    path.write_text(text.replace(edit[0], edit[1], 1))
    run = cli("accel", "--vehicle", path, "--from", "0 mph", "--to", "50 mph", "--grade", "0 %")
    assert run.code == 2
    assert str(path) in run.stderr and field in run.stderr
    assert "Traceback" not in run.stderr


def test_python_dash_m_and_usage_error(cli: Any) -> None:
    run = cli("accel", "--vehicle", "passenger-car")
    assert run.code == 2 and "usage" in run.stderr


@pytest.mark.parametrize(("grade", "loss_mph", "reading_ft"), [(3, 10, 1400), (4, 10, 1200)])
def test_accel_slowing_gives_the_critical_length_of_grade(
    cli: Any, grade: int, loss_mph: int, reading_ft: float
) -> None:
    """accel with a target below the entry speed finds where a truck's speed falls to it: the design truck
    entering at 70 mph loses 10 mph in about 1,400 ft on 3 % and 1,200 ft on 4 % (AASHTO Green Book 2011,
    critical-length-of-grade chart, read from course material, FROM MEMORY: tests/data/
    green_book_2011_truck_curves.yaml); a 10 mph reduction is the usual criterion (common practice).
    Within 12 %, as the design-truck calibration test."""
    run = cli(
        "accel", "--vehicle", "semitrailer-design", "--from", "70 mph", "--to", f"{70 - loss_mph} mph",
        "--grade", f"{grade} %", "--json",
    )  # fmt: skip
    assert run.code == 0, run.stderr
    doc = run.json()
    assert doc["direction"] == "slowing" and doc["reaches_target"] is True
    assert doc["distance_m"] == pytest.approx(reading_ft * 0.3048, rel=0.12)
    speeds = doc["trajectory"]["speed_m_s"]
    assert speeds[0] > speeds[-1]  # the speed profile down the grade, not a single point


def test_accel_slowing_to_below_the_crawl_speed_never_happens(cli: Any) -> None:
    """The case that printed "reaches 20 mph after 0 ft": on 4 % the design truck settles near 30 mph (its
    crawl speed; the Green Book curves level off between the 3 % and 6 % values of 35-38 and 21-23 mph,
    FROM MEMORY), so it never falls to 20 mph."""
    run = cli(
        "accel", "--vehicle", "semitrailer-design", "--from", "55 mph", "--to", "20 mph", "--grade", "4 %", "--units", "us"
    )  # fmt: skip
    assert run.code == 0, run.stderr
    assert "Never falls to 20.0 mph" in " ".join(run.stdout.split())
    doc = cli(
        "accel", "--vehicle", "semitrailer-design", "--from", "55 mph", "--to", "20 mph", "--grade", "4 %", "--json"
    ).json()
    assert doc["reaches_target"] is False and 21 * 0.44704 < doc["crawl_speed_m_s"] < 38 * 0.44704
