"""Mutation fuzzing of every input path, through the real command line (in process).

Each case mutates a valid input (a bundled example, a vehicle profile, a policy table, a CSV, command-line
values) and runs the command. A case fails when it ends in

- a traceback: an exception escaping the command line, or exit 3 (an internal error);
- a wrong exit: a code other than 0, 1, 2, or exit 2 without a message naming where the problem is;
- a hang: longer than ``HANG`` seconds;
- a silent accept: the mutation is known to be bad (an oracle below) and the command did not refuse it;
- a half write: the command refused the input but left an output file behind, or wrote JSON that is not JSON.

Run it for the figures (at least 10,000 cases by default)::

    python scripts/fuzz_inputs.py [--cases-per-path N] [--seed S]

The test suite runs a small seeded share of it (tests/test_fuzz_inputs.py).
"""

from __future__ import annotations

import argparse
import contextlib
import csv
import io
import json
import random
import re
import shutil
import signal
import sys
import tempfile
import time
from collections import Counter
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = REPO / "examples"
PROFILES = REPO / "vehicle_profiles"
HANG = 10.0
"""Seconds after which a case counts as a hang (it is stopped at three times this)."""

SITES = ["willowmere-level.yaml", "larkspur-road.yaml", "harbour-street-constrained.yaml", "quarry-hill-upgrade.yaml"]

BAD_QUANTITIES: list[Any] = [
    "1+1 m", "2**3 m", "10**10**10 m", "300.0.5 m", "[1] m", "1 m m m", "(1) m", "1,5 m", "7 candela",
    "nan m", "inf km/h", "-inf %", "1e400 m", "", "m", "12", True, [1, 2], {"a": 1}, "5 \x1b[2J m",
]  # fmt: skip
"""Values no quantity field may take (each is refused whatever the field's kind): arithmetic, stray text, a
unit of no kind any field has, non-finite numbers, a bare number, booleans and containers, control text."""

ODD_VALUES: list[Any] = [
    None, 0, -1, 1e9, 0.5, "0 m", "-5 m", "1e9 m", "4 %", "60 %", "-12 %", "3 kg", "0 veh/h", "9000 veh/h",
    "stop", "65 mph", "0 km/h", "400 km/h", "1 s", "200 lb/hp", "0.001 m", "", "x" * 300, "Ω", "[/]",
    "<b>x</b>", "1 pc", "5 rpm", "0.03 pc", "1e-300 m", "/dev/zero", "n" * 300 + ".yaml", "1 " + "n" * 60 + "!",
    "1" * 20_000 + "x",
]  # fmt: skip
"""Values that may or may not fit a field: the command decides, and must end cleanly either way."""

JUNK = ["", " ", "-", "0", "-0", "1e308", "nan", "inf", "abc", "5 5", "1/0", "%", "km/h", "[/]", "\u202e", "é"]


@dataclass
class Case:
    """One run: the path it exercises, its arguments, the files it needs, and whether it must be refused."""

    path: str
    argv: list[str]
    files: dict[str, bytes] = field(default_factory=dict)
    must_refuse: bool = False
    outputs: list[str] = field(default_factory=list)
    note: str = ""


@dataclass
class Outcome:
    case: Case
    failure: str | None
    code: int | None
    seconds: float
    detail: str = ""


# ---------------------------------------------------------------- mutations of a YAML document


def _leaves(data: Any, prefix: tuple[Any, ...] = ()) -> Iterator[tuple[tuple[Any, ...], Any]]:
    if isinstance(data, dict):
        for key, value in data.items():
            yield from _leaves(value, (*prefix, key))
    elif isinstance(data, list):
        for index, value in enumerate(data):
            yield from _leaves(value, (*prefix, index))
    else:
        yield prefix, data


def _set(data: Any, path: tuple[Any, ...], value: Any) -> None:
    for key in path[:-1]:
        data = data[key]
    data[path[-1]] = value


def _is_quantity(value: Any) -> bool:
    """A number and one unit word, as every quantity field is written ('300 m', '65 mph', '4 %')."""
    return isinstance(value, str) and re.fullmatch(r"-?[0-9][0-9.eE+-]* [^\s]+", value) is not None


def _dump(data: Any) -> bytes:
    return yaml.safe_dump(data, allow_unicode=True, sort_keys=False).encode("utf-8")


def mutate_yaml(text: str, rng: random.Random) -> tuple[bytes, bool, str]:
    """A mutated YAML document: (bytes, must be refused, what was done)."""
    data = yaml.safe_load(text)
    choice = rng.random()
    leaves = list(_leaves(data))
    quantities = [(p, v) for p, v in leaves if _is_quantity(v)]
    if choice < 0.3 and quantities:
        where, _ = rng.choice(quantities)
        value = rng.choice(BAD_QUANTITIES)
        _set(data, where, value)
        return _dump(data), True, f"{'.'.join(map(str, where))} = {value!r}"
    if choice < 0.6 and leaves:
        where, _ = rng.choice(leaves)
        value = rng.choice(ODD_VALUES)
        _set(data, where, value)
        return _dump(data), False, f"{'.'.join(map(str, where))} = {value!r}"
    if choice < 0.68:
        keyed = [p for p, _ in leaves if p and isinstance(p[-1], str) and len(p[-1]) > 3]
        if keyed:
            where = rng.choice(keyed)
            parent = data
            for key in where[:-1]:
                parent = parent[key]
            name = where[-1]
            i = rng.randrange(len(name) - 1)
            misspelt = name[:i] + name[i + 1] + name[i] + name[i + 2 :]
            if misspelt != name and misspelt not in parent:
                parent[misspelt] = parent.pop(name)
                return _dump(data), True, f"key {name} spelt {misspelt}"
    if choice < 0.7:  # aliases nested nine deep: 9^9 strings by reference, and a backslash to have them all read
        levels = ['z0: &z0 ["lol\\\\", lol, lol, lol, lol, lol, lol, lol, lol]']
        levels += [f"z{i}: &z{i} [{', '.join([f'*z{i - 1}'] * 9)}]" for i in range(1, 9)]
        return (text.rstrip("\n") + "\n" + "\n".join(levels) + "\n").encode("utf-8"), False, "aliases nested nine deep"
    raw = text.encode("utf-8")
    return mutate_bytes(raw, rng)


def mutate_bytes(raw: bytes, rng: random.Random, *, structured: bool = True) -> tuple[bytes, bool, str]:
    """A text-level mutation: (bytes, must be refused, what was done)."""
    lines = raw.split(b"\n")
    choice = rng.random()
    at = rng.randrange(len(lines))
    if choice < 0.15:
        position = rng.randrange(len(raw) + 1)
        return raw[:position] + b"\xff\xfe" + raw[position:], True, "a byte that is not UTF-8"
    if choice < 0.25:
        position = rng.randrange(len(raw) + 1)
        return raw[:position] + b"\x1b]8;;x\x07" + raw[position:], True, "an escape sequence"
    if choice < 0.4:
        return b"\n".join(lines[:at] + lines[at + 1 :]), False, f"line {at + 1} deleted"
    if choice < 0.55:
        return b"\n".join([*lines[: at + 1], lines[at], *lines[at + 1 :]]), False, f"line {at + 1} repeated"
    if choice < 0.7:
        return raw[: rng.randrange(len(raw) + 1)], False, "truncated"
    if choice < 0.85:
        position = rng.randrange(max(len(raw), 1))
        junk = rng.choice(
            [b":", b"-", b"[", b"{", b"'", b'"', b"#", b"&a", b"*a", b"!!python/object", b"\t", b"9" * 50]
        )
        return raw[:position] + junk + raw[position:], False, f"{junk!r} inserted"
    i, j = rng.randrange(len(lines)), rng.randrange(len(lines))
    lines[i], lines[j] = lines[j], lines[i]
    return b"\n".join(lines), False, f"lines {i + 1} and {j + 1} swapped"


def mutate_csv(text: str, rng: random.Random) -> tuple[bytes, bool, str]:
    """A mutated CSV: a cell replaced (refused when the value is junk in a numeric column), or text mutations."""
    lines = text.splitlines()
    body = [i for i, line in enumerate(lines) if line and not line.startswith("#")]
    header_at = body[0]
    rows = [i for i in body[1:]]
    if rows and rng.random() < 0.6:
        at = rng.choice(rows)
        cells = next(csv.reader([lines[at]]))
        column = rng.randrange(len(cells))
        value = rng.choice([*JUNK, "1e9", "-3", "0", "12.5 m", "a,b", '"', "x" * 200])
        numeric = _is_number(cells[column])
        cells[column] = value
        out = io.StringIO()
        csv.writer(out, lineterminator="").writerow(cells)
        lines[at] = out.getvalue()
        refuse = numeric and value in {"abc", "nan", "inf", "5 5", "1/0", "%", "km/h", "[/]", "\u202e", "é", "-"}
        header = lines[header_at].split(",")
        name = header[column] if column < len(header) else column
        return "\n".join(lines).encode("utf-8") + b"\n", refuse, f"row {at + 1} {name} = {value!r}"
    return mutate_bytes(text.encode("utf-8"), rng)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


# ---------------------------------------------------------------- cases per input path


def _quantity(rng: random.Random, units: list[str], low: float, high: float) -> str:
    """A value for a command-line option: mostly plausible, sometimes junk or the wrong kind."""
    roll = rng.random()
    if roll < 0.55:
        return f"{rng.uniform(low, high):.4g} {rng.choice(units)}"
    if roll < 0.75:
        return f"{rng.choice([-1, 0, 1e-300, 1e300, 1e9, -1e9]):g} {rng.choice(units)}"
    if roll < 0.9:
        return f"{rng.uniform(low, high):.3g} {rng.choice(['m', 's', 'kg', '%', 'veh/h', 'km/h', 'veh/km', 'pc/h'])}"
    return rng.choice(JUNK + BAD_QUANTITIES[:9])


def site_case(rng: random.Random) -> Case:
    name = rng.choice(SITES)
    data, refuse, note = mutate_yaml((EXAMPLES / name).read_text(), rng)
    outputs = ["out.json", "out.md"] if rng.random() < 0.3 else []
    argv = ["check", "site.yaml"] + (["--json", "out.json", "--markdown", "out.md"] if outputs else ["--json"])
    return Case("site file", argv, {"site.yaml": data}, refuse, outputs, f"{name}: {note}")


def vehicle_case(rng: random.Random) -> Case:
    source = rng.choice([*sorted(PROFILES.glob("*.yaml")), EXAMPLES / "vehicle-grain-truck.yaml"])
    data, refuse, note = mutate_yaml(source.read_text(), rng)
    speeds = rng.choice([("0 km/h", "60 km/h"), ("50 km/h", "90 km/h"), ("100 km/h", "60 km/h")])
    argv = ["accel", "--vehicle", "truck.yaml", "--from", speeds[0], "--to", speeds[1], "--grade", "3 %", "--json"]
    return Case("vehicle profile", argv, {"truck.yaml": data}, refuse, [], f"{source.name}: {note}")


def profile_case(rng: random.Random) -> Case:
    points = [{"from": "0 m", "grade": "2 %"}, {"from": "300 m", "grade": "-1 %", "vertical_curve": "100 m"},
              {"from": "700 m", "grade": "4 %"}]  # fmt: skip
    data, refuse, note = mutate_yaml(yaml.safe_dump({"elevation": "300 m", "profile": points}), rng)
    argv = ["accel", "--vehicle", "bus", "--from", "20 km/h", "--to", "70 km/h", "--profile", "p.yaml", "--json"]
    return Case("profile file", argv, {"p.yaml": data}, refuse, [], note)


def policy_case(rng: random.Random) -> Case:
    data, refuse, note = mutate_yaml((EXAMPLES / "agency-policy-table.yaml").read_text(), rng)
    site = yaml.safe_load((EXAMPLES / "willowmere-level.yaml").read_text())
    site["policy"] = "policy.yaml"
    return Case("policy table", ["check", "site.yaml", "--json"], {"site.yaml": _dump(site), "policy.yaml": data},
                refuse, [], note)  # fmt: skip


def critical_gap_case(rng: random.Random) -> Case:
    text = (EXAMPLES / "critical-gaps-field.csv").read_text()
    if rng.random() < 0.4:  # a few drivers only: the estimators' small-sample edges
        lines = text.splitlines()
        text = "\n".join(lines[:2] + rng.sample(lines[2:], rng.randint(1, 6))) + "\n"
    data, refuse, note = mutate_csv(text, rng)
    method = rng.choice(["mle", "raff"])
    return Case("critical-gap CSV", ["critical-gap", "gaps.csv", "--method", method, "--json"], {"gaps.csv": data},
                refuse, [], note)  # fmt: skip


def batch_csv_case(rng: random.Random) -> Case:
    lines = (EXAMPLES / "corridor.csv").read_text().splitlines()
    text = "\n".join(lines[:2] + rng.sample(lines[2:], 3)) + "\n"
    data, refuse, note = mutate_csv(text, rng)
    argv = ["batch", "sites.csv", "--workers", "1", "--json", "out.json", "--csv", "out.csv"]
    return Case("batch CSV", argv, {"sites.csv": data}, refuse, ["out.json", "out.csv"], note)


def batch_folder_case(rng: random.Random) -> Case:
    name = rng.choice(SITES)
    data, refuse, note = mutate_yaml((EXAMPLES / name).read_text(), rng)
    files = {"sites/a.yaml": (EXAMPLES / "willowmere-level.yaml").read_bytes(), "sites/b.yaml": data}
    argv = ["batch", "sites", "--workers", "1", "--json", "out.json"]
    return Case("batch folder", argv, files, refuse, ["out.json"], f"{name}: {note}")


def sweep_case(rng: random.Random) -> Case:
    name, units, low, high = rng.choice([("lane_length", ["m", "ft"], 0, 900), ("grade", ["%"], -8, 8),
                                         ("adjacent_lane_flow", ["veh/h"], 0, 2500),
                                         ("weight_to_power", ["kg/kW", "lb/hp"], 0, 300),
                                         ("taper_width", ["m"], 0, 10)])  # fmt: skip
    parts = [_quantity(rng, units, low, high) for _ in range(3)]
    separator = rng.choice([":", ":", ":", ",", "::"])
    vary = f"{name}={separator.join(parts)}" if rng.random() < 0.9 else rng.choice(JUNK)
    return Case("sweep", ["sweep", str(EXAMPLES / rng.choice(SITES)), "--vary", vary, "--json"], note=vary)


def accel_case(rng: random.Random) -> Case:
    argv = ["accel", "--vehicle", rng.choice(["passenger-car", "bus", "semitrailer-design", "nobody", "[/]"]),
            "--from", _quantity(rng, ["km/h", "mph"], 0, 120), "--to", _quantity(rng, ["km/h", "mph"], 0, 130),
            "--grade", _quantity(rng, ["%"], -9, 9), "--json"]  # fmt: skip
    if rng.random() < 0.3:
        argv += ["--elevation", _quantity(rng, ["m", "ft"], -400, 4000)]
    return Case("accel options", argv, note=" ".join(argv[1:]))


def gaps_case(rng: random.Random) -> Case:
    argv = ["gaps", "--flow", _quantity(rng, ["veh/h"], 0, 3000), "--critical-gap", _quantity(rng, ["s"], 0, 10)]
    if rng.random() < 0.5:
        argv += ["--model", "m3", "--min-headway", _quantity(rng, ["s"], 0, 3)]
        if rng.random() < 0.5:
            argv += ["--free-fraction", rng.choice(["0.5", "1", "0", "1e-300", "1.2", "nan", "abc"])]
    return Case("gaps options", [*argv, "--json"], note=" ".join(argv[1:]))


def merge_area_case(rng: random.Random) -> Case:
    argv = ["merge-area", "--lanes", rng.choice(["2", "3", "4", "5", "1", "9", "x"]),
            "--mainline-flow", _quantity(rng, ["pc/h", "veh/h"], 0, 8000),
            "--ramp-flow", _quantity(rng, ["pc/h", "veh/h"], 0, 2500),
            "--accel-length", _quantity(rng, ["ft", "m"], 0, 1500),
            "--ffs", _quantity(rng, ["mph", "km/h"], 30, 80), "--ramp-ffs", _quantity(rng, ["mph", "km/h"], 20, 60)]  # fmt: skip
    if rng.random() < 0.3:
        argv += ["--heavy-vehicles", rng.choice(["0.1", "0", "1", "2", "-1", "nan"])]
    if rng.random() < 0.3:
        argv += ["--phf", rng.choice(["0.9", "1", "0.1", "nan", "2"])]
    return Case("merge-area options", [*argv, "--json"], note=" ".join(argv[1:]))


def queue_case(rng: random.Random) -> Case:
    argv = ["queue", "--arrive", _quantity(rng, ["veh/h"], 0, 6000)]
    argv += (["--arrive-density", _quantity(rng, ["veh/km", "veh/mi"], 0, 200)] if rng.random() < 0.5
             else ["--arrive-speed", _quantity(rng, ["km/h", "mph"], 0, 130)])  # fmt: skip
    argv += ["--discharge", _quantity(rng, ["veh/h"], 0, 6000)]
    argv += (["--discharge-density", _quantity(rng, ["veh/km"], 0, 200)] if rng.random() < 0.5
             else ["--discharge-speed", _quantity(rng, ["km/h"], 0, 130)])  # fmt: skip
    if rng.random() < 0.3:
        argv += ["--duration", _quantity(rng, ["h", "min", "s"], 0, 5)]
    return Case("queue options", [*argv, "--json"], note=" ".join(argv[1:]))


def landxml_case(rng: random.Random) -> Case:
    """A LandXML profile mutated as text (byte and line mutations) or with a station changed."""
    text = (REPO / "tests" / "data" / "landxml" / "ramp-b.xml").read_text()
    kept = True  # the alignments as written: Ramp B runs from 900 to 1500 m
    if rng.random() < 0.4:
        data = text.replace("1100 106.000", f"{rng.choice(['abc', '-1e309', '1100', '1500 1', 'nan 3', '900 1'])}")
        refuse, note = True, "a PVI unreadable or out of order"
        if data == text:
            data, refuse, note = mutate_bytes(text.encode("utf-8"), rng)
            kept = False
        else:
            data = data.encode("utf-8")
    else:
        data, refuse, note = mutate_bytes(text.encode("utf-8"), rng)
        kept = False  # a line moved or repeated may put another alignment's profile under Ramp B's name
    start = rng.choice(["1000 m", "1000 m", "899 m", "1600 m", "1000", "3281 ft"])
    refuse = refuse or start == "1000" or (kept and start in ("899 m", "1600 m"))  # a bare number; off Ramp B
    argv = ["accel", "--vehicle", "bus", "--from", "20 km/h", "--to", "60 km/h", "--profile", "p.xml",
            "--alignment", "Ramp B", "--profile-name", "Design", "--start-station", start, "--json"]  # fmt: skip
    return Case("LandXML profile", argv, {"p.xml": data}, refuse, [], f"{note}; start {start}")


def workbook_case(rng: random.Random) -> Case:
    """A corridor workbook, its bytes mutated (a workbook is a zip: most mutations break it)."""
    import io

    import openpyxl

    lines = [line for line in (EXAMPLES / "corridor.csv").read_text().splitlines() if not line.startswith("#")]
    book = openpyxl.Workbook()
    sheet = book.active
    for row in csv.reader(lines[: 1 + rng.randint(1, 3)]):
        sheet.append([float(c) if _is_number(c) else c for c in row])
    buffer = io.BytesIO()
    book.save(buffer)
    raw = buffer.getvalue()
    if rng.random() < 0.5:
        at = rng.randrange(len(raw))
        raw = raw[:at] + bytes([rng.randrange(256)]) + raw[at + 1 :]
        note = f"byte {at} changed"
    else:
        raw, note = raw[: rng.randrange(len(raw))], "truncated"
    argv = ["batch", "sites.xlsx", "--workers", "1", "--json", "out.json"]
    return Case("batch workbook", argv, {"sites.xlsx": raw}, False, ["out.json"], note)


PATHS: dict[str, Callable[[random.Random], Case]] = {
    "site file": site_case,
    "vehicle profile": vehicle_case,
    "profile file": profile_case,
    "policy table": policy_case,
    "critical-gap CSV": critical_gap_case,
    "batch CSV": batch_csv_case,
    "batch folder": batch_folder_case,
    "sweep": sweep_case,
    "accel options": accel_case,
    "gaps options": gaps_case,
    "merge-area options": merge_area_case,
    "queue options": queue_case,
    "LandXML profile": landxml_case,
    "batch workbook": workbook_case,
}


# ---------------------------------------------------------------- running a case


class _Stop(Exception):
    pass


def _alarm(signum: int, frame: Any) -> None:
    raise _Stop


def run_case(case: Case, folder: Path) -> Outcome:
    """Run one case in a fresh folder, in this process, and judge how it ended."""
    from mergecheck.cli import main

    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    for name, data in case.files.items():
        (folder / name).parent.mkdir(parents=True, exist_ok=True)
        (folder / name).write_bytes(data)
    out, err = io.StringIO(), io.StringIO()
    here = Path.cwd()
    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(int(3 * HANG))
    started = time.perf_counter()
    code: int | None = None
    failure: str | None = None
    detail = ""
    try:
        with contextlib.chdir(folder), contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main(case.argv)
            except SystemExit as done:
                code = done.code if isinstance(done.code, int) else 2
    except _Stop:
        failure = "hang"
    except Exception as error:  # escaped the command line: the worst failure
        failure, detail = "traceback", f"{type(error).__name__}: {error}"
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)
        assert Path.cwd() == here
    seconds = time.perf_counter() - started
    stderr = err.getvalue()
    if failure is None:
        failure, detail = _judge(case, code, stderr, out.getvalue(), folder, seconds)
    return Outcome(
        case, failure, code, seconds, f"{detail} | {stderr.strip()[-300:]}" if detail else stderr.strip()[-300:]
    )


def _judge(
    case: Case, code: int | None, stderr: str, stdout: str, folder: Path, seconds: float
) -> tuple[str | None, str]:
    if code == 3:
        return "traceback", stderr
    if code not in (0, 1, 2):
        return "wrong exit", f"exit {code}"
    if seconds > HANG:
        return "hang", f"{seconds:.1f} s"
    if code == 2:
        if "error:" not in stderr or not any(where in stderr for where in (*case.files, *_sources(case))):
            if not (case.path.startswith("batch") and stderr.strip() == ""):
                return "wrong exit", "exit 2 without a message naming the file or option"
        if any((folder / name).exists() for name in case.outputs) and not case.path.startswith("batch"):
            return "half write", "an output was written for refused input"
        return None, ""
    if case.must_refuse:
        return "silent accept", f"exit {code}"
    if stdout.lstrip().startswith(("{", "[")):
        try:
            json.loads(stdout, parse_constant=_refuse_constant)
        except ValueError as error:
            return "half write", f"standard output is not JSON: {error}"
    for name in case.outputs:
        if name.endswith(".json") and (folder / name).exists():
            try:
                json.loads((folder / name).read_text(), parse_constant=_refuse_constant)
            except ValueError as error:
                return "half write", f"{name} is not JSON: {error}"
    return None, ""


def _refuse_constant(name: str) -> None:
    raise ValueError(f"{name} is not JSON")


def _sources(case: Case) -> list[str]:
    """What an exit-2 message may name: the command line, an option, a bundled vehicle, a folder's file."""
    return ["command line", "--", "usage:", *(Path(n).name for n in case.files), *case.argv[1:2]]


def run(cases_per_path: int, seed: int, paths: list[str] | None = None, progress: bool = False) -> list[Outcome]:
    """Run ``cases_per_path`` seeded cases on each input path; every outcome, failing or not."""
    outcomes = []
    with tempfile.TemporaryDirectory(prefix="mergecheck-fuzz-") as scratch:
        for name in paths or list(PATHS):
            rng = random.Random(f"{seed}:{name}")
            for index in range(cases_per_path):
                outcomes.append(run_case(PATHS[name](rng), Path(scratch) / "case"))
                if progress and index % 100 == 99:
                    print(f"  {name}: {index + 1}", file=sys.stderr, flush=True)
    return outcomes


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases-per-path", type=int, default=850)
    parser.add_argument("--seed", type=int, default=20261205)
    parser.add_argument("--path", action="append", choices=sorted(PATHS), help="only these paths")
    args = parser.parse_args()
    started = time.perf_counter()
    outcomes = run(args.cases_per_path, args.seed, args.path, progress=True)
    kinds = ["traceback", "wrong exit", "hang", "silent accept", "half write"]
    print(
        f"{'path':<20} {'cases':>6} {'refused':>8} {'known bad':>10} {'slowest s':>10} "
        + " ".join(f"{k:>13}" for k in kinds)
    )
    for name in args.path or list(PATHS):
        mine = [o for o in outcomes if o.case.path == name]
        count = Counter(o.failure for o in mine)
        refused = sum(o.code == 2 for o in mine)
        bad = sum(o.case.must_refuse for o in mine)
        slowest = max(o.seconds for o in mine)
        print(
            f"{name:<20} {len(mine):>6} {refused:>8} {bad:>10} {slowest:>10.2f} "
            + " ".join(f"{count[k]:>13}" for k in kinds)
        )
    total = Counter(o.failure for o in outcomes)
    print(f"{'all':<20} {len(outcomes):>6} {sum(o.code == 2 for o in outcomes):>8} "
          f"{sum(o.case.must_refuse for o in outcomes):>10} {max(o.seconds for o in outcomes):>10.2f} "
          + " ".join(f"{total[k]:>13}" for k in kinds))  # fmt: skip
    print(f"{time.perf_counter() - started:.0f} s in all")
    for outcome in [o for o in outcomes if o.failure][:25]:
        print(f"\n[{outcome.failure}] {outcome.case.path}: {outcome.case.note[:200]!r}\n  {outcome.detail[:400]}")
    return 1 if any(o.failure for o in outcomes) else 0


if __name__ == "__main__":
    sys.exit(main())
