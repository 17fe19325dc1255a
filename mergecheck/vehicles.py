"""Design-vehicle profiles: load, validate and build their acceleration models.

A profile is a YAML file, one vehicle a file, every parameter with its unit
and a note of where it comes from::

    id: semitrailer-design            # lower-case letters, digits and hyphens
    name: Tractor-semitrailer, loaded, 120 kg/kW
    category: truck                   # passenger-car | truck | bus | recreational
    model: power-limited              # see mergecheck.acceleration.ACCELERATION_MODELS
    parameters:
      mass: {value: 36287 kg, source: "..."}
      weight_to_power: {value: 120 kg/kW, source: "..."}    # or power: 300 kW
      ...
    capability: {...}   # linear-decreasing only: the car's power-limited parameters
    table:              # tabulated only
      speed_unit: km/h
      acceleration_unit: m/s^2
      rows: [[0, 2.1], [20, 1.9], [40, 1.5], [60, 1.0], [80, 0.6]]

Parameters and their ranges are listed in ``POWER_LIMITED`` (with
``POWER_LIMITED_DRIVER``), ``LINEAR_DECREASING`` and ``TABULATED`` below. Dimensionless parameters are
plain numbers; every other value needs its unit. The bundled profiles ship in
the installed package (``mergecheck.vehicle_profiles``) and are found with
importlib.resources; a user's own profile is given by its path wherever a
vehicle id is accepted.
"""

from __future__ import annotations

import functools
import importlib.resources
import math
from collections.abc import Iterable
from dataclasses import dataclass
from importlib.resources.abc import Traversable
from pathlib import Path
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from .acceleration import AccelerationModel, LinearDecreasing, PowerLimited, Tabulated, model_entry
from .dynamics import PowerLimitedVehicle
from .errors import InputError
from .inputs import file_kind, parse_yaml, read_text, validated
from .limits import VEHICLE_SPEED
from .units import parse_quantity, si_unit

Category = Literal["passenger-car", "truck", "bus", "recreational"]


@dataclass(frozen=True, slots=True)
class Spec:
    """What a parameter must be: kind of quantity, allowed range, default."""

    kind: str  # a units kind, or "ratio" for a plain number
    low: float
    high: float
    default: float | None = None


POWER_LIMITED: dict[str, Spec] = {
    "mass": Spec("mass", 200.0, 100_000.0),
    "power": Spec("power", 1e3, 2e6),
    "weight_to_power": Spec("weight_to_power", 0.002, 0.5),
    "efficiency": Spec("ratio", 0.5, 1.0),
    "drag_coefficient": Spec("ratio", 0.1, 2.0),
    "frontal_area": Spec("area", 0.5, 20.0),
    "rolling_surface": Spec("ratio", 0.5, 3.0),
    "rolling_c2": Spec("ratio", 0.0, 0.2),
    "rolling_c3": Spec("ratio", 0.0, 20.0),
    "driven_axle_share": Spec("ratio", 0.05, 1.0),
    "adhesion": Spec("ratio", 0.05, 1.2),
    "mass_factor": Spec("ratio", 1.0, 2.0, 1.0),
    "power_at_rest": Spec("ratio", 0.0, 1.0, 1.0),
    "full_power_speed": Spec("speed", 0.1, 50.0, 1.0),
    "power_elevation_exponent": Spec("ratio", 0.0, 1.5, 0.0),
}
POWER_LIMITED_DRIVER: dict[str, Spec] = {
    "driver_share": Spec("ratio", 0.1, 1.0, 1.0),
}
"""Driver behaviour of the power-limited model (:class:`mergecheck.acceleration.PowerLimited`)."""

LINEAR_DECREASING: dict[str, Spec] = {
    "alpha": Spec("acceleration", 0.05, 6.0),
    "beta": Spec("frequency", 0.0, 1.0),
    "grade_response": Spec("ratio", 0.0, 1.5),
    "upgrade_floor": Spec("ratio", 0.0, 1.0, 0.0),
    "downgrade_response": Spec("ratio", 0.0, 1.5),
}
TABULATED: dict[str, Spec] = {
    "grade_response": Spec("ratio", 0.0, 1.5, 1.0),
}


class _Entry(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)
    value: str | float
    source: str = Field(min_length=1)


class _Table(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)
    speed_unit: str
    acceleration_unit: str
    rows: list[tuple[float, float]] = Field(min_length=2)


class _ProfileFile(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)
    id: str = Field(pattern=r"^[a-z0-9][a-z0-9-]*$")
    name: str = Field(min_length=1)
    category: Category
    model: str
    parameters: dict[str, _Entry] = Field(default_factory=dict)
    capability: dict[str, _Entry] | None = None
    table: _Table | None = None


@dataclass(frozen=True, slots=True)
class ParameterRecord:
    """One profile parameter as written, its SI value and its source."""

    name: str
    text: str
    value: float
    source: str


@dataclass(frozen=True, slots=True)
class DesignVehicle:
    """A validated design vehicle with its acceleration model."""

    id: str
    name: str
    category: Category
    model_name: str
    model: AccelerationModel
    parameters: tuple[ParameterRecord, ...]
    origin: str
    """Bundled id or the path of the user's file."""

    @property
    def physical(self) -> PowerLimitedVehicle | None:
        """The power-limited body, read from the model (a truck's own, a passenger car's capability), if any."""
        if isinstance(self.model, PowerLimited):
            return self.model.vehicle
        if isinstance(self.model, LinearDecreasing):
            return self.model.capability
        return None

    @property
    def weight_to_power(self) -> float | None:
        """Mass over rated power. [kg/W]"""
        return None if self.physical is None else self.physical.weight_to_power


@functools.cache
def bundled_profiles() -> Traversable:
    """Folder of the profiles shipped with the package."""
    try:
        return importlib.resources.files("mergecheck.vehicle_profiles")
    except ModuleNotFoundError:  # running from a source tree that was not installed
        return Path(__file__).resolve().parent.parent / "vehicle_profiles"


def bundled_ids() -> list[str]:
    """Ids of the bundled design vehicles, sorted."""
    return list(_bundled_ids())


@functools.cache
def _bundled_ids() -> tuple[str, ...]:
    return tuple(sorted(p.name.removesuffix(".yaml") for p in bundled_profiles().iterdir() if p.name.endswith(".yaml")))


def load_vehicle(
    ref: str, *, relative_to: Path | None = None, source: str = "vehicle", field: str = ""
) -> DesignVehicle:
    """Load a design vehicle by bundled id or by the path of a profile file.

    A relative path is taken from ``relative_to`` when given (the folder of
    the site file that names it). ``source`` and ``field`` say where the
    reference was written, for the unknown-id message.

    Raises
    ------
    InputError
        Unknown id (the message lists the known ones), unreadable file, or a
        profile that breaks a rule (the message names file and field).
    """
    looks_like_path = ref.endswith((".yaml", ".yml")) or "/" in ref or "\\" in ref
    if looks_like_path:
        path = Path(ref) if relative_to is None or Path(ref).is_absolute() else relative_to / ref
        if file_kind(path, source, field or ref) is None:
            rule = f"no vehicle profile file {path} (and not a bundled id: {', '.join(bundled_ids())})"
            raise InputError(source, field or ref, rule)
        return parse_vehicle(read_text(path, "the vehicle profile"), str(path))
    if ref not in bundled_ids():
        raise InputError(
            source,
            field or ref,
            f"unknown vehicle id '{ref}'; known ids: {', '.join(bundled_ids())}, or a profile file path",
        )
    return parse_vehicle(_bundled_text(ref), ref)


@functools.cache
def _bundled_text(ref: str) -> str:
    return (bundled_profiles() / f"{ref}.yaml").read_text(encoding="utf-8")


def load_bundled() -> list[DesignVehicle]:
    """Every bundled design vehicle."""
    return [load_vehicle(vid) for vid in bundled_ids()]


@functools.lru_cache(maxsize=256)
def parse_vehicle(text: str, source: str) -> DesignVehicle:
    """Validate a profile's YAML text into a :class:`DesignVehicle` (immutable, so shared between sites)."""
    data = validated(parse_yaml(text, source), _ProfileFile, source, "a vehicle profile")
    try:
        entry = model_entry(data.model)
    except KeyError as error:
        raise InputError(source, "model", str(error.args[0])) from None

    records: list[ParameterRecord] = []
    physical: PowerLimitedVehicle | None = None
    model: AccelerationModel
    if entry.model is PowerLimited:
        _forbid(source, data, capability=False, table=False)
        physical, driver = _power_limited(data.parameters, source, "parameters", records, POWER_LIMITED_DRIVER)
        model = PowerLimited(physical, driver["driver_share"])
    elif entry.model is LinearDecreasing:
        _forbid(source, data, capability=True, table=False)
        values = _read(
            data.parameters, LINEAR_DECREASING, source, "parameters", records, optional=("downgrade_response",)
        )
        if data.capability is not None:
            physical, _ = _power_limited(data.capability, source, "capability", records)
        model = LinearDecreasing(
            values["alpha"],
            values["beta"],
            values["grade_response"],
            physical,
            upgrade_floor=values["upgrade_floor"],
            downgrade_response=values.get("downgrade_response"),
        )
    else:
        _forbid(source, data, capability=False, table=True)
        values = _read(data.parameters, TABULATED, source, "parameters", records)
        assert data.table is not None
        model = _tabulated(data.table, values["grade_response"], source)
    return DesignVehicle(
        id=data.id,
        name=data.name,
        category=data.category,
        model_name=data.model,
        model=model,
        parameters=tuple(records),
        origin=source,
    )


def _forbid(source: str, data: _ProfileFile, *, capability: bool, table: bool) -> None:
    if data.capability is not None and not capability:
        raise InputError(
            source, "capability", f"only the linear-decreasing model takes a capability block, not {data.model}"
        )
    if data.table is not None and not table:
        raise InputError(source, "table", f"only the tabulated model takes a table, not {data.model}")
    if table and data.table is None:
        raise InputError(source, "table", "the tabulated model needs a table of speed and acceleration")


def _power_limited(
    entries: dict[str, _Entry],
    source: str,
    block: str,
    records: list[ParameterRecord],
    behaviour: dict[str, Spec] | None = None,
) -> tuple[PowerLimitedVehicle, dict[str, float]]:
    """The vehicle body from a block, and the values of the driver-behaviour parameters read beside it."""
    has_power, has_ratio = "power" in entries, "weight_to_power" in entries
    if has_power == has_ratio:
        raise InputError(source, f"{block}.power", "give exactly one of power and weight_to_power")
    specs = POWER_LIMITED | (behaviour or {})
    values = _read(entries, specs, source, block, records, optional=("power", "weight_to_power"))
    driver = {name: values.pop(name) for name in behaviour or {}}
    power = values["power"] if has_power else values["mass"] / values["weight_to_power"]
    values.pop("weight_to_power", None)
    values["power"] = power
    return PowerLimitedVehicle(**values), driver


def _read(
    entries: dict[str, _Entry],
    specs: dict[str, Spec],
    source: str,
    block: str,
    records: list[ParameterRecord],
    optional: Iterable[str] = (),
) -> dict[str, Any]:
    unknown = sorted(set(entries) - set(specs))
    if unknown:
        raise InputError(source, f"{block}.{unknown[0]}", f"unknown parameter; valid parameters: {', '.join(specs)}")
    values: dict[str, float] = {}
    for name, spec in specs.items():
        field = f"{block}.{name}"
        if name not in entries:
            if spec.default is None and name not in optional:
                raise InputError(source, field, "required parameter is missing")
            if spec.default is not None:
                values[name] = spec.default
            continue
        entry = entries[name]
        if spec.kind == "ratio":
            if isinstance(entry.value, str):
                try:
                    value = float(entry.value)
                except ValueError:
                    raise InputError(
                        source, f"{field}.value", f"expected a plain number, got {entry.value!r}"
                    ) from None
            else:
                value = float(entry.value)
            if not math.isfinite(value):
                raise InputError(source, f"{field}.value", "must be a finite number")
        else:
            value = parse_quantity(entry.value, spec.kind, source=source, field=f"{field}.value")
        if not spec.low <= value <= spec.high:
            raise InputError(source, f"{field}.value", f"{entry.value} is outside the plausible range {_range(spec)}")
        values[name] = value
        records.append(ParameterRecord(field, str(entry.value), value, entry.source))
    return values


def _range(spec: Spec) -> str:
    if spec.kind == "ratio":
        return f"{spec.low:g} to {spec.high:g}"
    return f"{spec.low:g} to {spec.high:g} {si_unit(spec.kind)}"


def _tabulated(table: _Table, grade_response: float, source: str) -> Tabulated:
    factors = []
    for name, unit, kind in (
        ("speed_unit", table.speed_unit, "speed"),
        ("acceleration_unit", table.acceleration_unit, "acceleration"),
    ):
        factors.append(parse_quantity(f"1 {unit}", kind, source=source, field=f"table.{name}"))
    speeds = [row[0] * factors[0] for row in table.rows]
    accelerations = [row[1] * factors[1] for row in table.rows]
    top_speed, most = VEHICLE_SPEED.high, LINEAR_DECREASING["alpha"].high
    for i, (v, a) in enumerate(zip(speeds, accelerations, strict=True)):
        if not (math.isfinite(v) and math.isfinite(a)) or v < 0:
            raise InputError(source, f"table.rows.{i}", "speed must be finite and not negative, acceleration finite")
        if v > top_speed or abs(a) > most:  # accelerations: the linear-decreasing model's largest alpha
            rule = f"speed must be at most {top_speed * 3.6:g} km/h and acceleration within +/- {most:g} m/s^2"
            raise InputError(source, f"table.rows.{i}", rule)
        if i and v <= speeds[i - 1]:
            raise InputError(source, f"table.rows.{i}", "speeds must increase from row to row")
    return Tabulated(tuple(speeds), tuple(accelerations), grade_response)
