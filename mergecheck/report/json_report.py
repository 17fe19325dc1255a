"""JSON renderer: SI values under stable keys. Reads results, computes nothing."""

from __future__ import annotations

import json
from typing import Any

from ..figures import VehicleFigures
from ..results import AccelerationRun


def _number(value: float | None, digits: int = 6) -> float | None:
    return None if value is None else round(float(value), digits)


def acceleration_json(run: AccelerationRun) -> dict[str, Any]:
    """The ``accel --json`` document."""
    trajectory = run.trajectory
    return {
        "vehicle": run.vehicle.id,
        "vehicle_name": run.vehicle.name,
        "model": run.vehicle.model_name,
        "initial_speed_m_s": _number(trajectory.initial_speed),
        "target_speed_m_s": _number(trajectory.target_speed),
        "reaches_target": trajectory.reaches_target,
        "distance_m": _number(trajectory.distance, 3),
        "time_s": _number(trajectory.duration, 3),
        "crawl_speed_m_s": _number(trajectory.crawl_speed),
        "stalled": trajectory.stalled,
        "elevation_m": _number(run.elevation, 3),
        "trajectory": {
            "station_m": [round(float(x), 3) for x in trajectory.station],
            "speed_m_s": [round(float(v), 5) for v in trajectory.speed],
            "time_s": [round(float(t), 4) for t in trajectory.time],
            "grade": [round(float(g), 6) for g in run.profile.grade(trajectory.station)],
        },
    }


def vehicles_json(figures: list[VehicleFigures]) -> list[dict[str, Any]]:
    """The ``vehicles --json`` document."""
    return [
        {
            "id": f.vehicle.id,
            "name": f.vehicle.name,
            "category": f.vehicle.category,
            "model": f.vehicle.model_name,
            "weight_to_power_kg_kw": _number(None if f.weight_to_power is None else f.weight_to_power * 1000, 3),
            "sustained_speed_m_s": {f"{g:.0%}": _number(v, 4) for g, v in f.sustained_speeds},
            "level_stop_to_80_km_h_m": _number(f.level_distance, 2),
            "level_stop_to_80_km_h_s": _number(f.level_time, 2),
            "parameters": [
                {"name": p.name, "value": p.text, "si_value": p.value, "source": p.source} for p in f.vehicle.parameters
            ],
        }
        for f in figures
    ]


def dumps(document: Any) -> str:
    return json.dumps(document, indent=2, ensure_ascii=False) + "\n"
