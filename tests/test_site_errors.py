"""Every kind of bad site file gives exit code 2 and a message naming the file and the field path."""

from __future__ import annotations

import copy
import json
import os
import re
import shutil
from pathlib import Path
from typing import Any

import pytest
import yaml

from mergecheck.errors import InputError
from mergecheck.inputs import _CONTROL, _is_control, parse_yaml
from mergecheck.units import parse_quantity

BASE: dict[str, Any] = yaml.safe_load(
    """
name: Test site
mainline: {design_speed: 110 km/h, operating_speed: 100 km/h, lanes: 3, adjacent_lane_flow: 1400 veh/h}
ramp:
  controlling_speed: 50 km/h
  flow: 600 veh/h
  vehicles: {passenger-car: 0.85, semitrailer-design: 0.15}
geometry:
  entrance: parallel
  curve_end_to_convergence: 80 m
  lane_length: 300 m
  taper_length: 90 m
  profile:
    - {from: 0 m, grade: 3 %}
    - {from: 250 m, grade: 1.5 %}
"""
)


def edited(path: tuple[str | int, ...], value: Any) -> dict[str, Any]:
    site = copy.deepcopy(BASE)
    node = site
    for key in path[:-1]:
        node = node[key]
    if value is DELETE:
        del node[path[-1]]
    else:
        node[path[-1]] = value
    return site


DELETE = object()

CASES = [
    (("geometry", "profile", 1, "from"), "0 m", "geometry.profile.1.from", "increase"),
    (("geometry", "lane_length"), "-300 m", "geometry.lane_length", "must lie between 0 and 5000 m"),
    (("geometry", "lane_length"), "0 m", "geometry.lane_length", "positive"),
    (("geometry", "taper_length"), "0 ft", "geometry.taper_length", "positive"),
    (("ramp", "controlling_speed"), "100 km/h", "ramp.controlling_speed", "below the mainline operating speed"),
    (("ramp", "controlling_speed"), "120 km/h", "ramp.controlling_speed", "below the mainline operating speed"),
    (("geometry", "profile", 0, "grade"), "11 %", "geometry.profile.0.grade", "steeper"),
    (("ramp", "vehicles"), {"passenger-car": 0.85, "semitrailer-design": 0.25}, "ramp.vehicles", "sum to 1"),
    (("ramp", "vehicles"), {"passenger-car": 0.85, "tank": 0.15}, "ramp.vehicles.tank", "known ids: bus"),
    (("mainline", "design_speed"), "110", "mainline.design_speed", "unit is required"),
    (("mainline", "design_speed"), "110 m", "mainline.design_speed", "wrong kind"),
    (("mainline", "adjacent_lane_flow"), "nan veh/h", "mainline.adjacent_lane_flow", "finite"),
    (("mainline", "lanes"), 0, "mainline.lanes", "greater than or equal to 1"),
    (("mainline", "design_speed"), DELETE, "mainline.design_speed", "required field is missing"),
    (("mainline", "speed_limit"), "100 km/h", "mainline.speed_limit", "unknown field"),
    (("geometry", "entrance"), "loop", "geometry.entrance", "parallel"),
    (("geometry", "profile", 1, "from"), "900 m", "geometry.profile.1.from", "beyond the end of the taper"),
    (
        ("criteria",),
        {"merge_speed_differential": "120 km/h"},
        "criteria.merge_speed_differential",
        "below the operating speed",
    ),
    (
        ("criteria",),
        {"vehicles": {"bus": {"merge_speed_differential": "5 km/h"}}},
        "criteria.vehicles.bus",
        "not listed",
    ),
    (("policy",), "missing-table.yaml", "policy", "no file missing-table.yaml was found"),
]


@pytest.mark.parametrize(("path", "value", "field", "rule"), CASES, ids=[c[2] + ":" + c[3] for c in CASES])
def test_bad_site_file(
    cli: Any, tmp_path: Path, path: tuple[str | int, ...], value: Any, field: str, rule: str
) -> None:
    site_file = tmp_path / "site.yaml"
    site_file.write_text(yaml.safe_dump(edited(path, value)))
    report = tmp_path / "report.md"
    run = cli("check", site_file, "--markdown", report)
    assert run.code == 2, run.stdout
    assert field in run.stderr and rule in run.stderr
    assert "Traceback" not in run.stderr
    assert not report.exists()


def test_not_a_mapping_and_bad_yaml(cli: Any, tmp_path: Path) -> None:
    for text, rule in (("- just\n- a list\n", "mapping"), ("name: [unclosed\n", "not valid YAML")):
        site_file = tmp_path / "site.yaml"
        site_file.write_text(text)
        run = cli("check", site_file)
        assert run.code == 2 and rule in run.stderr and str(site_file) in run.stderr


def test_missing_site_file(cli: Any, tmp_path: Path) -> None:
    run = cli("check", tmp_path / "nowhere.yaml")
    assert run.code == 2 and "cannot read" in run.stderr


def test_square_brackets_in_user_text_are_text_not_markup(cli: Any, repo: Path, tmp_path: Path) -> None:
    """A site name, a value and a vehicle id with square brackets (console markup syntax) print as written and
    never raise: a name is shown literally, bad values end with exit 2 and a message naming the field."""
    text = (repo / "examples" / "willowmere-level.yaml").read_text(encoding="utf-8")
    named = tmp_path / "named.yaml"
    named.write_text(text.replace("name: Willowmere", "name: Larkspur [/] Road [link=http://x]click[/link] Willowmere"))
    run = cli("check", named)
    assert run.code == 0 and "Traceback" not in run.stderr
    assert "Larkspur [/] Road [link=http://x]click[/link]" in run.stdout
    bad = tmp_path / "bad.yaml"
    bad.write_text(text.replace("lane_length: 300 m", 'lane_length: "[/] m"'))
    run = cli("check", bad)
    assert run.code == 2 and "geometry.lane_length" in run.stderr and "[/] m" in run.stderr
    run = cli("accel", "--vehicle", "[/]", "--from", "0 km/h", "--to", "50 km/h", "--grade", "0 %")
    assert run.code == 2 and "Traceback" not in run.stderr and "[/]" in run.stderr


def test_a_byte_that_is_not_utf8_is_a_clear_error_everywhere(cli: Any, repo: Path, tmp_path: Path) -> None:
    """One byte that is not UTF-8 in a site, vehicle or policy file: exit 2 with the file and the byte named;
    in a batch folder only that site is reported unreadable, the others are checked."""
    good = (repo / "examples" / "willowmere-level.yaml").read_bytes()
    bad = good.replace(b"Willowmere Avenue", b"Willowm\xe9re Avenue")
    site = tmp_path / "latin1.yaml"
    site.write_bytes(bad)
    run = cli("check", site)
    assert run.code == 2 and "not UTF-8 text" in run.stderr and "0xe9" in run.stderr and "Traceback" not in run.stderr
    vehicle = tmp_path / "truck.yaml"
    vehicle.write_bytes((repo / "vehicle_profiles" / "bus.yaml").read_bytes() + b"\n# caf\xe9\n")
    run = cli("accel", "--vehicle", vehicle, "--from", "0 km/h", "--to", "50 km/h", "--grade", "0 %")
    assert run.code == 2 and "the vehicle profile is not UTF-8 text" in run.stderr
    policy = tmp_path / "table.yaml"
    policy.write_bytes((repo / "examples" / "agency-policy-table.yaml").read_bytes() + b"\n# \xff\n")
    with_policy = tmp_path / "with-policy.yaml"
    with_policy.write_bytes(good + f"\npolicy: {policy}\n".encode())
    run = cli("check", with_policy)
    assert run.code == 2 and "the policy table is not UTF-8 text" in run.stderr
    folder = tmp_path / "sites"
    folder.mkdir()
    (folder / "a.yaml").write_bytes(good)
    (folder / "b.yaml").write_bytes(bad)
    run = cli("batch", folder, "--json", tmp_path / "out.json")
    assert run.code == 2 and "Traceback" not in run.stderr  # an unreadable site makes the batch exit 2
    doc = json.loads((tmp_path / "out.json").read_text(encoding="utf-8"))
    assert doc["summary"]["sites"] == 2 and doc["summary"]["unreadable"] == 1 and doc["summary"]["meets"] == 1
    assert "not UTF-8 text" in json.dumps(doc["sites"])


@pytest.mark.parametrize(
    ("text", "kind"),
    [("0.03 pc", "grade"), ("3 deg", "grade"), ("5 rpm", "flow"), ("1400 1/h", "flow"), ("2 veh*m", "length"),
     ("65 pc*mph", "speed"), ("12 rad/km", "density")],
)  # fmt: skip
def test_a_unit_of_another_kind_is_refused(text: str, kind: str) -> None:
    """Pint reads counts, angles and revolutions as pure numbers, so '0.03 pc' passed as a 3 % grade and '5 rpm'
    as a flow: a grade is written in percent, a flow or density per vehicle or passenger car, nothing else."""
    from mergecheck.units import parse_quantity

    with pytest.raises(InputError, match=rf"site\.yaml: f: wrong kind of quantity '{re.escape(text)}'"):
        parse_quantity(text, kind, source="site.yaml", field="f")


@pytest.mark.parametrize(
    "text",
    ["300.0.5 m", "1.2.3 m", "100 m?", "[1] m", "10**400 m", "10**10**10 m", "2*150 m", "1" + "0" * 400 + " m"],
)
def test_a_quantity_is_a_plain_number_and_a_unit(text: str) -> None:
    """Typos are never read as arithmetic or as another value (before, '300.0.5 m' read as 150 m and
    '1.2.3 m' as 0.36 m, '10**10**10 m' ran for over a minute): each is refused at once, naming the field."""
    import time

    from mergecheck.units import parse_quantity

    start = time.perf_counter()
    with pytest.raises(InputError, match=r"geometry\.lane_length: (cannot read|.*not a finite)"):
        parse_quantity(text, "length", source="site.yaml", field="geometry.lane_length")
    assert time.perf_counter() - start < 1.0  # a bound, not a benchmark: the pint power evaluation took minutes


def test_plain_quantities_still_read(cli: Any) -> None:
    """The forms the documentation uses (common practice units; conversions by pint, a reference library)."""
    from mergecheck.units import parse_quantity

    cases = {("65 mph", "speed"): 65 * 0.44704, ("1.2 m/s^2", "acceleration"): 1.2, ("0.5 m/s²", "acceleration"): 0.5,
             ("120 veh/km", "density"): 0.12, ("0.03 1/s", "frequency"): 0.03, ("-3 %", "grade"): -0.03,
             ("150 lb/hp", "weight_to_power"): 150 * 0.45359237 / 745.69987158227022}  # fmt: skip
    for (text, kind), expected in cases.items():
        assert parse_quantity(text, kind, source="s", field="f") == pytest.approx(expected, rel=1e-9)
    run = cli("accel", "--vehicle", "passenger-car", "--from", "1e300 km/h", "--to", "50 km/h", "--grade", "0 %")
    assert run.code == 2 and "between 0 and 300 km/h" in run.stderr and "Traceback" not in run.stderr


def test_an_integer_of_thousands_of_digits_is_an_input_error(tmp_path: Path, cli: Any, repo: Path) -> None:
    text = (repo / "examples" / "willowmere-level.yaml").read_text(encoding="utf-8")
    site = tmp_path / "huge.yaml"
    site.write_text(text.replace("lanes: 2", "lanes: " + "9" * 5000))
    run = cli("check", site)
    assert run.code == 2 and "Traceback" not in run.stderr and "huge.yaml" in run.stderr


def test_an_output_path_that_is_a_folder_is_an_input_error(cli: Any, repo: Path, tmp_path: Path) -> None:
    run = cli("check", repo / "examples" / "willowmere-level.yaml", "--json", tmp_path)
    assert run.code == 2 and "is a folder" in run.stderr and "Traceback" not in run.stderr


def test_an_internal_error_has_its_own_exit_code(monkeypatch: Any, capsys: Any) -> None:
    """A defect must never read as a verdict: exit 3 (not 1, 'falls short'), with a request for a report."""
    from mergecheck import api
    from mergecheck import cli as command_line

    def broken(*_: Any, **__: Any) -> Any:
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(api, "assess", broken)
    code = command_line.main(["check", str(Path(__file__).parent.parent / "examples" / "willowmere-level.yaml")])
    assert code == command_line.EXIT_INTERNAL == 3
    err = capsys.readouterr().err
    assert "internal error" in err and "please report it" in err


def test_a_key_given_twice_is_refused(cli: Any, repo: Path, tmp_path: Path) -> None:
    """Before, the last of two lane_length entries won silently."""
    text = (repo / "examples" / "willowmere-level.yaml").read_text(encoding="utf-8")
    site = tmp_path / "twice.yaml"
    site.write_text(text.replace("  lane_length: 300 m\n", "  lane_length: 300 m\n  lane_length: 150 m\n"))
    run = cli("check", site)
    assert run.code == 2 and "'lane_length' is given twice" in run.stderr and "twice.yaml" in run.stderr


def test_a_batch_chunk_of_unreadable_sites_is_reported(tmp_path: Path, cli: Any) -> None:
    """Before, a worker whose every site was unreadable raised 'need at least one array to concatenate'."""
    csv_file = tmp_path / "sites.csv"
    csv_file.write_text("name,design_speed\nOnly row,not a speed\n", encoding="utf-8")
    run = cli("batch", csv_file, "--workers", "1")
    assert run.code == 2 and "Traceback" not in run.stderr and "1 unreadable" in " ".join(run.stdout.split())


@pytest.mark.parametrize(
    ("vary", "rule"),
    [
        ("weight_to_power=0 kg/kW:100 kg/kW:50 kg/kW", "kg/kW, as a vehicle profile"),
        ("adjacent_lane_flow=-1000 veh/h:1000 veh/h:1000 veh/h", "3000 veh/h, as mainline.adjacent_lane_flow"),
        ("adjacent_lane_flow=1000 veh/h:4000 veh/h:1000 veh/h", "3000 veh/h, as mainline.adjacent_lane_flow"),
        ("lane_length=1 m:1e300 m:1e299 m", "5000 m, as geometry.lane_length"),
        ("grade=-1 %:50 %:10 %", "as a profile grade"),
        ("adjacent_lane_flow=0 veh/h:0.5 veh/h:0.25 veh/h", "must be 0 or lie between 1 and 3000 veh/h"),
        ("lane_length=200 m:600 m:1e-300 m", "4e+302 points; at most 200"),
    ],
)
def test_sweep_values_are_checked_as_the_site_file_checks_them(cli: Any, repo: Path, vary: str, rule: str) -> None:
    """Before, a sweep divided by zero, raised from the headway model, exhausted memory or accepted -1000 veh/h."""
    run = cli("sweep", repo / "examples" / "willowmere-level.yaml", "--vary", vary)
    assert run.code == 2 and rule in " ".join(run.stderr.split()) and "Traceback" not in run.stderr


@pytest.mark.parametrize(
    ("old", "new", "field", "rule"),
    [
        ("ramp_initial_speeds: [0, ", "ramp_initial_speeds: [.nan, ", "ramp_initial_speeds.0", "finite number"),
        ("  - [230, 210", "  - [-230, 210", "lengths.0.0", "greater than or equal to 0"),
        ("merge_speeds:   [65,", "merge_speeds:   [85,", "", "below its highway design speed"),
        ("highway_speeds: [80,", "highway_speeds: [.inf,", "highway_speeds.0", "finite number"),
    ],
)
def test_a_policy_table_out_of_range_is_refused(
    cli: Any, repo: Path, tmp_path: Path, old: str, new: str, field: str, rule: str
) -> None:
    """A policy table is data a user supplies: NaN speeds used to give NaN in the JSON (not valid JSON) and a
    car that "cannot reach"; a negative length a policy minimum of -395 m. Each is refused by field and rule."""
    text = (repo / "examples" / "agency-policy-table.yaml").read_text()
    assert old in text
    table = tmp_path / "table.yaml"
    table.write_text(text.replace(old, new, 1))
    site = tmp_path / "site.yaml"
    site.write_text((repo / "examples" / "willowmere-level.yaml").read_text() + f"\npolicy: {table}\n")
    run = cli("check", site, "--json")
    assert run.code == 2 and str(table) in run.stderr and field in run.stderr and rule in run.stderr, run.stderr


def test_control_characters_are_refused_on_every_path(cli: Any, repo: Path, tmp_path: Path) -> None:
    """An escape sequence in a name reaches the terminal raw (ECMA-48: ESC ] 8 plants a hyperlink, ESC [ 2J clears
    the screen) and a bidirectional override (U+202E) reorders what a report shows: refused in a site file, a
    CSV row and a command-line argument, naming where; a file name that holds one is echoed escaped."""
    site = tmp_path / "site.yaml"
    bad = yaml.safe_load((repo / "examples" / "willowmere-level.yaml").read_text())
    bad["name"] = "Willowmere \x1b]8;;http://example.invalid\x07Avenue"
    site.write_text(yaml.safe_dump(bad))
    run = cli("check", site)
    assert run.code == 2 and "name: holds the control character U+001B" in run.stderr and "\x1b" not in run.stderr
    bad["name"] = "Willowmere \u202e Avenue"
    site.write_text(yaml.safe_dump(bad, allow_unicode=True))
    assert "U+202E" in cli("check", site).stderr
    rows = tmp_path / "gaps.csv"
    rows.write_text("accepted_gap_s,largest_rejected_gap_s\n4.1,2.0\x1b[2J\n")
    run = cli("critical-gap", rows)
    assert run.code == 2 and "row 2: holds the control character U+001B" in run.stderr
    run = cli("accel", "--vehicle", "bus\x1b[2J", "--from", "0 km/h", "--to", "50 km/h", "--grade", "0 %")
    assert run.code == 2 and "--vehicle: holds the control character U+001B" in run.stderr


def test_one_vehicle_listed_twice_is_refused(cli: Any, repo: Path, tmp_path: Path) -> None:
    """By id and again by the path of the same profile, its flow would count twice."""
    site = yaml.safe_load((repo / "examples" / "willowmere-level.yaml").read_text())
    copy = tmp_path / "truck.yaml"
    copy.write_text((repo / "examples" / "vehicle-grain-truck.yaml").read_text())
    site["ramp"]["vehicles"] = {"grain-truck.yaml": 0.2, "truck.yaml": 0.3, "passenger-car": 0.5}
    site.get("criteria", {}).pop("vehicles", None)
    site.get("gap_acceptance", {}).pop("critical_gaps", None)
    (tmp_path / "grain-truck.yaml").write_text(copy.read_text())
    path = tmp_path / "site.yaml"
    path.write_text(yaml.safe_dump(site))
    run = cli("check", path)
    assert run.code == 2 and "ramp.vehicles.truck.yaml" in run.stderr, run.stderr
    assert "'grain-truck' is already listed as 'grain-truck.yaml'" in run.stderr


@pytest.mark.parametrize(("row", "rule"), [("[0, 60]", "within +/- 6 m/s^2"), ("[400, 0.1]", "at most 300 km/h")])
def test_a_tabulated_vehicle_is_refused_outside_physical_ranges(
    cli: Any, repo: Path, tmp_path: Path, row: str, rule: str
) -> None:
    profile = tmp_path / "truck.yaml"
    text = (repo / "examples" / "vehicle-grain-truck.yaml").read_text()
    profile.write_text(text.replace("- [100, 0.03]", "- [100, 0.03]\n    - " + row) if "400" in row
                       else text.replace("- [0, 0.55]", "- " + row))  # fmt: skip
    run = cli("accel", "--vehicle", profile, "--from", "0 km/h", "--to", "50 km/h", "--grade", "0 %")
    assert run.code == 2 and "table.rows." in run.stderr and rule in run.stderr, run.stderr


def test_a_misspelt_key_is_named_with_the_field_it_likely_means(cli: Any, repo: Path, tmp_path: Path) -> None:
    """Before, 'lane_lenght' gave 'geometry.lane_length: required field is missing' without the key typed."""
    site = tmp_path / "site.yaml"
    site.write_text((repo / "examples" / "larkspur-road.yaml").read_text().replace("lane_length:", "lane_lenght:"))
    run = cli("check", site)
    assert run.code == 2 and "geometry.lane_lenght: unknown field: did you mean 'lane_length'?" in run.stderr


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ("lane_length: 300 m", "lane_length: 300", "geometry.lane_length: a unit is required: write '300 m' or '300 ft'"),
        ("adjacent_lane_flow: 1400 veh/h", "adjacent_lane_flow: 1400", "mainline.adjacent_lane_flow: a unit is required"),
        ("operating_speed: 100 km/h", "operating_speed: 100 m", "mainline.operating_speed: wrong kind of quantity"),
        ("operating_speed: 100 km/h", "operating_speed: 1000 km/h", "mainline.operating_speed: must lie between 40 and 160 km/h"),
    ],
)  # fmt: skip
def test_site_file_quantities_say_what_is_wrong(
    cli: Any, repo: Path, tmp_path: Path, old: str, new: str, message: str
) -> None:
    """A plain number gave pydantic's 'Input should be a valid string'; every quantity field now reads its unit and
    range as the command line does (mergecheck/fields.py, ranges in mergecheck/limits.py)."""
    site = tmp_path / "site.yaml"
    text = (repo / "examples" / "larkspur-road.yaml").read_text()
    assert old in text
    site.write_text(text.replace(old, new))
    run = cli("check", site)
    assert run.code == 2 and message in run.stderr, run.stderr


def test_a_quantity_option_may_be_given_unquoted(cli: Any, repo: Path) -> None:
    """'--from 0 km/h' unquoted used to end in 'unrecognized arguments: km/h km/h %'; the words are one value."""
    quoted = cli("accel", "--vehicle", "bus", "--from", "0 km/h", "--to", "60 km/h", "--grade", "-2 %", "--json")
    unquoted = cli(
        "accel", "--vehicle", "bus", "--from", "0", "km/h", "--to", "60", "km/h", "--grade", "-2", "%", "--json"
    )
    assert unquoted.code == 0 and unquoted.json() == quoted.json()
    files = cli("check", repo / "examples" / "willowmere-level.yaml", "--html", "x", "y")
    assert files.code == 2 and "unrecognized arguments: y" in files.stderr  # a file name is never joined


@pytest.mark.parametrize(
    ("written", "rule"),
    [
        ('"Ave\\e[2J"', "holds the control character U+001B"),
        ('"Ave\\x9b"', "holds the control character U+009B"),
        ('"Ave\\u202e"', "holds the control character U+202E"),
        ('"Ave\\N"', "holds the control character U+0085"),
        ("Ave\u202e", "holds the control character U+202E"),
        ("Ave\x1b[2J", "not valid YAML"),  # the YAML reader refuses a raw escape itself
    ],
)
def test_a_control_character_is_refused_whether_written_raw_or_as_a_yaml_escape(written: str, rule: str) -> None:
    """Files without a backslash or a control character skip the walk over every loaded string: both ways of
    writing one must still be caught (the double-quoted escapes \\e, \\x, \\u and \\N for U+0085 of the YAML 1.2
    specification, section 5.7, from memory)."""
    with pytest.raises(InputError, match=re.escape(rule)):
        parse_yaml(f"name: {written}\n", "site.yaml")


def test_the_control_character_pattern_is_the_character_rule() -> None:
    assert all(_is_control(c) == bool(_CONTROL.fullmatch(c)) for c in map(chr, range(0x110000)))


def test_a_path_the_system_cannot_look_up_is_an_input_error(cli: Any, tmp_path: Path) -> None:
    """A file name of 300 characters is longer than any common file system allows (255 bytes a name: common
    practice on Linux, macOS and Windows): every command that takes a path says so, naming the field."""
    long = "n" * 300
    site = tmp_path / "site.yaml"
    cases = [
        (edited(("policy",), long), "policy"),
        (edited(("ramp", "vehicles"), {f"{long}.yaml": 1.0}), f"ramp.vehicles.{long}.yaml"),
    ]
    for data, field in cases:
        site.write_text(yaml.safe_dump(data))
        run = cli("check", site)
        assert run.code == 2 and f"{field}: cannot look up" in run.stderr and "Traceback" not in run.stderr, field
    for args in (["batch", long], ["batch", f"{long}.csv"], ["accel", "--vehicle", f"{long}.yaml", "--from",
                 "0 km/h", "--to", "50 km/h", "--grade", "0 %"]):  # fmt: skip
        run = cli(*args)
        assert run.code == 2 and "cannot look up" in run.stderr and "internal error" not in run.stderr, args


@pytest.mark.skipif(not hasattr(os, "mkfifo") or not Path("/dev/zero").exists(), reason="POSIX pipes and devices")
def test_a_pipe_or_a_device_is_refused_not_read(cli: Any, repo: Path, tmp_path: Path) -> None:
    """A named pipe would wait for a writer forever and /dev/zero never ends: every input path refuses anything
    but a regular file at once, and a batch folder reports such an entry and assesses the rest."""
    pipe = tmp_path / "pipe.yaml"
    os.mkfifo(pipe)
    book = tmp_path / "book.xlsx"
    os.mkfifo(book)
    for args in (["check", pipe], ["check", "/dev/zero"], ["batch", book], ["critical-gap", "/dev/zero"],
                 ["accel", "--vehicle", pipe, "--from", "0 km/h", "--to", "50 km/h", "--grade", "0 %"]):  # fmt: skip
        run = cli(*args)
        assert run.code == 2 and "not a regular file" in run.stderr, args
    shutil.copy(repo / "examples" / "willowmere-level.yaml", tmp_path)
    run = cli("batch", tmp_path)
    assert run.code == 2 and "1 meet" in run.stdout and "1 unreadable" in run.stdout
    assert "pipe.yaml: cannot read the file: it is a device, pipe or socket" in " ".join(run.stdout.split())


@pytest.mark.parametrize(
    ("text", "rule"),
    [
        ("1 " + "n" * 60 + "!", "cannot read"),  # letters that could be cut into unit names in 2^59 ways
        ("1" * 20_000 + "x", "cannot read"),  # digits that a number pattern could split 20,000^2 / 2 ways
        ("1" * 20_000, "a unit is required"),
    ],
    ids=["letters", "digits", "bare digits"],
)
def test_a_long_run_of_letters_or_digits_is_refused_like_a_short_one(text: str, rule: str) -> None:
    """Found by the fuzzer: each once took minutes (a pattern that could read the same characters in many ways
    and tried them all before refusing); read in one pass, they are refused with the usual message."""
    with pytest.raises(InputError, match=rule):
        parse_quantity(text, "length", source="site.yaml", field="geometry.lane_length")


def test_aliases_nested_nine_deep_are_walked_once(cli: Any, tmp_path: Path) -> None:
    """Found looking for inputs that hang: nine lists of nine aliases, nested nine deep, hold 9^9 strings by
    reference (the 'billion laughs' of XML, in YAML). A backslash anywhere makes the reader look at every loaded
    string; it now looks at each list once, so the file is refused for its unknown field at once, and a control
    character in the shared leaf is still found."""
    levels = ["a: &a [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    for low, high in zip("abcdefgh", "bcdefghi", strict=True):
        levels.append(f"{high}: &{high} [{', '.join([f'*{low}'] * 9)}]")
    site = tmp_path / "laughs.yaml"
    site.write_text('name: "Laughs \\\\ site"\n' + "\n".join(levels) + "\n")
    run = cli("check", site)
    assert run.code == 2 and "a: unknown field" in run.stderr
    with pytest.raises(InputError, match=r"^x: a\.1: holds the control character U\+0007"):  # where first held
        parse_yaml('a: &a [ok, "lo\\a"]\nb: &b [*a, *a, *a]\nc: [*b, *b]\n', "x")  # the bell, escaped


def test_a_text_input_larger_than_any_real_one_is_refused_unread(cli: Any, tmp_path: Path, monkeypatch: Any) -> None:
    """A file far larger than any site, profile or batch (a wrong file chosen) is refused by its size before it
    is read into memory; shown against a limit lowered for the test."""
    from mergecheck import inputs

    site = tmp_path / "site.yaml"
    site.write_text(yaml.safe_dump(BASE))
    monkeypatch.setattr(inputs, "LARGEST_TEXT", 100)
    run = cli("check", site)
    assert run.code == 2 and "cannot read the file: it is larger than 100 bytes" in run.stderr
