"""Design-exception mitigations: each one is a real rerun on a modified layout."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from mergecheck.assessment import assess
from mergecheck.exception_study import FLATTENED_GRADE, design_exception
from mergecheck.site import load_site


@pytest.mark.parametrize("example", ["larkspur-road", "quarry-hill-upgrade"])
def test_flattening_cuts_every_steep_grade_and_helps(repo: Path, example: str) -> None:
    base = assess(load_site(str(repo / "examples" / f"{example}.yaml")))
    flat = next(m for m in design_exception(base).mitigations if m.change == "flatten")
    assert flat.assessment is not None
    profile = flat.assessment.site.profile
    assert max([profile.initial_grade, *(c.grade for c in profile.changes)]) <= FLATTENED_GRADE
    car_before = next(v for v in base.vehicles if v.vehicle.id == "passenger-car")
    car_after = next(v for v in flat.assessment.vehicles if v.vehicle.id == "passenger-car")
    assert car_after.required_length is not None and car_before.required_length is not None
    assert car_after.required_length < car_before.required_length


def test_faster_curve_and_metering_move_the_need_the_right_way(repo: Path) -> None:
    """A higher controlling speed shortens the car's need; starting from a stop lengthens it (physics)."""
    base = assess(load_site(str(repo / "examples" / "larkspur-road.yaml")))
    options = {m.change: m for m in design_exception(base).mitigations}
    car = lambda a: next(v for v in a.vehicles if v.vehicle.id == "passenger-car").required_length  # noqa: E731
    faster, metered = options["controlling_speed"].assessment, options["metering"].assessment
    assert faster is not None and metered is not None
    assert car(faster) < car(base) < car(metered)
    assert metered.initial_speed == 0.0


def test_single_grade_profile_has_no_flattening_when_already_flat(repo: Path) -> None:
    base = assess(load_site(str(repo / "examples" / "harbour-street-constrained.yaml")))  # one 1.5 % grade
    flat = next(m for m in design_exception(base).mitigations if m.name == "Flatten the profile")
    assert flat.change == "none" and flat.assessment is None


def test_the_study_is_in_every_format_with_its_record(cli: Any, repo: Path, tmp_path: Path) -> None:
    """The JSON carries the design-exception study (it had none) when a vehicle falls short or --exception is
    given, with the date, who prepared it and the site file's SHA-256 (hashlib, the reference); the terminal
    shows it with --exception."""
    import datetime
    import hashlib

    short = repo / "examples" / "harbour-street-constrained.yaml"
    study = cli("check", short, "--json", "--prepared-by", "A. Designer").json()["design_exception"]
    assert study["site_file_sha256"] == hashlib.sha256(short.read_bytes()).hexdigest()
    assert study["prepared_by"] == "A. Designer" and study["prepared_on"] == datetime.date.today().isoformat()
    assert study["short_of_policy_m"] > 0 and {m["change"] for m in study["mitigations"]} >= {"lane_length"}
    fine = repo / "examples" / "willowmere-level.yaml"
    assert cli("check", fine, "--json").json()["design_exception"] is None
    assert cli("check", fine, "--json", "--exception").json()["design_exception"]["prepared_by"] is None
    terminal = cli("check", fine, "--exception")
    assert "Design exception" in terminal.stdout and "SHA-256 of the site file" in terminal.stdout
