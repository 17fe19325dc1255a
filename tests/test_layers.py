"""The package's rooms import only downwards (the map in the README's development section): models never
reach up to inputs, studies, reports or faces; studies never to reports or faces; reports never to faces."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).parent.parent / "mergecheck"
ROOMS = {
    "faces": {"api", "cli", "output_files", "__init__", "__main__"},
    "reports": {"report", "narrative", "cautions", "vehicle_figures", "command_results"},
    "studies": {"assessment", "exception_study", "sweep", "batch", "merge_operations"},
    "inputs": {"site", "vehicles", "policy", "inputs", "units", "limits", "fields", "landxml", "spreadsheet", "errors"},
    "models": {"profile", "dynamics", "acceleration", "trajectory", "headways", "critical_gaps", "stream_time",
               "renewal", "merge_behaviour", "merge_reliability", "monte_carlo", "merge_area", "shockwave",
               "critical_gap_estimation", "padded_rows", "ragged_rows"},
}  # fmt: skip
ORDER = ["faces", "reports", "studies", "inputs", "models"]
READERS = {"errors", "inputs", "units"}
"""What a model may take from the inputs room: the one input error, and the readers of its own data files
(critical-gap observations)."""


def room_of(name: str) -> str:
    return next(room for room, members in ROOMS.items() if name in members)


def test_every_module_has_a_room() -> None:
    modules = {p.stem for p in PACKAGE.glob("*.py")} | {"report"}
    assert modules == set().union(*ROOMS.values())


@pytest.mark.parametrize("path", sorted(PACKAGE.rglob("*.py")), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_point_down(path: Path) -> None:
    in_report = path.parent.name == "report"
    here = room_of("report" if in_report else path.stem)
    for node in ast.walk(ast.parse(path.read_text())):
        if not (isinstance(node, ast.ImportFrom) and node.level >= 1):
            continue
        within_report = in_report and node.level == 1
        target = "report" if within_report or (node.module or "").startswith("report") else node.module or "report"
        target = target.split(".")[0]
        there = room_of(target)
        if here == "models" and target in READERS:
            continue
        assert ORDER.index(there) >= ORDER.index(here), f"{path.name} ({here}) imports {target} ({there})"
