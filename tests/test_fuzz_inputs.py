"""Bad input never gives a traceback: random values in every field end in success or an InputError."""

from __future__ import annotations

import copy
import random
import sys
from pathlib import Path
from typing import Any

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from mergecheck.assessment import assess
from mergecheck.errors import InputError
from mergecheck.site import load_site

BASE = yaml.safe_load((Path(__file__).parent.parent / "examples" / "larkspur-road.yaml").read_text())
FIELDS = [
    ("mainline", "design_speed"),
    ("mainline", "operating_speed"),
    ("mainline", "lanes"),
    ("mainline", "adjacent_lane_flow"),
    ("mainline", "flow"),
    ("ramp", "controlling_speed"),
    ("ramp", "flow"),
    ("ramp", "vehicles"),
    ("geometry", "curve_end_to_convergence"),
    ("geometry", "lane_length"),
    ("geometry", "taper_length"),
    ("geometry", "profile"),
    ("criteria", "merge_speed_differential"),
]
VALUES = st.one_of(
    st.none(),
    st.integers(-10_000, 10_000),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(
        ["65 mph", "-5 km/h", "0 m", "1e9 m", "4 %", "nan m", "3 kg", "stop", "12 %", "0 veh/h", "5000 veh/h"]
    ),
    st.lists(st.integers(), max_size=3),
    st.dictionaries(st.text(max_size=5), st.floats(0, 1), max_size=2),
)


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(field=st.sampled_from(FIELDS), value=VALUES)
def test_any_value_in_any_field_is_handled(tmp_path: Path, field: tuple[str, str], value: Any) -> None:
    site = copy.deepcopy(BASE)
    site[field[0]][field[1]] = value
    path = tmp_path / "site.yaml"
    path.write_text(yaml.safe_dump(site))
    try:
        assess(load_site(str(path)))
    except InputError as error:
        assert str(path) in str(error)


@pytest.mark.parametrize("text", ["", "[]", "42", "name: only", "{mainline: 3}", ":::"])
def test_degenerate_files(tmp_path: Path, text: str) -> None:
    path = tmp_path / "site.yaml"
    path.write_text(text)
    with pytest.raises(InputError, match=r"site\.yaml"):
        load_site(str(path))


@settings(max_examples=300, deadline=None)
@given(text=st.one_of(st.text(max_size=20), st.from_regex(r"-?[0-9.e+]{1,6} ?[a-z/%^*()\[\]]{0,8}", fullmatch=True)),
       kind=st.sampled_from(["speed", "length", "grade", "time", "mass", "power", "weight_to_power", "flow", "density"]))  # fmt: skip
def test_parse_quantity_never_raises_anything_else(text: str, kind: str) -> None:
    from mergecheck.units import parse_quantity

    try:
        value = parse_quantity(text, kind, source="fuzz", field="f")
    except InputError as error:
        assert "fuzz: f:" in str(error)
    else:
        assert value == value and abs(value) != float("inf")  # finite


@settings(max_examples=150, deadline=None)
@given(cells=st.dictionaries(st.sampled_from(["name", "design_speed_kmh", "lanes", "adjacent_lane_flow_veh_h", "controlling_speed_kmh",
                                              "ramp_flow_veh_h", "vehicles", "lane_length_m", "taper_length_m", "grade_pct", "profile",
                                              "curve_end_to_convergence_m"]),
                             st.text(max_size=10), max_size=12))  # fmt: skip
def test_csv_rows_never_raise_anything_else(cells: dict[str, str]) -> None:
    from mergecheck.batch import SiteEntry, csv_row_to_site

    row: dict[str, str | None] = dict(cells)
    entry = SiteEntry("fuzz.csv: row 2", lambda: csv_row_to_site(row, "fuzz.csv: row 2"))
    try:
        entry.read()
    except InputError as error:
        assert str(error).startswith("fuzz.csv: row 2")


VEHICLE = yaml.safe_load((Path(__file__).parent.parent / "vehicle_profiles" / "passenger-car.yaml").read_text())


@settings(max_examples=150, deadline=None)
@given(
    block=st.sampled_from(["parameters", "capability"]),
    name=st.sampled_from(
        ["alpha", "beta", "grade_response", "mass", "power", "efficiency", "frontal_area", "full_power_speed"]
    ),
    value=VALUES,
)
def test_vehicle_profile_values_never_raise_anything_else(block: str, name: str, value: Any) -> None:
    from mergecheck.vehicles import parse_vehicle

    profile = copy.deepcopy(VEHICLE)
    if name in profile[block]:
        profile[block][name]["value"] = value
    else:
        profile[block][name] = {"value": value, "source": "fuzz"}
    try:
        vehicle = parse_vehicle(yaml.safe_dump(profile), "fuzz.yaml")
    except InputError as error:
        assert "fuzz.yaml" in str(error)
    else:
        assert vehicle.id == "passenger-car"


from mergecheck.units import KNOWN_UNITS  # noqa: E402

UNITS = [(unit, kind) for unit, (kind, _) in KNOWN_UNITS.items()]


@pytest.mark.parametrize(("unit", "kind"), UNITS)
def test_every_unit_read_without_pint_is_pints(unit: str, kind: str) -> None:
    """Each exact definition in the table equals pint's conversion (general-purpose reference library), 1e-15."""
    from mergecheck.units import registry, si_unit

    expected = float(registry().Quantity(f"1 {unit}").to(si_unit(kind) or "dimensionless").magnitude)
    assert KNOWN_UNITS[unit][1] == pytest.approx(expected, rel=1e-15)


@settings(max_examples=200, deadline=None)
@given(number=st.floats(min_value=-1e6, max_value=1e6, allow_nan=False), unit=st.sampled_from(UNITS))
def test_number_and_unit_read_as_pint_reads_them(number: float, unit: tuple[str, str]) -> None:
    """Every unit read without pint (:data:`mergecheck.units.KNOWN_UNITS`, exact definitions) gives pint's own
    conversion (general-purpose reference library) to 1e-12 relative."""
    from mergecheck.units import parse_quantity, si_unit, ureg

    text = f"{number!r} {unit[0]}"
    expected = float(ureg.Quantity(text).to(si_unit(unit[1]) or "dimensionless").magnitude)
    assert parse_quantity(text, unit[1], source="fuzz", field="f") == pytest.approx(expected, rel=1e-12, abs=1e-300)


def _fuzz_harness() -> Any:
    """scripts/fuzz_inputs.py, the mutation fuzzer whose long run prints the figures."""
    import importlib.util

    path = Path(__file__).parent.parent / "scripts" / "fuzz_inputs.py"
    spec = importlib.util.spec_from_file_location("fuzz_inputs", path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # its dataclasses look their module up
    spec.loader.exec_module(module)
    return module


FUZZ = _fuzz_harness()


@pytest.mark.parametrize("path", list(FUZZ.PATHS))
def test_mutated_inputs_on_every_path_end_cleanly(path: str, tmp_path: Path) -> None:
    """A seeded share (25 cases a path) of the long fuzz run: no traceback, no exit other than 0, 1 or 2, no
    exit 2 without a message naming the file or option, no hang, no known-bad input accepted, no output left
    behind for refused input, JSON that is JSON."""
    outcomes = [FUZZ.run_case(FUZZ.PATHS[path](rng), tmp_path / "case") for rng in [random.Random(f"ci:{path}")] * 25]
    failures = [(o.failure, o.case.note, o.detail) for o in outcomes if o.failure]
    assert not failures, failures
    if path in {"site file", "vehicle profile", "profile file", "batch folder"}:
        assert sum(o.case.must_refuse for o in outcomes) >= 5  # the oracle is exercised, not skipped
