"""Immutable results that every renderer reads."""

from __future__ import annotations

from dataclasses import dataclass

from .profile import VerticalProfile
from .trajectory import Trajectory
from .vehicles import DesignVehicle


@dataclass(frozen=True, slots=True, kw_only=True)
class AccelerationRun:
    """One vehicle accelerating along one profile (the ``accel`` command)."""

    vehicle: DesignVehicle
    profile: VerticalProfile
    elevation: float
    """Elevation of station 0 above sea level. [m]"""
    trajectory: Trajectory
