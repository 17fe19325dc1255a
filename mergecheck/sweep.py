"""Rerun one site across a range of one input and find where the verdict changes.

Fields that can vary, each a real rerun of the whole assessment:

``lane_length``            the acceleration lane (geometry.lane_length) [length]
``grade``                  one grade over the whole path, replacing the profile [grade]
``adjacent_lane_flow``     flow in the lane merged into (mainline.adjacent_lane_flow) [flow]
``weight_to_power``        of every power-limited (heavy) design vehicle at the site [weight-to-power]
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .acceleration import PowerLimited
from .assessment import SiteAssessment, assess_many
from .errors import InputError
from .inputs import MAX_GRADE
from .limits import LANE_FLOW, Limit
from .profile import VerticalProfile
from .site import Site, SiteVehicle
from .units import parse_quantity
from .vehicles import POWER_LIMITED

FIELDS: dict[str, str] = {
    "lane_length": "length",
    "grade": "grade",
    "adjacent_lane_flow": "flow",
    "weight_to_power": "weight_to_power",
}
RANGES: dict[str, tuple[Limit, str]] = {
    "lane_length": (Limit("length", 1.0, 5000.0), "geometry.lane_length"),
    "grade": (Limit("grade", -MAX_GRADE, MAX_GRADE), "a profile grade"),
    "adjacent_lane_flow": (LANE_FLOW, "mainline.adjacent_lane_flow"),
    "weight_to_power": (Limit("weight_to_power", POWER_LIMITED["weight_to_power"].low,
                              POWER_LIMITED["weight_to_power"].high), "a vehicle profile's weight_to_power"),
}  # fmt: skip
"""The values a sweep may take: the same ranges as the site file and vehicle profiles check. (SI)"""
MAX_POINTS = 200


@dataclass(frozen=True, slots=True, kw_only=True)
class SweepPoint:
    value: float
    """SI value of the varied input."""
    assessment: SiteAssessment
    verdict_changes: bool
    """The verdict differs from the previous point's."""


@dataclass(frozen=True, slots=True, kw_only=True)
class Sweep:
    field: str
    kind: str
    points: tuple[SweepPoint, ...]


def parse_range(text: str, source: str = "command line", name: str = "--vary") -> tuple[str, str, np.ndarray]:
    """``FIELD=START:STOP:STEP`` with units, e.g. ``lane_length=200 m:600 m:50 m`` -> field, kind, SI values;
    errors name ``source`` and the option or argument ``name`` the text came in."""
    field, sep, span = text.partition("=")
    field = field.strip()
    if not sep or field not in FIELDS:
        raise InputError(source, name, f"expected FIELD=START:STOP:STEP with FIELD one of {', '.join(FIELDS)}")
    parts = span.split(":")
    if len(parts) != 3:
        raise InputError(source, name, "expected START:STOP:STEP, each with its unit, e.g. 200 m:600 m:50 m")
    kind = FIELDS[field]
    start, stop, step = (parse_quantity(p, kind, source=source, field=f"{name} {field}") for p in parts)
    if step <= 0 or stop < start:
        raise InputError(source, name, "STEP must be positive and STOP not below START")
    limit, like = RANGES[field]
    rule = f"every value {limit.rule}, as {like}"
    if not (limit.holds(start) and limit.holds(stop)):
        raise InputError(source, f"{name} {field}", rule)
    count = (stop - start) / step + 1
    if count > MAX_POINTS:
        raise InputError(source, name, f"{count:.3g} points; at most {MAX_POINTS}")
    values = start + step * np.arange(int(np.floor(count - 1 + 1e-9)) + 1)
    if not all(limit.holds(float(v)) for v in values):
        raise InputError(source, f"{name} {field}", rule)
    return field, kind, values


def varied(site: Site, field: str, value: float) -> Site:
    """A copy of the site with one input set to a value (SI)."""
    match field:
        case "lane_length":
            if value <= 0:
                raise InputError("command line", "--vary", "lane lengths must be positive")
            return dataclasses.replace(site, lane_length=value)
        case "grade":
            return dataclasses.replace(site, profile=VerticalProfile.constant(value))
        case "adjacent_lane_flow":
            return dataclasses.replace(site, adjacent_lane_flow=value)
        case "weight_to_power":
            return dataclasses.replace(site, vehicles=tuple(_with_weight_to_power(v, value) for v in site.vehicles))
    raise InputError("command line", "--vary", f"cannot vary {field}")


def _with_weight_to_power(entry: SiteVehicle, weight_to_power: float) -> SiteVehicle:
    model = entry.vehicle.model
    if not isinstance(model, PowerLimited):  # passenger cars keep their driver model
        return entry
    body = dataclasses.replace(model.vehicle, power=model.vehicle.mass / weight_to_power)
    vehicle = dataclasses.replace(entry.vehicle, model=dataclasses.replace(model, vehicle=body))
    return dataclasses.replace(entry, vehicle=vehicle)


def sweep(site: Site, field: str, values: np.ndarray) -> Sweep:
    """Assess the site at each value of the field (all points in one pass, each as a single check)."""
    results = assess_many([varied(site, field, float(value)) for value in values])
    points = tuple(
        SweepPoint(
            value=float(value),
            assessment=result,
            verdict_changes=i > 0 and result.verdict != results[i - 1].verdict,
        )
        for i, (value, result) in enumerate(zip(values, results, strict=True))
    )
    return Sweep(field=field, kind=FIELDS[field], points=points)
