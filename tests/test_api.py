"""The public Python interface: the same results as the command line, plain data out, clear errors."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
import yaml

import mergecheck


def test_public_names_are_the_documented_ones() -> None:
    assert set(mergecheck.__all__) >= {"load_site", "site_from_dict", "assess", "assess_batch", "sweep_site", "vehicle_records",
                                       "to_json", "to_markdown", "to_html", "InputError"}  # fmt: skip
    assert all(hasattr(mergecheck, name) for name in mergecheck.__all__)


def test_a_site_from_a_mapping_equals_the_same_site_from_its_file(repo: Path, cli: Any) -> None:
    """site_from_dict reads what the file holds; its JSON equals ``mergecheck check --json`` on the file."""
    path = repo / "examples" / "larkspur-road.yaml"
    from_dict = mergecheck.site_from_dict(yaml.safe_load(path.read_text()), source=str(path))
    document = json.loads(mergecheck.to_json(mergecheck.assess(from_dict)))
    assert document == cli("check", path, "--json").json()


def test_bad_input_raises_input_error_naming_the_source_and_field(repo: Path) -> None:
    site = yaml.safe_load((repo / "examples" / "willowmere-level.yaml").read_text())
    site["geometry"]["lane_length"] = "300 kg"
    with pytest.raises(mergecheck.InputError, match=r"my ramp: geometry\.lane_length: wrong kind of quantity"):
        mergecheck.site_from_dict(site, source="my ramp")


def test_batch_of_mappings_reports_the_unreadable_one_and_ranks_the_rest(repo: Path) -> None:
    good = yaml.safe_load((repo / "examples" / "willowmere-level.yaml").read_text())
    bad = {**good, "mainline": {**good["mainline"], "lanes": "three"}}
    results = mergecheck.assess_batch([good, bad], workers=1)
    assert [r.assessment is None for r in results] == [True, False]  # unreadable first, worst first
    assert results[0].label == "site 2" and str(results[0].error).startswith("mainline.lanes: must be a whole number")
    records = mergecheck.vehicle_records(results)
    assert {r["vehicle"] for r in records} == {v.vehicle.id for v in results[1].assessment.vehicles}  # type: ignore[union-attr]
    assert all(r["available_length_m"] == 300.0 for r in records)


def test_something_that_is_not_a_mapping_is_bad_input_not_a_crash() -> None:
    """A script that hands over a list, a number or None where a site belongs gets the input error the site
    file would give, from one site and from a batch (where it is one unreadable result among the others)."""
    for odd in (5, None, "abc", [1, 2]):
        with pytest.raises(mergecheck.InputError, match="must be a mapping"):
            mergecheck.site_from_dict(odd)  # type: ignore[arg-type]
    results = mergecheck.assess_batch([5, None], workers=1)  # type: ignore[list-item]
    assert [r.error for r in results] == ["a site must be a mapping of fields"] * 2


def test_a_bad_sweep_is_named_as_the_api_takes_it(repo: Path) -> None:
    """The error names the call and its argument, not the command line's option."""
    site = mergecheck.load_site(repo / "examples" / "willowmere-level.yaml")
    with pytest.raises(mergecheck.InputError, match=r"^sweep_site: vary lane_length: wrong kind of quantity"):
        mergecheck.sweep_site(site, "lane_length=1 kg:2 m:1 m")


def test_counts_out_of_range_are_refused_by_the_api_as_by_the_command_line(repo: Path, cli: Any) -> None:
    site = mergecheck.load_site(repo / "examples" / "willowmere-level.yaml")
    for drivers in (-5, 3.5, True, 10_000_001):
        with pytest.raises(mergecheck.InputError, match=r"^assess: monte_carlo: must be a whole number between 0 and"):
            mergecheck.assess(site, monte_carlo=drivers)  # type: ignore[arg-type]
    for workers in (0, -1, 65):
        with pytest.raises(mergecheck.InputError, match=r"^assess_batch: workers: must be a whole number between 1"):
            mergecheck.assess_batch(repo / "examples" / "corridor", workers=workers)
    run = cli("batch", repo / "examples" / "corridor", "--workers", "0")
    assert run.code == 2 and "--workers: must be a whole number between 1 and 64 processes" in run.stderr


def test_a_unit_system_other_than_si_or_us_is_named(repo: Path) -> None:
    result = mergecheck.assess(mergecheck.load_site(repo / "examples" / "willowmere-level.yaml"))
    for render in (mergecheck.to_markdown, mergecheck.to_html):
        with pytest.raises(
            mergecheck.InputError, match=rf"^{render.__name__}: units: must be 'si' or 'us', not 'metric'"
        ):
            render(result, units="metric")  # type: ignore[arg-type]
