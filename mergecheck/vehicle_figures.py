"""Key figures of a design vehicle, for listings and assumption tables."""

from __future__ import annotations

from dataclasses import dataclass

from .profile import VerticalProfile
from .trajectory import accelerate, equilibrium_speed
from .vehicles import DesignVehicle

FIGURE_GRADES = (0.0, 0.03, 0.06)
"""Grades at which the sustained (crawl) speed is listed. [fraction]"""
LEVEL_TARGET = 80.0 / 3.6
"""Speed for the level standing-start figure (80 km/h). [m/s]"""


@dataclass(frozen=True, slots=True)
class VehicleFigures:
    """What a reader needs to compare design vehicles at a glance."""

    vehicle: DesignVehicle
    weight_to_power: float | None
    """[kg/W]"""
    sustained_speeds: tuple[tuple[float, float | None], ...]
    """(grade, highest speed held on that grade from a standing start; None above 80 m/s). [-], [m/s]"""
    level_distance: float | None
    """Distance from a stop to 80 km/h on level grade; None if never. [m]"""
    level_time: float | None
    """Time from a stop to 80 km/h on level grade. [s]"""


def vehicle_figures(vehicle: DesignVehicle) -> VehicleFigures:
    """Sustained speeds on 0, 3 and 6 % and the level standing start to 80 km/h."""
    sustained = tuple((g, equilibrium_speed(vehicle.model, g, 0.0, 0.0)) for g in FIGURE_GRADES)
    run = accelerate(vehicle.model, VerticalProfile.constant(0.0), 0.0, LEVEL_TARGET)
    return VehicleFigures(
        vehicle=vehicle,
        weight_to_power=vehicle.weight_to_power,
        sustained_speeds=sustained,
        level_distance=run.distance,
        level_time=run.duration,
    )
