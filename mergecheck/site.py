"""The site file: one entrance terminal, validated into SI values.

YAML, read with a safe loader, validated with pydantic into the models below
(whose JSON Schema ``mergecheck schema`` prints), then converted to the frozen
:class:`Site` in SI units. Every error names the file, the field path and the
rule.

Stations along the path are measured from the end of the ramp's controlling
curve (station 0), or from the stop line when the ramp starts from a stop:

    0 ── ramp ── convergence point ── acceleration lane ── taper start ── taper ── taper end
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from .critical_gaps import CriticalGap, default_critical_gaps
from .errors import InputError
from .fields import Reads
from .inputs import GradePoint, build_profile, file_kind, read_yaml, validated
from .landxml import read_profile as read_landxml
from .limits import (
    APPROACH_WINDOW,
    CAPACITY_DENSITY,
    CARRIAGEWAY_FLOW,
    CRITICAL_GAP,
    ELEVATION,
    FLAG_DIFFERENTIAL,
    FOLLOWER_EASING,
    FORCED_GAP,
    FREE_FLOW_SPEED,
    JAM_DENSITY,
    LANE_CHANGE_TIME,
    LANE_FLOW,
    MAINLINE_SPEED,
    MIN_HEADWAY,
    PATH_LENGTH,
    PEAK_DURATION,
    PERIOD_DURATION,
    PRESSURE_DISTANCE,
    SEARCH_SPEED,
    SPEED_DIFFERENTIAL,
    STATION,
    VEHICLE_SPEED,
    YIELD_BRAKING,
)
from .merge_behaviour import MergeBehaviour
from .policy import BUNDLED_POLICIES, PolicyChoice, load_policy, running_speed_for
from .profile import VerticalProfile
from .units import parse_quantity, written_in_us_customary
from .vehicles import DesignVehicle, load_vehicle

SHARE_TOLERANCE = 1e-3
AFTER_PEAK = 6 * 3600.0
"""How long the after-peak demand is followed when no demand profile is given. [s]"""


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True, validate_default=True)


def written(text: str) -> Any:
    """A field's default as the site file would write it (read by the field's own reader, see ``validate_default``)."""
    return text


Speed = Annotated[float, Reads("speed", VEHICLE_SPEED, "45 km/h")]
StreamSpeed = Annotated[float, Reads("speed", MAINLINE_SPEED, "100 km/h")]
LaneFlow = Annotated[float, Reads("flow", LANE_FLOW, "1400 veh/h")]
CarriagewayFlow = Annotated[float, Reads("flow", CARRIAGEWAY_FLOW, "4200 veh/h")]
PathLength = Annotated[float, Reads("length", PATH_LENGTH, "300 m")]
Elevation = Annotated[float, Reads("length", ELEVATION, "450 m")]
Differential = Annotated[float, Reads("speed", SPEED_DIFFERENTIAL, "8 km/h")]
GapTime = Annotated[float, Reads("time", CRITICAL_GAP, "3.2 s")]


class MainlineInput(_Strict):
    """The freeway or expressway the ramp joins."""

    design_speed: str = Field(description="Highway design speed, e.g. '110 km/h' or '65 mph'.")
    operating_speed: StreamSpeed | None = Field(
        default=None,
        description="Speed of the through stream at the merge. Default: the design speed (the conservative case).",
    )
    lanes: int = Field(ge=1, le=8, description="Through lanes per direction upstream of the merge.")
    lanes_downstream: int | None = Field(
        default=None,
        ge=1,
        le=9,
        description="Through lanes per direction downstream, if the count changes (e.g. a lane added).",
    )
    adjacent_lane_flow: LaneFlow = Field(
        description="Design-hour flow in the lane ramp traffic merges into, e.g. '1400 veh/h'."
    )
    flow: CarriagewayFlow | None = Field(
        default=None,
        description="Design-hour flow of the whole carriageway approaching the merge, e.g. '3600 veh/h' (for the merge-area check).",
    )


class RampInput(_Strict):
    """The entrance ramp."""

    controlling_speed: str = Field(
        description="Design speed of the ramp's controlling curve, e.g. '50 km/h', or 'stop' for a stop or ramp meter."
    )
    initial_speed: Speed | None = Field(
        default=None,
        description=(
            "Speed of vehicles leaving the controlling curve. Default: the policy table's initial speed for the"
            " controlling speed (average running speed on the curve), or the controlling speed itself."
        ),
    )
    flow: LaneFlow = Field(description="Design-hour ramp flow, e.g. '600 veh/h'.")
    vehicles: dict[str, float] = Field(
        min_length=1,
        description="Design vehicles (bundled id or profile file path) and their share of the ramp flow; shares sum to 1.",
    )


class LandXMLProfileInput(_Strict):
    """A vertical profile read from a LandXML file (the open exchange format of civil design models)."""

    landxml: str = Field(description="LandXML file (1.0 to 1.2), relative to this site file.")
    alignment: str = Field(description="Name of the alignment (Alignment name=...).")
    profile: str = Field(description="Name of the profile on it (ProfAlign or Profile name=...).")
    start_station: Annotated[float, Reads("length", STATION, "1250 m")] = Field(
        description="Station on the alignment of the end of the controlling curve (the ramp path's station 0)."
    )


class GeometryInput(_Strict):
    """Lengths along the vehicle path and the vertical profile."""

    entrance: Literal["parallel", "taper"] = Field(description="Parallel-type or taper-type entrance.")
    curve_end_to_convergence: PathLength = Field(
        description="Ramp length from the end of the controlling curve (or the stop line) to the convergence point."
    )
    lane_length: PathLength = Field(
        description=(
            "Acceleration length provided, from the convergence point to the start of the taper (parallel type), or"
            " to the point of a taper-type entrance where the taper has narrowed to one lane width; 0 for a taper-type"
            " entrance with no parallel section."
        )
    )
    taper_length: PathLength = Field(description="Length of the taper beyond the lane.")
    elevation: Elevation | None = Field(
        default=None, description="Elevation above sea level at station 0, e.g. '450 m'."
    )
    profile: list[GradePoint] | LandXMLProfileInput = Field(
        description=(
            "Grades by station from the end of the controlling curve (a list, first entry at 0), or a profile read"
            " from a LandXML file ({landxml: FILE, alignment: NAME, profile: NAME, start_station: 1250 m})."
        )
    )


class VehicleCriteriaInput(_Strict):
    """Criteria that differ for one design vehicle."""

    merge_speed_differential: Differential | None = Field(
        default=None, description="Merge speed = operating speed minus this, for this vehicle."
    )


class HeavyVehicleCriteriaInput(_Strict):
    """Criteria for heavy design vehicles (categories truck, bus, recreational)."""

    merge_speed_differential: Differential = Field(
        default=written("16 km/h"),
        description=(
            "Merge speed of a heavy vehicle = operating speed minus this (default 16 km/h, the 10 mph speed reduction"
            " tolerated for trucks in the critical length of grade, common practice); a per-vehicle value overrides it."
        ),
    )


class CriteriaInput(_Strict):
    """What counts as meeting the check."""

    merge_speed_differential: Differential = Field(
        default=written("8 km/h"),
        description="Merge speed = operating speed minus this (default 8 km/h, about the 5 mph of the policy tables).",
    )
    flag_speed_differential: Annotated[float, Reads("speed", FLAG_DIFFERENTIAL, "16 km/h")] = Field(
        default=written("16 km/h"),
        description="Speed differential to the stream at the end of the lane that is flagged as large (default 16 km/h).",
    )
    taper_credit: float = Field(
        default=0.0,
        ge=0.0,
        le=1.0,
        description="Share of the taper counted as acceleration length (0: the policy-table definition).",
    )
    heavy_vehicles: HeavyVehicleCriteriaInput = Field(
        default_factory=lambda: HeavyVehicleCriteriaInput(),
        description="Criteria for trucks, buses and recreational vehicles (the performance basis).",
    )
    verdict_basis: Literal["policy", "performance"] = Field(
        default="policy",
        description=(
            "Which basis decides the site's verdict: 'policy' (default: the policy table's length against the lane,"
            " as the table measures it; the performance basis is reported beside it) or 'performance' (every design"
            " vehicle's computed need). Without a policy value the performance basis decides, and the report says so."
        ),
    )
    acceleration_from: Literal["curve_end", "convergence"] = Field(
        default="curve_end",
        description=(
            "Where acceleration is counted from: 'curve_end' (default: the vehicle speeds up along the ramp before"
            " the convergence point, as it does) or 'convergence' (policy-strict: the vehicle is still at its initial"
            " speed at the convergence point, as the policy tables assume)."
        ),
    )
    vehicles: dict[str, VehicleCriteriaInput] = Field(default_factory=dict, description="Per-vehicle criteria.")


class CriticalGapInput(_Strict):
    """Critical gap of one design vehicle across drivers (log-normal)."""

    mean: GapTime = Field(description="Mean critical gap when merging at speed, e.g. '3.2 s'.")
    sd: GapTime = Field(description="Standard deviation across drivers, e.g. '0.8 s'.")
    from_stop_mean: GapTime | None = Field(
        default=None, description="Mean critical gap from a stop at the end of the lane."
    )
    from_stop_sd: GapTime | None = Field(default=None, description="Its standard deviation.")


class BehaviourInput(_Strict):
    """Parameters of the active merge model (defaults and their sources in mergecheck.merge_behaviour)."""

    approach_window: Annotated[float, Reads("time", APPROACH_WINDOW, "5 s")] = Field(
        default=written("5 s"),
        description="Stream time from which a driver picks the gap to arrive beside (default 5 s).",
    )
    lag_share: float = Field(
        default=0.5,
        ge=0.0,
        le=1.0,
        description="Share of the critical gap that must lie behind the merger (default 0.5).",
    )
    follower_easing: Annotated[float, Reads("acceleration", FOLLOWER_EASING, "0.5 m/s^2")] = Field(
        default=written("0.5 m/s^2"), description="Deceleration of a follower who only eases off (default 0.5 m/s^2)."
    )
    lane_end_share: float = Field(
        default=0.5,
        gt=0.0,
        le=1.0,
        description="Share of the critical gap still asked for at the lane end (default 0.5).",
    )
    pressure_distance: Annotated[float, Reads("length", PRESSURE_DISTANCE, "150 m")] = Field(
        default=written("150 m"),
        description="How far before the lane end drivers begin to accept shorter gaps (default 150 m).",
    )
    yield_at_capacity: float = Field(
        default=0.8,
        ge=0.0,
        le=1.0,
        description="Probability that a lag vehicle lets a merger in at capacity density (default 0.8).",
    )
    capacity_density: Annotated[float, Reads("density", CAPACITY_DENSITY, "28 veh/km")] = Field(
        default=written("28 veh/km"), description="Density at capacity per lane (default 28 veh/km)."
    )
    forced_gap: Annotated[float, Reads("time", FORCED_GAP, "0.8 s")] = Field(
        default=written("0.8 s"), description="Least gap a driver is let into or forces into (default 0.8 s)."
    )
    yield_braking: Annotated[float, Reads("acceleration", YIELD_BRAKING, "2.0 m/s^2")] = Field(
        default=written("2.0 m/s^2"),
        description="Deceleration a yielding or forced follower accepts (default 2.0 m/s^2).",
    )
    lane_change_time: Annotated[float, Reads("time", LANE_CHANGE_TIME, "4 s")] = Field(
        default=written("4 s"),
        description="Duration of the lane change; merges count where it is half done (default 4 s).",
    )


class GapAcceptanceInput(_Strict):
    """How the adjacent lane's gaps are modelled and accepted."""

    headway_model: Literal["m3", "exponential"] = Field(
        default="m3", description="Cowan's M3 (default) or negative-exponential headways in the adjacent lane."
    )
    min_headway: Annotated[float, Reads("time", MIN_HEADWAY, "1.0 s")] = Field(
        default=written("1.0 s"), description="M3 minimum headway Delta (default 1.0 s)."
    )
    free_fraction: float | None = Field(
        default=None, gt=0.0, le=1.0, description="M3 share of free vehicles; default Tanner's 1 - Delta q."
    )
    reliability: float = Field(
        default=0.95, gt=0.0, lt=1.0, description="Target probability of merging by the end of the lane (default 0.95)."
    )
    search_speed: Annotated[float, Reads("speed", SEARCH_SPEED, "15 km/h")] = Field(
        default=written("15 km/h"),
        description=(
            "Least relative speed at which gaps pass a driver searching for one: a driver matched to the stream"
            " slows or speeds up to find a gap (default 15 km/h, an assumption)."
        ),
    )
    minimum_merge_speed_differential: Differential = Field(
        default=written("30 km/h"),
        description="Drivers may merge once within this of the stream's speed (default 30 km/h).",
    )
    critical_gaps: dict[str, CriticalGapInput] = Field(
        default_factory=dict, description="Critical gaps by design vehicle (as listed under ramp.vehicles)."
    )
    merge_model: Literal["active", "classic"] = Field(
        default="active",
        description=(
            "'active' (default): drivers pick a gap on the approach, adjust speed to reach the next one, accept"
            " shorter gaps near the lane end, need longer gaps when slower than the stream, are sometimes let in by"
            " the lag vehicle and force in at the end of the lane. 'classic': Drew's fixed critical gap, gaps"
            " drifting past at the search speed, no yielding, for comparison."
        ),
    )
    behaviour: BehaviourInput = Field(
        default_factory=lambda: BehaviourInput(), description="Parameters of the active merge model."
    )


class DemandPeriodInput(_Strict):
    """One period of a demand profile."""

    duration: Annotated[float, Reads("time", PERIOD_DURATION, "30 min")] = Field(
        description="How long the period lasts, e.g. '30 min'."
    )
    share: float = Field(ge=0.0, le=2.0, description="Demand in the period as a share of the design-hour demand.")


class MergeAreaInput(_Strict):
    """Inputs of the capacity-manual merge-area check and the breakdown figures."""

    peak_hour_factor: float = Field(default=0.94, gt=0.25, le=1.0, description="Peak-hour factor (default 0.94).")
    mainline_heavy_vehicles: float = Field(
        default=0.05, ge=0.0, le=1.0, description="Share of heavy vehicles in the mainline flow (default 0.05)."
    )
    terrain: Literal["level", "rolling"] = Field(
        default="level", description="Terrain for the truck equivalents (E_T 2.0 level, 3.0 rolling)."
    )
    free_flow_speed: Annotated[float, Reads("speed", FREE_FLOW_SPEED, "105 km/h")] | None = Field(
        default=None, description="Mainline free-flow speed; default: the operating speed."
    )
    ramp_free_flow_speed: Annotated[float, Reads("speed", FREE_FLOW_SPEED, "60 km/h")] | None = Field(
        default=None, description="Ramp free-flow speed; default: the controlling speed (30 km/h for a stop)."
    )
    ramp_lanes: int = Field(default=1, ge=1, le=2, description="Lanes on the ramp roadway.")
    jam_density: Annotated[float, Reads("density", JAM_DENSITY, "120 veh/km")] = Field(
        default=written("120 veh/km"), description="Jam density per lane for the queue (default 120 veh/km)."
    )
    peak_duration: Annotated[float, Reads("time", PEAK_DURATION, "1 h")] = Field(
        default=written("1 h"), description="How long the design-hour demand lasts (default 1 h)."
    )
    demand_after_peak: float = Field(
        default=0.7,
        gt=0.0,
        le=1.0,
        description="Demand after the peak as a share of the peak (default 0.7), to time the queue's clearing.",
    )
    demand_profile: list[DemandPeriodInput] | None = Field(
        default=None,
        min_length=1,
        description=(
            "Demand over time as periods with their share of the design-hour demand; replaces peak_duration and"
            " demand_after_peak, e.g. [{duration: 30 min, share: 0.9}, {duration: 1 h, share: 1.0}, {duration: 2 h, share: 0.6}]."
        ),
    )


class SiteInput(_Strict):
    """An entrance terminal to check (the site file)."""

    name: str = Field(min_length=1, description="Name of the site, as it should appear on the report.")
    notes: str | None = Field(default=None, description="Free text carried to the report.")
    mainline: MainlineInput
    ramp: RampInput
    geometry: GeometryInput
    criteria: CriteriaInput = Field(default_factory=CriteriaInput)
    gap_acceptance: GapAcceptanceInput = Field(default_factory=GapAcceptanceInput)
    merge_area: MergeAreaInput = Field(default_factory=MergeAreaInput)
    policy: str | None = Field(
        default=None,
        description=(
            "Policy table: 'us' or 'metric' (the bundled tables), a table file (path relative to this file), or"
            " 'none'. Omitted: the bundled table in the units the design speed is written in (mph: us; km/h: metric)."
        ),
    )


@dataclass(frozen=True, slots=True)
class SiteVehicle:
    """A design vehicle at the site, with its share of the ramp flow, merge speed and critical gaps."""

    vehicle: DesignVehicle
    share: float
    merge_speed: float
    """[m/s]"""
    merge_speed_differential: float
    """[m/s]"""
    critical_gap: CriticalGap
    stop_critical_gap: CriticalGap


@dataclass(frozen=True, slots=True)
class GapSettings:
    """Gap-acceptance settings of a site (SI)."""

    headway_model: Literal["m3", "exponential"]
    min_headway: float
    """[s]"""
    free_fraction: float | None
    reliability: float
    search_speed: float
    """[m/s]"""
    minimum_merge_speed: float
    """[m/s]"""
    behaviour: MergeBehaviour | None
    """The active merge model's parameters; None for the classic model."""


@dataclass(frozen=True, slots=True, kw_only=True)
class MergeAreaSettings:
    """Merge-area inputs in SI."""

    mainline_flow: float | None
    """[veh/s]"""
    peak_hour_factor: float
    mainline_heavy_vehicles: float
    terrain: Literal["level", "rolling"]
    free_flow_speed: float
    """[m/s]"""
    ramp_free_flow_speed: float
    """[m/s]"""
    ramp_lanes: int
    jam_density: float
    """Per lane. [veh/m]"""
    demand_profile: tuple[tuple[float, float], ...]
    """Periods of (duration [s], share of the design-hour demand), in order."""
    demand_profile_given: bool = False
    """The periods are the user's (taken as they are), not the peak-and-after default."""


@dataclass(frozen=True, slots=True, kw_only=True)
class Site:
    """A validated entrance terminal in SI units."""

    name: str
    notes: str | None
    source: str
    design_speed: float
    """[m/s]"""
    operating_speed: float
    """[m/s]"""
    operating_speed_given: bool
    operating_speed_basis: str = "site file"
    """Where the operating speed comes from (the site file, or the policy's running speed)."""
    lanes: int
    lanes_downstream: int | None
    adjacent_lane_flow: float
    """[veh/s]"""
    controlling_speed: float | None
    """Design speed of the controlling curve; None for a stop. [m/s]"""
    initial_speed: float | None
    """Speed leaving the controlling curve if given; None to take the default. [m/s]"""
    ramp_flow: float
    """[veh/s]"""
    vehicles: tuple[SiteVehicle, ...]
    entrance: Literal["parallel", "taper"]
    convergence: float
    """Station of the convergence point. [m]"""
    lane_length: float
    """[m]"""
    taper_length: float
    """[m]"""
    elevation: float
    """[m]"""
    profile: VerticalProfile
    flag_speed_differential: float
    """[m/s]"""
    taper_credit: float
    acceleration_from: Literal["curve_end", "convergence"] = "curve_end"
    """Where acceleration is counted from (criteria.acceleration_from)."""
    verdict_basis: Literal["policy", "performance"] = "policy"
    """Which basis decides the site's verdict (criteria.verdict_basis)."""
    gaps: GapSettings
    merge: MergeAreaSettings
    policy_choice: PolicyChoice
    """The policy table (a bundled one, a file, or none) and why: named in the site file, or matched to the units
    of the design speed."""

    @property
    def taper_start(self) -> float:
        """Station of the start of the taper (end of the full-width lane). [m]"""
        return self.convergence + self.lane_length

    @property
    def taper_end(self) -> float:
        """[m]"""
        return self.taper_start + self.taper_length

    @property
    def available_length(self) -> float:
        """Acceleration length available, measured as the policy tables measure it (plus any taper credit). [m]"""
        return self.lane_length + self.taper_credit * self.taper_length


def load_site(path: str) -> Site:
    """Read, validate and convert a site file."""
    data = validated(read_yaml(path), SiteInput, path, "a site file (name, mainline, ramp, geometry, ...)")
    return site_from_input(data, path)


def site_from_input(data: SiteInput, source: str) -> Site:
    """Convert validated input to SI and check the rules no schema can express."""

    def q(text: str, kind: str, field: str) -> float:
        return parse_quantity(text, kind, source=source, field=field)

    design = q(data.mainline.design_speed, "speed", "mainline.design_speed")
    base_dir = Path(source).parent
    policy_choice = _policy_choice(data.policy, data.mainline.design_speed, base_dir, source)
    if data.mainline.operating_speed is None:
        operating, operating_basis = _default_operating_speed(design, policy_choice.table)
    else:
        operating, operating_basis = data.mainline.operating_speed, "site file"
    if not MAINLINE_SPEED.holds(design):
        raise InputError(source, "mainline.design_speed", f"{MAINLINE_SPEED.rule} for a freeway or expressway merge")
    adjacent = data.mainline.adjacent_lane_flow

    controlling: float | None = None
    if data.ramp.controlling_speed.strip().lower() != "stop":
        controlling = q(data.ramp.controlling_speed, "speed", "ramp.controlling_speed")
        if controlling <= 0:
            raise InputError(source, "ramp.controlling_speed", "must be positive (or 'stop')")
        if controlling >= operating:
            raise InputError(
                source,
                "ramp.controlling_speed",
                "must be below the mainline operating speed: no acceleration lane is needed otherwise",
            )
    initial = data.ramp.initial_speed
    if initial is not None:
        if initial >= operating:
            raise InputError(source, "ramp.initial_speed", "must be at least 0 and below the mainline operating speed")
        if controlling is None and initial != 0:
            raise InputError(source, "ramp.initial_speed", "a ramp that starts from a stop has an initial speed of 0")
    ramp_flow = data.ramp.flow
    base_differential = data.criteria.merge_speed_differential
    heavy_differential = data.criteria.heavy_vehicles.merge_speed_differential
    flag = data.criteria.flag_speed_differential
    unknown = sorted(set(data.criteria.vehicles) - set(data.ramp.vehicles))
    if unknown:
        raise InputError(
            source, f"criteria.vehicles.{unknown[0]}", "criteria given for a vehicle not listed under ramp.vehicles"
        )
    shares = data.ramp.vehicles
    total = sum(shares.values())
    if abs(total - 1.0) > SHARE_TOLERANCE:
        raise InputError(source, "ramp.vehicles", f"shares must sum to 1, they sum to {total:g}")
    base_dir = Path(source).parent
    vehicles = []
    listed: dict[str, str] = {}
    for ref, share in shares.items():
        field = f"ramp.vehicles.{ref}"
        if not 0 < share <= 1:
            raise InputError(source, field, "a share must be greater than 0 and at most 1")
        vehicle = load_vehicle(ref, relative_to=base_dir, source=source, field=field)
        if vehicle.id in listed:
            rule = f"the design vehicle '{vehicle.id}' is already listed as '{listed[vehicle.id]}': list each once"
            raise InputError(source, field, rule)
        listed[vehicle.id] = ref
        heavy = vehicle.category != "passenger-car"
        differential = heavy_differential if heavy else base_differential
        override = data.criteria.vehicles.get(ref)
        if override is not None and override.merge_speed_differential is not None:
            differential = override.merge_speed_differential
        where = (
            f"criteria.vehicles.{ref}.merge_speed_differential"
            if override is not None and override.merge_speed_differential is not None
            else "criteria.heavy_vehicles.merge_speed_differential"
            if heavy
            else "criteria.merge_speed_differential"
        )
        if not 0 <= differential < operating:
            raise InputError(source, where, "must be at least 0 and below the operating speed")
        merge = operating - differential
        at_speed, from_stop = _critical_gaps(data.gap_acceptance, ref, vehicle, source)
        vehicles.append(SiteVehicle(vehicle, share, merge, differential, at_speed, from_stop))
    unknown = sorted(set(data.gap_acceptance.critical_gaps) - set(shares))
    if unknown:
        raise InputError(
            source,
            f"gap_acceptance.critical_gaps.{unknown[0]}",
            "critical gaps given for a vehicle not listed under ramp.vehicles",
        )
    gaps = _gap_settings(data.gap_acceptance, operating, adjacent, source)

    g = data.geometry
    lengths = {}
    for name in ("curve_end_to_convergence", "lane_length", "taper_length"):
        value = getattr(g, name)
        # a taper-type entrance may have no parallel section at all
        may_be_zero = name == "curve_end_to_convergence" or (name == "lane_length" and g.entrance == "taper")
        if value < (0.0 if may_be_zero else 1.0):
            rule = "must be a positive length" + (
                " (0 is allowed only for a taper-type entrance)" if name == "lane_length" else ""
            )
            raise InputError(source, f"geometry.{name}", rule)
        lengths[name] = value
    path_end = lengths["curve_end_to_convergence"] + lengths["lane_length"] + lengths["taper_length"]
    if isinstance(g.profile, LandXMLProfileInput):
        given = g.profile
        read = read_landxml(str(base_dir / given.landxml), given.alignment, given.profile, given.start_station)
        if read.end < path_end:
            rule = (f"the profile ends {read.end:.1f} m past the start station, before the end of the taper"
                    f" ({path_end:.1f} m): it must cover the whole ramp path")  # fmt: skip
            raise InputError(source, "geometry.profile.landxml", rule)
        profile = read.profile
        elevation = read.elevation if g.elevation is None else g.elevation
    else:
        if not g.profile:
            raise InputError(source, "geometry.profile", "give at least one grade")
        profile = build_profile(g.profile, source, "geometry.profile")
        for i, change in enumerate(profile.changes, start=1):
            if change.station > path_end:
                raise InputError(source, f"geometry.profile.{i}.from", "station lies beyond the end of the taper")
        elevation = 0.0 if g.elevation is None else g.elevation

    return Site(
        name=data.name,
        notes=data.notes,
        source=source,
        design_speed=design,
        operating_speed=operating,
        operating_speed_given=data.mainline.operating_speed is not None,
        operating_speed_basis=operating_basis,
        lanes=data.mainline.lanes,
        lanes_downstream=data.mainline.lanes_downstream,
        adjacent_lane_flow=adjacent,
        controlling_speed=controlling,
        initial_speed=initial if controlling is not None else 0.0,
        ramp_flow=ramp_flow,
        vehicles=tuple(vehicles),
        entrance=g.entrance,
        convergence=lengths["curve_end_to_convergence"],
        lane_length=lengths["lane_length"],
        taper_length=lengths["taper_length"],
        elevation=elevation,
        profile=profile,
        flag_speed_differential=flag,
        taper_credit=data.criteria.taper_credit,
        acceleration_from=data.criteria.acceleration_from,
        verdict_basis=data.criteria.verdict_basis,
        gaps=gaps,
        merge=_merge_settings(data, operating, controlling, adjacent, source),
        policy_choice=policy_choice,
    )


def _critical_gaps(
    settings: GapAcceptanceInput, ref: str, vehicle: DesignVehicle, source: str
) -> tuple[CriticalGap, CriticalGap]:
    defaults = default_critical_gaps(vehicle.category)
    given = settings.critical_gaps.get(ref)
    if given is None:
        return defaults.at_speed, defaults.from_stop
    field = f"gap_acceptance.critical_gaps.{ref}"

    mean, sd = given.mean, given.sd
    if mean <= 0:
        raise InputError(source, f"{field}.mean", "must be positive")
    stop_mean = defaults.from_stop.mean if given.from_stop_mean is None else given.from_stop_mean
    stop_sd = defaults.from_stop.sd if given.from_stop_sd is None else given.from_stop_sd
    if stop_mean <= 0:
        raise InputError(source, f"{field}.from_stop_mean", "must be positive")
    return CriticalGap(mean, sd, "site file"), CriticalGap(
        stop_mean, stop_sd, "site file" if given.from_stop_mean else defaults.from_stop.source
    )


def _gap_settings(settings: GapAcceptanceInput, operating: float, adjacent: float, source: str) -> GapSettings:
    min_headway = settings.min_headway
    if min_headway * adjacent >= 1:
        raise InputError(source, "gap_acceptance.min_headway", "must be below the mean headway of the adjacent lane")
    search = settings.search_speed
    differential = settings.minimum_merge_speed_differential
    if not differential < operating:
        raise InputError(
            source,
            "gap_acceptance.minimum_merge_speed_differential",
            "must be at least 0 and below the operating speed",
        )
    return GapSettings(
        headway_model=settings.headway_model,
        min_headway=min_headway,
        free_fraction=settings.free_fraction,
        reliability=settings.reliability,
        search_speed=search,
        minimum_merge_speed=operating - differential,
        behaviour=None if settings.merge_model == "classic" else _behaviour(settings.behaviour, search, source),
    )


def _behaviour(given: BehaviourInput, search: float, source: str) -> MergeBehaviour:
    """The active model's parameters in SI, each within a range a driver could show."""

    return MergeBehaviour(
        search_differential=search,
        approach_window=given.approach_window,
        lag_share=given.lag_share,
        follower_easing=given.follower_easing,
        lane_end_share=given.lane_end_share,
        pressure_distance=given.pressure_distance,
        yield_at_capacity=given.yield_at_capacity,
        capacity_density=given.capacity_density,
        forced_gap=given.forced_gap,
        yield_braking=given.yield_braking,
        lane_change_time=given.lane_change_time,
    )


def _merge_settings(
    data: SiteInput, operating: float, controlling: float | None, adjacent: float, source: str
) -> MergeAreaSettings:
    m = data.merge_area

    flow = data.mainline.flow
    if flow is not None:
        if not adjacent <= flow <= data.mainline.lanes * LANE_FLOW.high:
            raise InputError(
                source, "mainline.flow", "must be at least the adjacent-lane flow and at most 3000 veh/h per lane"
            )
    ffs = operating if m.free_flow_speed is None else m.free_flow_speed
    ramp_ffs = (controlling or 30 / 3.6) if m.ramp_free_flow_speed is None else m.ramp_free_flow_speed
    FREE_FLOW_SPEED.check(ramp_ffs, source, "merge_area.ramp_free_flow_speed")  # the default follows the ramp
    jam = m.jam_density
    profile: tuple[tuple[float, float], ...] = ((m.peak_duration, 1.0), (AFTER_PEAK, m.demand_after_peak))
    if m.demand_profile is not None:
        profile = tuple((period.duration, period.share) for period in m.demand_profile)
    return MergeAreaSettings(
        mainline_flow=flow,
        peak_hour_factor=m.peak_hour_factor,
        mainline_heavy_vehicles=m.mainline_heavy_vehicles,
        terrain=m.terrain,
        free_flow_speed=ffs,
        ramp_free_flow_speed=ramp_ffs,
        ramp_lanes=m.ramp_lanes,
        jam_density=jam,
        demand_profile=profile,
        demand_profile_given=m.demand_profile is not None,
    )


def _default_operating_speed(design: float, policy_file: str | None) -> tuple[float, str]:
    """The operating speed at the merge when the site gives none: the policy table's average running speed for
    the design speed (the speed its merge speeds are set against), else the design speed."""
    if policy_file is None:
        return design, "not given, and no policy table: taken equal to the design speed (the conservative case)"
    try:
        table = load_policy(policy_file)
    except InputError:
        return design, "not given: taken equal to the design speed (the policy table could not be read)"
    running = running_speed_for(table, design)
    if running is None:
        return design, (
            "not given, and the policy table gives no running speed for this design speed: taken equal to the design"
            " speed (the conservative case)"
        )
    return running, (
        f"not given: the average running speed the policy table sets its merge speeds against for this design speed"
        f" ({table.title}); give mainline.operating_speed where it is known"
    )


def _policy_choice(policy: str | None, design_speed: str, base_dir: Path, source: str) -> PolicyChoice:
    """The policy table a site uses and why: 'none', a bundled table by name, or a file path (relative to the
    site file). Omitted, the bundled table in the unit system the design speed is written in, so that a US
    customary design gets the US customary table and a metric design the metric one (the two were developed
    separately; neither is a conversion of the other)."""
    if policy is None:
        name = "us" if written_in_us_customary(design_speed) else "metric"
        unit = "US customary" if name == "us" else "metric"
        return PolicyChoice(
            name, f"not named in the site file: the bundled {unit} table, as the design speed is in {unit} units"
        )
    named = policy.strip().lower()
    if named == "none":
        return PolicyChoice(None, "the site file says policy: none")
    if named in BUNDLED_POLICIES:
        return PolicyChoice(named, "named in the site file")
    path = Path(policy)
    path = path if path.is_absolute() else base_dir / path
    if file_kind(path, source, "policy") != "file":
        choices = ", ".join(("none", *sorted(BUNDLED_POLICIES)))
        rule = f"names no policy table: give one of {choices}, or the path of a table file (no file {policy} was found)"
        raise InputError(source, "policy", rule)
    return PolicyChoice(str(path), "named in the site file")
