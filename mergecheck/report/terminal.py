"""Terminal renderer: rich tables readable at 100 columns. Reads results only."""

from __future__ import annotations

import numpy as np
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..figures import VehicleFigures
from ..results import AccelerationRun
from ..units import UnitSystem, convert, show, unit_symbol


def _table_interval(length: float, system: UnitSystem) -> float:
    """A round sampling interval giving 10 to 25 rows. [m]"""
    unit = 0.3048 if system == "us" else 1.0
    for step in (10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000):
        if length / (step * unit) <= 25:
            return step * unit
    return 5000 * unit


def acceleration_view(run: AccelerationRun, system: UnitSystem) -> RenderableType:
    """Key figures, then station, grade, speed and time at regular intervals."""
    trajectory = run.trajectory
    vehicle = run.vehicle
    start, end = float(trajectory.station[0]), float(trajectory.station[-1])
    if trajectory.reaches_target:
        verdict = Text(
            f"Reaches {show(trajectory.target_speed, 'speed', system)} after "
            f"{show(trajectory.distance, 'length', system)} in {show(trajectory.duration, 'time', system)}.",
            style="bold green",
        )
    elif trajectory.stalled:
        verdict = Text("Cannot move on this grade: the vehicle stalls.", style="bold red")
    else:
        crawl = trajectory.crawl_speed
        verdict = Text(
            f"Cannot reach {show(trajectory.target_speed, 'speed', system)}: the crawl speed on the final grade is "
            f"{show(crawl, 'speed', system)}.",
            style="bold red",
        )
    head = Table.grid(padding=(0, 2))
    head.add_column(style="bold")
    head.add_column()
    head.add_row("Vehicle", f"{vehicle.id}: {vehicle.name}")
    head.add_row("Model", vehicle.model_name)
    if vehicle.weight_to_power is not None:
        head.add_row("Weight-to-power", show(vehicle.weight_to_power, "weight_to_power", system))
    head.add_row("From / to", f"{show(trajectory.initial_speed, 'speed', system)} / {show(trajectory.target_speed, 'speed', system)}")
    head.add_row("Elevation", show(run.elevation, "length", system))

    step = _table_interval(end - start, system)
    stations = np.arange(start, end, step)
    if trajectory.target_station is not None:
        stations = np.append(stations, trajectory.target_station)
    stations = np.unique(np.append(stations, end))
    rows = Table(title="Speed along the profile", title_justify="left")
    rows.add_column(f"Station ({unit_symbol('length', system)})", justify="right")
    rows.add_column("Grade (%)", justify="right")
    rows.add_column(f"Speed ({unit_symbol('speed', system)})", justify="right")
    rows.add_column("Time (s)", justify="right")
    speeds = trajectory.speed_at(stations)
    times = trajectory.time_at(stations)
    grades = run.profile.grade(stations)
    for x, g, v, t in zip(stations, grades, speeds, times, strict=True):
        marker = " ◂ target" if trajectory.target_station is not None and abs(x - trajectory.target_station) < 1e-9 else ""
        rows.add_row(
            f"{convert(x, 'length', system):.0f}",
            f"{100 * g:.2f}",
            f"{convert(v, 'speed', system):.1f}{marker}",
            f"{t:.1f}",
        )
    return Group(head, Text(""), verdict, Text(""), rows)


def vehicles_view(figures: list[VehicleFigures], system: UnitSystem) -> RenderableType:
    """One row per design vehicle with its key figures."""
    table = Table(title="Design vehicles", title_justify="left")
    table.add_column("Id", style="bold", no_wrap=True)
    table.add_column("Model", no_wrap=True)
    table.add_column(f"W/P ({unit_symbol('weight_to_power', system)})", justify="right")
    for grade, _ in figures[0].sustained_speeds if figures else ():
        table.add_column(f"Held {grade:.0%} ({unit_symbol('speed', system)})", justify="right")
    table.add_column(f"Stop to {show(80 / 3.6, 'speed', system)}", justify="right", no_wrap=True)
    for f in figures:
        wp = "-" if f.weight_to_power is None else f"{convert(f.weight_to_power, 'weight_to_power', system):.0f}"
        held = ["> 250" if v is None else f"{convert(v, 'speed', system):.0f}" for _, v in f.sustained_speeds]
        start = "-" if f.level_distance is None else f"{show(f.level_distance, 'length', system)}, {f.level_time:.0f} s"
        table.add_row(f.vehicle.id, f.vehicle.model_name, wp, *held, start)
    return table
