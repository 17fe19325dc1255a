"""Speed along a vertical profile: integrate a vehicle's acceleration over distance.

The grade is a function of station, so the equation of motion is integrated in
distance, not time. With the kinetic energy per unit mass u = v^2/2 as the
state, the equations are regular at a standing start:

.. math::

    \\frac{du}{dx} = a\\big(v, G(x), h(x)\\big), \\qquad
    \\frac{dt}{dx} = \\frac{1}{v}, \\qquad v = \\sqrt{2u}              (1)

(du/dx = v dv/dx = dv/dt: common practice in vehicle-performance work). The
first centimetre of a standing start is taken at constant acceleration,
v = sqrt(2 a0 dx), t = sqrt(2 dx / a0), which removes the 1/v singularity of
dt/dx. Between grade breakpoints the right-hand side is smooth and is
integrated with SciPy's DOP853 (Hairer, Norsett and Wanner, Solving Ordinary
Differential Equations I, 2nd ed., 1993) with root-finding events for the
target speed and for a stall.

A vehicle that cannot reach the target never loops: past the last grade
change the grade is constant, and the equilibrium speed on it (the crawl
speed, where acceleration is zero) is found by a root search. If it lies
below the target, the target is unreachable and the integration stops once
the vehicle has settled near that speed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from .acceleration import AccelerationModel
from .profile import VerticalProfile

FloatArray = NDArray[np.float64]

_START_STEP = 0.01  # m: length of the constant-acceleration first step from rest
_STALL_SPEED = 0.05  # m/s: below this a decelerating vehicle is taken as stopped
_SCAN_SPEED_MAX = 80.0  # m/s: equilibrium speeds are searched up to this
_CHUNK = 500.0  # m: integration chunk on the final constant grade
_SETTLED = 0.02  # relative closeness to the crawl speed at which integration stops


@dataclass(frozen=True, slots=True)
class Trajectory:
    """Speed and time along a path.

    Attributes
    ----------
    station, speed, time : ndarray
        Samples along the path (station increasing). [m], [m/s], [s]
    initial_speed, target_speed : float
        Speeds asked for. [m/s]
    target_station, target_time : float or None
        Where and when the target speed is first reached; None if never. [m], [s]
    crawl_speed : float or None
        Equilibrium speed on the final grade when it is below the target
        speed (the target is then unreachable); None otherwise. [m/s]
    stalled : bool
        The vehicle cannot move on the grade (crawl speed zero).
    """

    station: FloatArray
    speed: FloatArray
    time: FloatArray
    initial_speed: float
    target_speed: float
    target_station: float | None
    target_time: float | None
    crawl_speed: float | None
    stalled: bool

    @property
    def reaches_target(self) -> bool:
        return self.target_station is not None

    @property
    def distance(self) -> float | None:
        """Distance from the start to where the target speed is reached. [m]"""
        return None if self.target_station is None else self.target_station - float(self.station[0])

    @property
    def duration(self) -> float | None:
        """Time from the start to when the target speed is reached. [s]"""
        return None if self.target_time is None else self.target_time - float(self.time[0])

    def speed_at(self, station: ArrayLike) -> FloatArray:
        """Speed at stations within the integrated range (interpolated in v^2). [m/s]"""
        x = np.asarray(station, dtype=float)
        if np.any(x < self.station[0] - 1e-9) or np.any(x > self.station[-1] + 1e-9):
            raise ValueError("station outside the integrated range")
        return np.asarray(np.sqrt(np.interp(x, self.station, self.speed**2)), dtype=float)

    def time_at(self, station: ArrayLike) -> FloatArray:
        """Time at stations within the integrated range. [s]

        Between samples, t = t_i + 2 (x - x_i) / (v_i + v(x)), exact for
        constant acceleration.
        """
        x = np.asarray(station, dtype=float)
        i = np.clip(np.searchsorted(self.station, x, side="right") - 1, 0, self.station.size - 1)
        v = self.speed_at(x)
        gap = x - self.station[i]
        step = np.divide(2.0 * gap, self.speed[i] + v, out=np.zeros_like(gap), where=gap > 0)
        return np.asarray(self.time[i] + step, dtype=float)


def equilibrium_speed(model: AccelerationModel, grade: float, elevation: float, from_speed: float) -> float | None:
    """Stable equilibrium speed a vehicle tends to on a constant grade. [m/s]

    From ``from_speed`` the vehicle accelerates (a > 0) up to the first speed
    above it where a(v) falls through zero, or decelerates (a < 0) down to the
    highest speed below it where a(v) falls through zero; 0 when it cannot
    hold any speed. None when it accelerates beyond 80 m/s. The crossing is
    bracketed on a 0.05 m/s grid and refined with Brent's method.
    """

    def f(v: float) -> float:
        return float(model.acceleration(v, grade, elevation))

    speeds = np.linspace(0.0, _SCAN_SPEED_MAX, 1601)
    accel = model.acceleration(speeds, grade, elevation)
    falls = np.flatnonzero((accel[:-1] > 0) & (accel[1:] <= 0))  # a(v) crosses zero going down
    a_here = f(from_speed)
    if a_here == 0.0:
        return from_speed
    if a_here > 0:
        ahead = falls[speeds[falls + 1] > from_speed]
        if ahead.size == 0:
            return None
        low, high = max(from_speed, float(speeds[ahead[0]])), float(speeds[ahead[0] + 1])
    else:
        behind = falls[speeds[falls] < from_speed]
        if behind.size == 0:
            return 0.0
        low, high = float(speeds[behind[-1]]), min(from_speed, float(speeds[behind[-1] + 1]))
    if f(high) == 0.0:
        return high
    return float(brentq(f, low, high, xtol=1e-10))


def accelerate(
    model: AccelerationModel,
    profile: VerticalProfile,
    initial_speed: float,
    target_speed: float,
    *,
    start: float = 0.0,
    through: float | None = None,
    elevation: float = 0.0,
    output_step: float = 1.0,
    max_distance: float = 20_000.0,
) -> Trajectory:
    """Integrate a vehicle's speed along a profile until it reaches a target speed.

    Parameters
    ----------
    model
        Acceleration model of the vehicle (see :mod:`mergecheck.acceleration`).
    profile
        Grade as a function of station.
    initial_speed
        Speed at ``start``; zero for a standing start. [m/s]
    target_speed
        Speed to reach. [m/s]
    start
        Station where the vehicle starts. [m]
    through
        Integrate at least to this station, even after the target is reached
        (to report speeds at landmarks). [m]
    elevation
        Elevation of station 0 above sea level, for air density and engine
        power. [m]
    output_step
        Spacing of the returned samples. [m]
    max_distance
        Give up beyond this distance from the start; the target then counts
        as not reached. [m]

    Returns
    -------
    Trajectory

    Examples
    --------
    Constant acceleration of 1 m/s^2 from rest to 20 m/s covers v^2/(2a) = 200 m
    in v/a = 20 s:

    >>> from mergecheck.acceleration import Tabulated
    >>> from mergecheck.profile import VerticalProfile
    >>> car = Tabulated(speeds=(0.0, 50.0), accelerations=(1.0, 1.0))
    >>> run = accelerate(car, VerticalProfile.constant(0.0), 0.0, 20.0)
    >>> round(run.distance, 6), round(run.duration, 6)
    (200.0, 20.0)
    """
    if initial_speed < 0 or target_speed < 0:
        raise ValueError("speeds must not be negative")
    through = start if through is None else max(through, start)
    end_limit = start + max_distance

    def height(x: float) -> float:
        return elevation + float(profile.elevation(x))

    def rhs(x: float, y: NDArray[np.float64]) -> list[float]:
        v = math.sqrt(max(2.0 * y[0], 0.0))
        a = float(model.acceleration(v, float(profile.grade(x)), height(x)))
        return [a, 1.0 / max(v, 1e-12)]

    u_target = 0.5 * target_speed**2

    def reach(x: float, y: NDArray[np.float64]) -> float:
        return float(y[0] - u_target)

    reach.terminal = True  # type: ignore[attr-defined]
    reach.direction = 1.0  # type: ignore[attr-defined]

    def stall(x: float, y: NDArray[np.float64]) -> float:
        return float(y[0] - 0.5 * _STALL_SPEED**2)

    stall.terminal = True  # type: ignore[attr-defined]
    stall.direction = -1.0  # type: ignore[attr-defined]

    stations = [start]
    speeds = [initial_speed]
    times = [0.0]
    x, u, t = start, 0.5 * initial_speed**2, 0.0
    target_x: float | None = start if initial_speed >= target_speed else None
    target_t: float | None = 0.0 if target_x is not None else None
    crawl: float | None = None
    stalled = False

    if initial_speed < _STALL_SPEED:
        a0 = float(model.acceleration(initial_speed, float(profile.grade(start)), height(start)))
        if a0 <= 0:  # cannot move off: crawl speed zero on this grade
            return _result(stations, speeds, times, initial_speed, target_speed, target_x, target_t, 0.0, True)
        # constant acceleration over the first centimetre (removes dt/dx = 1/v at v = 0)
        x = start + _START_STEP
        u = 0.5 * initial_speed**2 + a0 * _START_STEP
        t = (math.sqrt(2 * u) - initial_speed) / a0
        stations.append(x)
        speeds.append(math.sqrt(2 * u))
        times.append(t)

    breakpoints = profile.breakpoints
    while True:
        ahead = breakpoints[breakpoints > x + 1e-9]
        segment_end = float(ahead[0]) if ahead.size else x + _CHUNK
        segment_end = min(segment_end, end_limit)
        if target_x is not None:
            segment_end = min(segment_end, through)
        solution = solve_ivp(
            rhs,
            (x, segment_end),
            [u, t],
            method="DOP853",
            rtol=1e-8,
            atol=[1e-8, 1e-8],
            events=[reach, stall] if target_x is None else [stall],
            dense_output=True,
        )
        x_end = float(solution.t[-1])
        grid = np.arange(math.floor(x / output_step) + 1, math.ceil(x_end / output_step)) * output_step
        grid = grid[(grid > x) & (grid < x_end)]
        if grid.size:
            values = solution.sol(grid)
            stations.extend(grid.tolist())
            speeds.extend(np.sqrt(np.maximum(2 * values[0], 0.0)).tolist())
            times.extend(values[1].tolist())
        u, t = float(solution.y[0, -1]), float(solution.y[1, -1])
        x = x_end
        stations.append(x)
        speeds.append(math.sqrt(max(2 * u, 0.0)))
        times.append(t)
        events = dict(zip(["reach", "stall"] if target_x is None else ["stall"], solution.t_events, strict=True))
        if events.get("reach", np.empty(0)).size:
            target_x, target_t = x, t
        if events["stall"].size:
            stalled, crawl = True, 0.0
            break
        if x >= end_limit - 1e-9:
            break
        if target_x is not None:
            if x >= through:
                break
            continue
        if x < profile.last_change_end or x < through:
            continue
        v = math.sqrt(2 * u)
        settle = equilibrium_speed(model, profile.final_grade, height(x), v)
        if settle is not None and settle < target_speed:
            crawl = settle
            if abs(v - settle) <= _SETTLED * max(settle, 1.0):
                break
    return _result(stations, speeds, times, initial_speed, target_speed, target_x, target_t, crawl, stalled)


def _result(
    stations: list[float],
    speeds: list[float],
    times: list[float],
    initial_speed: float,
    target_speed: float,
    target_x: float | None,
    target_t: float | None,
    crawl: float | None,
    stalled: bool,
) -> Trajectory:
    return Trajectory(
        station=np.asarray(stations, dtype=float),
        speed=np.asarray(speeds, dtype=float),
        time=np.asarray(times, dtype=float),
        initial_speed=initial_speed,
        target_speed=target_speed,
        target_station=target_x,
        target_time=target_t,
        crawl_speed=crawl,
        stalled=stalled,
    )
