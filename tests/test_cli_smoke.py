"""The real program in a subprocess, as a user runs it: one run per command and output, exit codes as documented.

Every other CLI test runs in-process (tests/conftest.py, ``run_cli``); these few keep the installed entry point,
argument bytes from a real argv and the streams of a real process honest.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any


def test_check_writes_every_format_and_exits_on_its_verdict(cli_process: Any, repo: Path, tmp_path: Path) -> None:
    site = repo / "examples" / "willowmere-level.yaml"
    run = cli_process("check", site, "--markdown", tmp_path / "r.md", "--html", tmp_path / "r.html")
    assert run.code == 0 and "Willowmere" in run.stdout and run.stderr == ""
    assert (tmp_path / "r.md").read_text().startswith("# ") and "<svg" in (tmp_path / "r.html").read_text()
    document = cli_process("check", repo / "examples" / "harbour-street-constrained.yaml", "--json")
    assert document.code == 1 and json.loads(document.stdout)["verdict"] == "short"


def test_small_commands_run(cli_process: Any) -> None:
    accel = cli_process("accel", "--vehicle", "passenger-car", "--from", "0 km/h", "--to", "80 km/h", "--grade", "0 %")
    assert accel.code == 0 and "passenger" in accel.stdout.lower()
    gaps = cli_process("gaps", "--flow", "1200 veh/h", "--critical-gap", "3 s", "--json")
    assert gaps.code == 0 and 0 < json.loads(gaps.stdout)["p_headway_at_least"] < 1


def test_bad_input_ends_with_exit_2_and_no_traceback(cli_process: Any, tmp_path: Path) -> None:
    site = tmp_path / "site.yaml"
    site.write_text("name: [unclosed\n")
    run = cli_process("check", site)
    assert run.code == 2 and "site.yaml" in run.stderr and "Traceback" not in run.stderr
    escape = cli_process("accel", "--vehicle", "bus\x1b[2J", "--from", "0 km/h", "--to", "5 km/h", "--grade", "0 %")
    assert escape.code == 2 and "U+001B" in escape.stderr and "\x1b" not in escape.stderr
