"""Shared fixtures: published tables as data, and a runner for the real command line."""

from __future__ import annotations

import contextlib
import copy
import io
import json
import os
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest
import yaml

from mergecheck.site import Site, SiteInput, site_from_input

DATA = Path(__file__).parent / "data"
REPO = Path(__file__).parent.parent
MPH = 0.44704  # m/s, exact by definition
FT = 0.3048  # m, exact by definition


@dataclass(frozen=True)
class PolicyCell:
    highway_speed_mph: int
    merge_speed: float  # m/s
    initial_speed: float  # m/s
    length: float  # m


@pytest.fixture(scope="session")
def green_book_lengths() -> list[PolicyCell]:
    """Every cell of the Green Book 2011 acceleration-length table (FROM MEMORY, see the file)."""
    table = yaml.safe_load((DATA / "green_book_2011_acceleration_lengths.yaml").read_text())
    initial = table["initial_speeds_mph"]
    return [
        PolicyCell(row[0], row[1] * MPH, initial[i] * MPH, length * FT)
        for row in table["rows"]
        for i, length in enumerate(row[2:])
    ]


@pytest.fixture(scope="session")
def green_book_grade_factors() -> list[tuple[int, float, float, float]]:
    """(V mph, Va m/s, Va' m/s, factor) for the 3-4 % upgrade block (FROM MEMORY)."""
    table = yaml.safe_load((DATA / "green_book_2011_acceleration_lengths.yaml").read_text())
    merge = {row[0]: row[1] for row in table["rows"]}
    initial = table["grade_factor_ramp_initial_speeds_mph"]
    return [
        (row[0], merge[row[0]] * MPH, initial[i] * MPH, factor)
        for row in table["grade_factors"]
        for i, factor in enumerate(row[1:])
    ]


@dataclass(frozen=True)
class Run:
    code: int
    stdout: str
    stderr: str

    def json(self) -> Any:
        return json.loads(self.stdout)


def run_cli(*args: str | Path, cwd: Path | None = None) -> Run:
    """Run the command line in this process, as ``mergecheck ARGS`` would run, capturing its output.

    The working directory is tests/ (or ``cwd``) for the call, as for :func:`run_cli_process`. In-process
    runs cost milliseconds instead of a Python start each; the real program is still run in a subprocess
    by the smoke tests (see :func:`run_cli_process`).
    """
    from mergecheck.cli import main

    out, err = io.StringIO(), io.StringIO()
    here = os.getcwd()
    os.chdir(cwd or Path(__file__).parent)
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main([str(a) for a in args])
            except SystemExit as done:  # argparse's usage errors and --help
                code = done.code if isinstance(done.code, int) else 2
    finally:
        os.chdir(here)
    return Run(code, out.getvalue(), err.getvalue())


def run_cli_process(*args: str | Path, cwd: Path | None = None) -> Run:
    """Run ``python -m mergecheck`` as a user would, in a subprocess.

    The working directory defaults to tests/, which holds no package, so the
    installed copy of mergecheck is the one that runs.
    """
    done = subprocess.run(
        [sys.executable, "-m", "mergecheck", *map(str, args)],
        capture_output=True,
        text=True,
        cwd=cwd or Path(__file__).parent,
        timeout=300,
    )
    return Run(done.returncode, done.stdout, done.stderr)


@pytest.fixture(scope="session")
def cli() -> Any:
    """The command-line runner, in process (see :func:`run_cli`)."""
    return run_cli


@pytest.fixture(scope="session")
def cli_process() -> Any:
    """The command-line runner in a real subprocess (see :func:`run_cli_process`), for smoke tests."""
    return run_cli_process


@pytest.fixture(scope="session")
def repo() -> Path:
    """The repository root (for examples/)."""
    return REPO


# An invented level parallel entrance for behaviour tests (demonstration data).
BASE_SITE: dict[str, Any] = {
    "name": "Test entrance (invented)",
    "mainline": {
        "design_speed": "100 km/h",
        "operating_speed": "100 km/h",
        "lanes": 3,
        "adjacent_lane_flow": "1200 veh/h",
    },
    "ramp": {"controlling_speed": "60 km/h", "flow": "500 veh/h", "vehicles": {"passenger-car": 1.0}},
    "geometry": {
        "entrance": "parallel",
        "curve_end_to_convergence": "100 m",
        "lane_length": "250 m",
        "taper_length": "90 m",
        "profile": [{"from": "0 m", "grade": "0 %"}],
    },
}


def _site(**changes: Any) -> Site:
    """BASE with changes given as path__to__key=value."""
    data = copy.deepcopy(BASE_SITE)
    for path, value in changes.items():
        node = data
        *parents, key = path.split("__")
        for name in parents:
            node = node.setdefault(name, {})
        node[key] = value
    return site_from_input(SiteInput.model_validate(data), "test")


@pytest.fixture(scope="session")
def make_site() -> Any:
    """BASE_SITE with changes given as path__to__key=value, as a Site."""
    return _site
