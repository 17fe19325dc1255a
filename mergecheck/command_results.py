"""Results of the small commands (accel, gaps) that every renderer reads."""

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


@dataclass(frozen=True, slots=True, kw_only=True)
class GapFigures:
    """Standalone gap figures for one stream and one critical gap (the ``gaps`` command)."""

    model: str
    flow: float
    """[veh/s]"""
    critical_gap: float
    """[s]"""
    min_headway: float | None
    """[s]"""
    free_fraction: float | None
    p_headway_at_least: float
    acceptable_gaps_per_h: float
    mean_wait: float
    """Mean wait of a randomly arriving stopped driver. [s]"""
