"""Every report carries the cautions: each command's terminal output and JSON document, and every batch output."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from mergecheck.cautions import CAUTION_LINE, CAUTIONS

EX = Path(__file__).parent.parent / "examples"
COMMANDS = [
    ["check", str(EX / "willowmere-level.yaml")],
    ["accel", "--vehicle", "bus", "--from", "0 km/h", "--to", "60 km/h", "--grade", "2 %"],
    ["gaps", "--flow", "900 veh/h", "--critical-gap", "3.5 s"],
    ["critical-gap", str(EX / "critical-gaps-field.csv")],
    [
        "merge-area",
        "--lanes",
        "2",
        "--mainline-flow",
        "2000 pc/h",
        "--ramp-flow",
        "500 pc/h",
        "--accel-length",
        "300 m",
        "--ffs",
        "100 km/h",
        "--ramp-ffs",
        "60 km/h",
    ],
    [
        "queue",
        "--arrive",
        "1800 veh/h",
        "--arrive-speed",
        "90 km/h",
        "--discharge",
        "1200 veh/h",
        "--discharge-speed",
        "15 km/h",
    ],
    ["sweep", str(EX / "willowmere-level.yaml"), "--vary", "lane_length=200 m:300 m:100 m"],
]


@pytest.mark.parametrize("args", COMMANDS, ids=[c[0] for c in COMMANDS])
def test_terminal_and_json_carry_cautions(cli: Any, args: list[str]) -> None:
    """The terminal carries the cautions in one line and says where they are in full; the JSON in full."""
    text = cli(*args)
    assert text.code == 0, text.stderr  # each command here passes its check or has no verdict
    assert CAUTION_LINE in " ".join(text.stdout.split()) and "Full cautions:" in text.stdout
    document = cli(*args, "--json").json()
    assert document["cautions"] == list(CAUTIONS)


def test_check_details_show_every_assumption_and_the_cautions_in_full(cli: Any) -> None:
    brief = cli("check", EX / "larkspur-road.yaml")
    full = cli("check", EX / "larkspur-road.yaml", "--details")
    assert "Assumptions" not in brief.stdout and "Assumptions" in full.stdout
    for caution in CAUTIONS:
        assert caution in " ".join(full.stdout.split())


def test_batch_outputs_carry_cautions(cli: Any, tmp_path: Path) -> None:
    report, data, table = tmp_path / "corridor.md", tmp_path / "corridor.json", tmp_path / "corridor.csv"
    run = cli("batch", EX / "corridor", "--markdown", report, "--json", data, "--csv", table)
    assert "licensed engineer" in run.stdout and "licensed engineer" in report.read_text()
    assert "licensed engineer" in data.read_text()
    lines = table.read_text().splitlines()
    assert lines[: len(CAUTIONS)] == [f"# Caution: {c}" for c in CAUTIONS]  # comment lines, then the table
    assert lines[len(CAUTIONS)].startswith("rank,site,")
