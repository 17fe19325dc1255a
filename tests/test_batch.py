"""Many sites at once: batch equals the single-site check; bad sites do not stop the others; sweeps."""

from __future__ import annotations

import csv
import json
import math
import shutil
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import yaml

from mergecheck import batch
from mergecheck.assessment import assess
from mergecheck.batch import SiteEntry, assess_all, assess_chunk, read_entries
from mergecheck.report.json_report import site_json
from mergecheck.site import load_site, site_from_input


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
    rows = [line for line in out.read_text().splitlines() if not line.startswith("#")]  # the cautions
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
    run = cli("batch", listing, "--json", tmp_path / "out.json")
    summary = json.loads((tmp_path / "out.json").read_text())["summary"]
    assert summary["sites"] == 3 and "3 sites" in run.stdout
    assert run.code == (1 if summary["short"] else 0)  # exit 1 exactly when a site falls short


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
        single = cli("check", site_file, "--json").json()
        assert single["verdict"] == expected == points[index]["verdict"]
        assert single["verdict_basis"] == points[index]["verdict_basis"] == "policy"


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
    light, heavy = power["points"]
    # the design truck governs both; at 60 kg/kW it reaches merge speed, at 120 kg/kW (the policy truck) never
    assert light["governing_vehicle"] == heavy["governing_vehicle"] == "semitrailer-design"
    assert light["length_needed_m"] is not None and heavy["length_needed_m"] is None
    bad = cli("sweep", repo / "examples" / "willowmere-level.yaml", "--vary", "speed=1:2:1")
    assert bad.code == 2 and "--vary" in bad.stderr


def _invented_sites(count: int, seed: int) -> list[dict[str, Any]]:
    """Invented sites spanning speeds, flows, grades (up and down, with a vertical curve) and stops."""
    rng = np.random.default_rng(seed)
    sites = []
    for i in range(count):
        design = int(rng.choice([80, 100, 120]))
        grade = float(rng.uniform(-4, 6))
        profile = [{"from": "0 m", "grade": f"{grade:.1f} %"}]
        if i % 3 == 0:
            profile.append(
                {"from": f"{rng.uniform(150, 400):.0f} m", "grade": f"{grade / 2:.1f} %", "vertical_curve": "80 m"}
            )
        sites.append({
            "name": f"Invented site {i}",
            "mainline": {"design_speed": f"{design} km/h", "lanes": int(rng.integers(2, 4)),
                         "adjacent_lane_flow": f"{rng.uniform(0, 1700):.1f} veh/h"},
            "ramp": {"controlling_speed": "stop" if i % 7 == 0 else f"{rng.choice([30, 50, 60])} km/h",
                     "flow": f"{rng.uniform(100, 1000):.0f} veh/h",
                     "vehicles": {"passenger-car": 0.8, "bus": 0.05, "semitrailer-fleet": 0.15}},
            "geometry": {"entrance": "parallel", "curve_end_to_convergence": f"{rng.uniform(30, 200):.0f} m",
                         "lane_length": f"{rng.uniform(120, 600):.0f} m", "taper_length": "90 m",
                         "elevation": f"{rng.uniform(0, 1500):.0f} m", "profile": profile},
        })  # fmt: skip
    return sites


def test_sites_assessed_together_equal_each_alone() -> None:
    """Issue 6: the vectorised batch path (every vehicle of every site integrated in one pass, merge
    probabilities for all rows at once) gives each site exactly its single-site check, to 1e-6 relative."""
    entries = [SiteEntry.given(f"invented {i}", site) for i, site in enumerate(_invented_sites(24, seed=11))]
    together = assess_chunk(entries)
    assert all(r.assessment is not None for r in together), [r.error for r in together]
    for entry, result in zip(entries, together, strict=True):
        alone = assess(site_from_input(entry.read(), entry.label))
        assert result.assessment is not None
        assert close(site_json(result.assessment), site_json(alone)), entry.label


def test_worker_processes_give_the_same_results(repo: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Spread over two worker processes, the corridor's results equal the in-process ones exactly."""
    entries = read_entries(str(repo / "examples" / "corridor"))
    in_process = assess_all(entries, workers=1)
    monkeypatch.setattr(batch, "PARALLEL_FROM", 1)
    in_workers = assess_all(entries, workers=2)
    assert [r.label for r in in_workers] == [r.label for r in in_process]
    for a, b in zip(in_workers, in_process, strict=True):
        assert a.assessment is not None and b.assessment is not None
        assert site_json(a.assessment) == site_json(b.assessment)


def test_a_folder_of_sites_leaves_out_what_is_clearly_not_a_site(cli: Any, repo: Path, tmp_path: Path) -> None:
    """A vehicle profile or a policy table kept beside the sites was the first 'unreadable site' and made the batch
    exit 2; it is now left out and named, and an unreadable site is reported without its path twice."""
    folder = tmp_path / "sites"
    folder.mkdir()
    (folder / "a.yaml").write_text((repo / "examples" / "willowmere-level.yaml").read_text())
    (folder / "truck.yaml").write_text((repo / "vehicle_profiles" / "bus.yaml").read_text())
    (folder / "table.yaml").write_text((repo / "examples" / "agency-policy-table.yaml").read_text())
    run = cli("batch", folder, "--json", tmp_path / "out.json")
    assert run.code == 0, run.stdout
    summary = json.loads((tmp_path / "out.json").read_text())["summary"]
    assert summary["sites"] == 1 and summary["skipped"] == [
        "table.yaml (a policy table, not a site)",
        "truck.yaml (a vehicle profile, not a site)",
    ]
    (folder / "broken.yaml").write_text("name: x\nmainline: 3\n")
    run = cli("batch", folder)
    assert run.code == 2 and run.stdout.count("broken.yaml") == 1 and "mainline: must be a mapping" in run.stdout


def test_a_unit_in_a_unit_suffixed_csv_column_is_named(cli: Any, tmp_path: Path) -> None:
    """Before, '35 km/h' under controlling_speed_kmh was read as '35 km/h km/h' and refused as such."""
    rows = tmp_path / "sites.csv"
    rows.write_text(
        "name,design_speed_kmh,lanes,adjacent_lane_flow_veh_h,controlling_speed_kmh,ramp_flow_veh_h,vehicles,"
        "entrance,curve_end_to_convergence_m,lane_length_m,taper_length_m,grade_pct\n"
        "A,100,3,900,35 km/h,500,passenger-car:1,parallel,100,300,90,1\n"
    )
    run = cli("batch", rows)
    assert run.code == 2
    message = "controlling_speed_kmh: the column's unit (km/h) is in its heading: give the number alone, not '35 km/h'"
    assert message in " ".join(run.stdout.split())


def test_every_batch_table_names_the_verdict_basis(cli: Any, repo: Path, tmp_path: Path) -> None:
    """A site meeting on the policy basis with a governing vehicle short on its own (Gorse Lane, examples/corridor)
    reads so in the CSV and the Markdown, with the note that says why."""
    table, report = tmp_path / "out.csv", tmp_path / "out.md"
    cli("batch", repo / "examples" / "corridor", "--csv", table, "--markdown", report)
    rows = list(csv.DictReader(line for line in table.read_text().splitlines() if not line.startswith("#")))
    gorse = next(r for r in rows if r["site"].startswith("Gorse Lane"))
    assert (gorse["verdict"], gorse["verdict_basis"], gorse["governing_verdict"]) == ("meets", "policy", "short")
    assert "| **meets** (policy) | `bus` (short) |" in report.read_text()
    assert "a site on the policy basis meets when the lane is at least the policy minimum" in report.read_text()
