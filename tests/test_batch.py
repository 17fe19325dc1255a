"""Many sites at once: batch equals the single-site check; bad sites do not stop the others; sweeps."""

from __future__ import annotations

import math
import shutil
from pathlib import Path
from typing import Any

import pytest
import yaml

from mergecheck.assessment import assess
from mergecheck.report.json_report import site_json
from mergecheck.site import load_site


def close(a: Any, b: Any, rel: float = 1e-6) -> bool:
    """Equal structures, numbers within a relative tolerance."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(close(a[k], b[k], rel) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(close(x, y, rel) for x, y in zip(a, b, strict=True))
    if isinstance(a, float) or isinstance(b, float):
        return (
            isinstance(a, (int, float))
            and isinstance(b, (int, float))
            and math.isclose(a, b, rel_tol=rel, abs_tol=1e-9)
        )
    return bool(a == b)


@pytest.fixture(scope="module")
def corridor(cli: Any, repo: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    out = tmp_path_factory.mktemp("batch") / "corridor.json"
    run = cli("batch", repo / "examples" / "corridor", "--json", out)
    assert run.code == 1, run.stderr  # some sites fall short
    return {"doc": __import__("json").loads(out.read_text()), "stdout": run.stdout, "stderr": run.stderr}


def test_batch_equals_single_site_check(corridor: dict[str, Any], repo: Path) -> None:
    """Every site's batch result matches the single-site path to 1e-6 relative (issue 6)."""
    sites = corridor["doc"]["sites"]
    assert len(sites) == len(list((repo / "examples" / "corridor").glob("*.yaml"))) >= 12
    for entry in sites:
        single = site_json(assess(load_site(entry["input"])))
        assert close(entry["check"], single), entry["input"]


def test_batch_is_ranked_worst_first_with_a_summary(corridor: dict[str, Any]) -> None:
    doc = corridor["doc"]
    summary = doc["summary"]
    assert summary["sites"] == summary["meets"] + summary["short"] + summary["unreadable"]
    verdicts = [s["check"]["verdict"] for s in doc["sites"]]
    assert verdicts == sorted(verdicts, key=lambda v: v == "meets")  # every short site before every passing one
    assert corridor["stderr"] == ""  # no progress bar when not on a terminal


def test_corrupt_site_is_reported_and_the_rest_assessed(cli: Any, repo: Path, tmp_path: Path) -> None:
    folder = tmp_path / "sites"
    shutil.copytree(repo / "examples" / "corridor", folder)
    (folder / "99-broken.yaml").write_text("name: Broken site\nmainline: {design_speed: fast}\n")
    out = tmp_path / "out.csv"
    run = cli("batch", folder, "--csv", out)
    assert run.code == 2
    rows = out.read_text().splitlines()
    assert len(rows) == 1 + 15
    assert "99-broken.yaml" in rows[1] and "unreadable" in rows[1]  # ranked first
    assert sum("unreadable" in r for r in rows) == 1


def test_csv_and_yaml_inputs_agree(cli: Any, repo: Path, tmp_path: Path) -> None:
    a, b = tmp_path / "yaml.json", tmp_path / "csv.json"
    cli("batch", repo / "examples" / "corridor", "--json", a)
    cli("batch", repo / "examples" / "corridor.csv", "--json", b)
    load = __import__("json").loads
    by_name = lambda doc: {s["check"]["site"]: s["check"] for s in doc["sites"]}  # noqa: E731
    from_yaml, from_csv = by_name(load(a.read_text())), by_name(load(b.read_text()))
    assert from_yaml.keys() == from_csv.keys()
    for name, check in from_yaml.items():
        assert check["verdict"] == from_csv[name]["verdict"]
        assert close(check["vehicles"], from_csv[name]["vehicles"]), name


def test_yaml_list_input(cli: Any, repo: Path, tmp_path: Path) -> None:
    sites = [yaml.safe_load(p.read_text()) for p in sorted((repo / "examples" / "corridor").glob("*.yaml"))[:3]]
    listing = tmp_path / "list.yaml"
    listing.write_text(yaml.safe_dump({"sites": sites}))
    run = cli("batch", listing)
    assert run.code in (0, 1) and "3 sites" in run.stdout


def test_sweep_verdict_change_matches_single_checks(cli: Any, repo: Path, tmp_path: Path) -> None:
    source = repo / "examples" / "willowmere-level.yaml"
    run = cli("sweep", source, "--vary", "lane_length=100 m:400 m:25 m", "--json")
    assert run.code == 0, run.stderr
    points = run.json()["points"]
    change = next(i for i, p in enumerate(points) if p["verdict_changes"])
    for index, expected in ((change - 1, "short"), (change, "meets")):
        site = yaml.safe_load(source.read_text())
        site["geometry"]["lane_length"] = f"{points[index]['value_si']} m"
        site_file = tmp_path / "site.yaml"
        site_file.write_text(yaml.safe_dump(site))
        assert cli("check", site_file, "--json").json()["verdict"] == expected == points[index]["verdict"]


def test_sweep_other_fields_and_bad_input(cli: Any, repo: Path) -> None:
    flows = cli(
        "sweep",
        repo / "examples" / "willowmere-level.yaml",
        "--vary",
        "adjacent_lane_flow=200 veh/h:1400 veh/h:600 veh/h",
        "--json",
    ).json()
    probabilities = [p["merge_probability_by_lane_end"] for p in flows["points"]]
    assert probabilities == sorted(probabilities, reverse=True)  # more flow, fewer merges by the end of the lane
    power = cli(
        "sweep",
        repo / "examples" / "larkspur-road.yaml",
        "--vary",
        "weight_to_power=60 kg/kW:120 kg/kW:60 kg/kW",
        "--json",
    ).json()
    assert power["points"][0]["verdict"] in ("meets", "short")
    bad = cli("sweep", repo / "examples" / "willowmere-level.yaml", "--vary", "speed=1:2:1")
    assert bad.code == 2 and "--vary" in bad.stderr
