"""Speed along a vertical profile: integrate vehicles' acceleration over distance, many at once.

The grade is a function of station, so the equation of motion is integrated in
distance, not time. With the kinetic energy per unit mass u = v^2/2 as the
state, the equations are regular at a standing start:

.. math::

    \\frac{du}{dx} = a\\big(v, G(x), h(x)\\big), \\qquad
    \\frac{dt}{dx} = \\frac{1}{v}, \\qquad v = \\sqrt{2u}              (1)

(du/dx = v dv/dx = dv/dt: common practice in vehicle-performance work). The
first centimetre of a standing start is taken at constant acceleration,
v = sqrt(2 a0 dx), t = sqrt(2 dx / a0), which removes the 1/v singularity of
dt/dx.

Every trajectory of a site, or of thousands of sites, is integrated in one
loop: the explicit Runge-Kutta pair of Dormand and Prince (1980), 5th order
with a 4th-order error estimate and its 4th-order continuous extension (the
tableau of Hairer, Norsett and Wanner, Table II.5.2, written below; the same
numbers as :class:`scipy.integrate.RK45`, tested). Each vehicle keeps its
own step size, chosen by the usual error control (Hairer, Norsett and Wanner,
Solving Ordinary Differential Equations I, 2nd ed., 1993, II.4; relative and
absolute tolerance 1e-8 on u and 1e-9 on t), and steps never cross a grade
breakpoint, where the
right-hand side is not smooth; the grade on a step is the one of the segment
it lies in. The target speed and a stall are located inside a step on the
continuous extension. A vehicle's numbers depend only on its own inputs, so a
site integrated alone or among ten thousand gives the same trajectory.

A vehicle that cannot reach the target never loops: past the last grade
change the grade is constant, and the equilibrium speed on it (the crawl
speed, where acceleration is zero) is found by a scan and bisection. If it
lies below the target, the target is unreachable and the integration stops
once the vehicle has settled near that speed.

References
----------
Dormand, J. R., and Prince, P. J. (1980). "A family of embedded Runge-Kutta
formulae." J. Comput. Appl. Math. 6(1), 19-26.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction as F

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .acceleration import AccelerationModel, ModelStack
from .profile import ProfileStack, VerticalProfile
from .ragged_rows import RaggedRows

FloatArray = NDArray[np.float64]
IndexArray = NDArray[np.intp]

_START_STEP = 0.01  # m: length of the constant-acceleration first step from rest
_STALL_SPEED = 0.05  # m/s: below this a decelerating vehicle is taken as stopped
_SCAN_SPEED_MAX = 80.0  # m/s: equilibrium speeds are searched up to this
_SCAN_POINTS = 161  # 0.5 m/s apart
_RECHECK = 500.0  # m: the crawl speed is found again after this much climbing (the air thins)
_SETTLED = 0.02  # relative closeness to the crawl speed at which integration stops
TOLERANCE = np.array([[1e-8], [1e-9]])
"""Relative and absolute tolerance of the step-size control: on u = v^2/2 [m^2/s^2] and on t [s]."""
_SAFETY, _MIN_FACTOR, _MAX_FACTOR = 0.9, 0.2, 10.0  # step-size control (Hairer et al. II.4)
# Dormand-Prince 5(4) (Dormand and Prince 1980; Hairer, Norsett and Wanner 1993, Table II.5.2): nodes _C,
# stage weights _A, 5th-order weights _B, error weights _E (5th minus 4th order, with the FSAL 7th stage) and
# the continuous extension _P (Hairer's dense output of dopri5, as a polynomial in the step fraction)
_C = np.array([0, 1 / 5, 3 / 10, 4 / 5, 8 / 9, 1], dtype=float)
_A = np.array([[0, 0, 0, 0, 0],
               [F(1, 5), 0, 0, 0, 0],
               [F(3, 40), F(9, 40), 0, 0, 0],
               [F(44, 45), F(-56, 15), F(32, 9), 0, 0],
               [F(19372, 6561), F(-25360, 2187), F(64448, 6561), F(-212, 729), 0],
               [F(9017, 3168), F(-355, 33), F(46732, 5247), F(49, 176), F(-5103, 18656)]], dtype=float)  # fmt: skip
_B = np.array([F(35, 384), 0, F(500, 1113), F(125, 192), F(-2187, 6784), F(11, 84)], dtype=float)
_E = np.array([F(-71, 57600), 0, F(71, 16695), F(-71, 1920), F(17253, 339200), F(-22, 525), F(1, 40)], dtype=float)
_P = np.array([[1.0, -2.8535800653862835, 3.0717434641059005, -1.1270175653862835],
               [0.0, 0.0, 0.0, 0.0],
               [0.0, 4.023133379230305, -6.249321565289, 2.675424484351598],
               [0.0, -3.7324019615885042, 10.068970589843675, -5.685526961588504],
               [0.0, 2.5548038301849423, -6.399112377351017, 3.5219323679207912],
               [0.0, -1.3744241142186024, 3.272657752246729, -1.7672812570757455],
               [0.0, 1.3824689317781436, -3.764937863556287, 2.382468931778144]])  # fmt: skip
# Weighted sums of stages use numpy.einsum, not BLAS: the arrays are small and BLAS threads would
# fight the batch's worker processes for the cores.


@dataclass(frozen=True, slots=True)
class Pieces:
    """The continuous extension of the accepted steps: on step i, for 0 <= sigma <= 1,
    y(x_i + sigma h_i) = y_i + h_i sum_j Q_ij sigma^(j+1), with y = (u, t)."""

    x: FloatArray
    """(k,) station where each step starts. [m]"""
    h: FloatArray
    """(k,) step length. [m]"""
    y: FloatArray
    """(2, k) u = v^2/2 [m^2/s^2] and t [s] at each step's start."""
    q: FloatArray
    """(4, 2, k) coefficients of the continuous extension."""


@dataclass(frozen=True, slots=True, kw_only=True)
class Trajectory:
    """Speed and time along a path, exact to the integration tolerance at any station.

    The path is held as the integrator's continuous extension; ``station``,
    ``speed`` and ``time`` sample it every ``output_step`` (plus the start,
    the end of a standing start's first centimetre, and the end).

    Attributes
    ----------
    initial_speed, target_speed : float
        Speeds asked for. [m/s]
    target_station, target_time : float or None
        Where and when the target speed is first reached; None if never. [m], [s]
    crawl_speed : float or None
        Equilibrium speed on the final grade when it is below the target
        speed (the target is then unreachable); None otherwise. [m/s]
    stalled : bool
        The vehicle cannot move on the grade (crawl speed zero).
    start, end : float
        First and last station of the path. [m]
    launch : float or None
        Constant acceleration over the first centimetre of a standing start. [m/s^2]
    pieces : Pieces
        The integrated steps.
    output_step : float
        Spacing of the samples. [m]
    """

    initial_speed: float
    target_speed: float
    target_station: float | None
    target_time: float | None
    crawl_speed: float | None
    stalled: bool
    start: float
    end: float
    launch: float | None
    pieces: Pieces
    output_step: float = 1.0

    @property
    def reaches_target(self) -> bool:
        return self.target_station is not None

    @property
    def distance(self) -> float | None:
        """Distance from the start to where the target speed is reached. [m]"""
        return None if self.target_station is None else self.target_station - self.start

    @property
    def duration(self) -> float | None:
        """Time from the start to when the target speed is reached. [s]"""
        return self.target_time

    @property
    def station(self) -> FloatArray:
        """Sample stations. [m]"""
        return self.samples()[0]

    @property
    def speed(self) -> FloatArray:
        """Speed at the sample stations. [m/s]"""
        return self.samples()[1]

    @property
    def time(self) -> FloatArray:
        """Time at the sample stations. [s]"""
        return self.samples()[2]

    def samples(self, spacing: float | None = None) -> tuple[FloatArray, FloatArray, FloatArray]:
        """Stations, speeds and times: the start, every ``spacing`` (default ``output_step``), the end."""
        step = spacing or self.output_step
        head = [self.start] if self.launch is None else [self.start, min(self.start + _START_STEP, self.end)]
        grid = np.arange(math.floor(head[-1] / step) + 1, math.ceil(self.end / step)) * step
        tail = [self.end] if self.end > head[-1] else []
        station = np.concatenate([head, grid[(grid > head[-1]) & (grid < self.end)], tail])
        return station, self.speed_at(station), self.time_at(station)

    def speed_at(self, station: ArrayLike) -> FloatArray:
        """Speed at stations within the integrated range. [m/s]"""
        x = np.asarray(station, dtype=float)
        return speeds_at([self], [x.reshape(-1)])[0].reshape(x.shape)

    def time_at(self, station: ArrayLike) -> FloatArray:
        """Time at stations within the integrated range. [s]"""
        x = np.asarray(station, dtype=float)
        return _evaluate([self], [x.reshape(-1)], 1)[0].reshape(x.shape)


def speeds_at(trajectories: Sequence[Trajectory], stations: Sequence[FloatArray]) -> list[FloatArray]:
    """Speed of each trajectory at its own stations (within its integrated range), evaluated together. [m/s]"""
    return [np.sqrt(np.maximum(2.0 * u, 0.0)) for u in _evaluate(trajectories, stations, 0)]


def _evaluate(trajectories: Sequence[Trajectory], stations: Sequence[FloatArray], component: int) -> list[FloatArray]:
    """u = v^2/2 (component 0) or t (component 1) of each trajectory at its stations, on its continuous extension.

    Every trajectory's steps are searched at once (:class:`mergecheck.ragged_rows.RaggedRows`).
    """
    sizes = np.array([s.size for s in stations], dtype=np.intp)
    x = np.concatenate([np.asarray(s, dtype=float).reshape(-1) for s in stations]) if stations else np.zeros(0)
    owner = np.repeat(np.arange(len(trajectories)), sizes)
    start = np.array([t.start for t in trajectories])[owner]
    end = np.array([t.end for t in trajectories])[owner]
    if np.any(x < start - 1e-9) or np.any(x > end + 1e-9):
        raise ValueError("station outside the integrated range")
    pieces = [t.pieces for t in trajectories]
    counts = np.array([p.x.size for p in pieces], dtype=np.intp)
    value = np.zeros_like(x)
    if counts.sum():
        step_x, h = np.concatenate([p.x for p in pieces]), np.concatenate([p.h for p in pieces])
        y = np.concatenate([p.y[component] for p in pieces])
        q = np.concatenate([p.q[:, component] for p in pieces], axis=1)
        first = np.concatenate([[0], np.cumsum(counts)])
        found = RaggedRows.of(step_x, first).count(x, owner) - 1  # the step that holds x, the first before it
        i = np.minimum(first[owner] + np.clip(found, 0, np.maximum(counts[owner] - 1, 0)), step_x.size - 1)
        h_i = np.take(h, i)
        value = _dense(np.take(y, i), h_i, np.take(q, i, axis=1), (x - np.take(step_x, i)) / h_i)
    v0 = np.array([t.initial_speed for t in trajectories])[owner]
    u0 = 0.5 * v0**2
    still = counts[owner] == 0  # no step taken: the vehicle never left its start
    value[still] = u0[still] if component == 0 else 0.0
    launch = np.array([np.nan if t.launch is None else t.launch for t in trajectories])[owner]
    first_cm = ~np.isnan(launch) & (x < start + _START_STEP)  # the first centimetre at constant acceleration:
    u_launch = u0[first_cm] + launch[first_cm] * (x[first_cm] - start[first_cm])  # u = u0 + a (x - x0)
    value[first_cm] = u_launch if component == 0 else (np.sqrt(2.0 * u_launch) - v0[first_cm]) / launch[first_cm]
    return np.split(value, np.cumsum(sizes)[:-1])


@dataclass(frozen=True, slots=True)
class Run:
    """One trajectory to integrate (see :func:`accelerate` for the meaning of each field)."""

    model: AccelerationModel
    profile: VerticalProfile
    initial_speed: float
    target_speed: float
    start: float = 0.0
    through: float | None = None
    elevation: float = 0.0
    slowing: bool = False
    """Look for the speed falling to the target (a vehicle losing speed on an upgrade) instead of rising to it."""


def equilibrium_speeds(
    models: ModelStack, grade: FloatArray, elevation: FloatArray, from_speed: FloatArray
) -> FloatArray:
    """Stable equilibrium speed each vehicle tends to on a constant grade; NaN above 80 m/s. [m/s]

    From ``from_speed`` a vehicle accelerates (a > 0) up to the first speed
    above it where a(v) falls through zero, or decelerates (a < 0) down to the
    highest speed below it where a(v) falls through zero; 0 when it cannot
    hold any speed. The crossing is bracketed on a 0.5 m/s grid and refined
    by bisection to machine precision (crossings closer than that are not told apart).
    """
    grid = np.linspace(0.0, _SCAN_SPEED_MAX, _SCAN_POINTS)
    columns = grade.size
    accel = models.acceleration(np.repeat(grid[:, None], columns, axis=1), grade, elevation)
    falls = (accel[:-1] > 0) & (accel[1:] <= 0)  # (points - 1, columns): a(v) crosses zero going down
    a_here = models.acceleration(from_speed, grade, elevation)
    ahead = falls & (grid[1:, None] > from_speed)
    behind = falls & (grid[:-1, None] < from_speed)
    first_ahead = np.argmax(ahead, axis=0)
    last_behind = falls.shape[0] - 1 - np.argmax(behind[::-1], axis=0)
    rising = a_here > 0
    j = np.where(rising, first_ahead, last_behind)
    low = np.where(rising, np.maximum(from_speed, grid[j]), grid[j])
    high = np.where(rising, grid[j + 1], np.minimum(from_speed, grid[j + 1]))
    for _ in range(48):  # a(low) > 0 >= a(high) throughout; 0.5 m/s / 2^48 is below rounding
        middle = 0.5 * (low + high)
        positive = models.acceleration(middle, grade, elevation) > 0
        low, high = np.where(positive, middle, low), np.where(positive, high, middle)
    result = np.where(models.acceleration(high, grade, elevation) == 0.0, high, 0.5 * (low + high))
    result = np.where(rising & ~ahead.any(axis=0), np.nan, result)
    result = np.where(~rising & ~behind.any(axis=0), 0.0, result)
    return np.asarray(np.where(a_here == 0.0, from_speed, result), dtype=float)


def equilibrium_speed(model: AccelerationModel, grade: float, elevation: float, from_speed: float) -> float | None:
    """Stable equilibrium speed one vehicle tends to on a constant grade; None above 80 m/s. [m/s]

    See :func:`equilibrium_speeds`.
    """
    _, stack = ModelStack.of([model])
    value = float(equilibrium_speeds(stack, np.array([grade]), np.array([elevation]), np.array([from_speed]))[0])
    return None if math.isnan(value) else value


def accelerate(
    model: AccelerationModel,
    profile: VerticalProfile,
    initial_speed: float,
    target_speed: float,
    *,
    start: float = 0.0,
    through: float | None = None,
    slowing: bool = False,
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
    slowing
        Find where the speed falls to the target (a vehicle entering an upgrade
        faster than it can hold, the speed-reduction side of a critical length
        of grade) rather than where it rises to it; the target is then out of
        reach when the crawl speed lies above it. [-]
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
    run = Run(model, profile, initial_speed, target_speed, start, through, elevation, slowing)
    return accelerate_many([run], output_step=output_step, max_distance=max_distance)[0]


def accelerate_many(
    runs: Sequence[Run], *, output_step: float = 1.0, max_distance: float = 20_000.0
) -> list[Trajectory]:
    """Integrate many trajectories at once (same rules as :func:`accelerate`, one result per run)."""
    if any(r.initial_speed < 0 or r.target_speed < 0 for r in runs):
        raise ValueError("speeds must not be negative")
    if not runs:
        return []
    order, models = ModelStack.of([r.model for r in runs])
    ordered = [runs[i] for i in order]
    state = _State(ordered, models, max_distance)
    while state.live.size:
        state.advance()
    trajectories = state.trajectories(ordered, output_step)
    result: list[Trajectory] = [trajectories[0]] * len(runs)
    for position, index in enumerate(order):
        result[index] = trajectories[position]
    return result


class _State:
    """Many vehicles integrated together, one column each (see the module docstring)."""

    def __init__(self, runs: list[Run], models: ModelStack, max_distance: float) -> None:
        n = len(runs)
        self.models = models
        self.profiles = ProfileStack.of([r.profile for r in runs])
        self.last_change_end = self.profiles.last_change_end
        self.final_grade = self.profiles.final_grade
        self.base = np.array([r.elevation for r in runs], dtype=float)
        self.start = np.array([r.start for r in runs], dtype=float)
        through = np.array([r.start if r.through is None else r.through for r in runs], dtype=float)
        self.through = np.maximum(through, self.start)
        self.end_limit = self.start + max_distance
        self.v0 = np.array([r.initial_speed for r in runs], dtype=float)
        self.target = np.array([r.target_speed for r in runs], dtype=float)
        self.x = self.start.copy()
        self.y = np.stack([0.5 * self.v0**2, np.zeros(n)])  # u = v^2/2 and t
        self.slowing = np.array([r.slowing for r in runs], dtype=bool)
        self.reached = np.where(self.slowing, self.v0 <= self.target, self.v0 >= self.target)
        self.target_x = np.where(self.reached, self.start, np.nan)
        self.target_t = np.where(self.reached, 0.0, np.nan)
        self.crawl = np.full(n, np.nan)
        self.crawl_checked_at = np.full(n, np.nan)
        self.stalled = np.zeros(n, dtype=bool)
        self.done = self.reached & (self.through <= self.start)
        self.launch = np.full(n, np.nan)
        self.steps = _Steps([], [], [], [], [])
        self._standing_start()
        self.h = np.zeros(n)
        self.rejected = np.zeros(n, dtype=bool)
        self._update_live()
        if self.live.size:
            self.h[self.live] = self._initial_step()

    def _update_live(self) -> None:
        self.live = np.flatnonzero(~self.done)
        self.live_models = self.models.take(self.live)

    def _rhs(self, x: FloatArray, y: FloatArray, edge: FloatArray) -> FloatArray:
        """du/dx and dt/dx of the live columns, Eq. (1); the grade is read left of ``edge`` (the segment end)."""
        v = np.sqrt(np.maximum(2.0 * y[0], 0.0))
        grade = self.profiles.grade(np.minimum(x, edge), self.live)
        height = self.base[self.live] + self.profiles.elevation(x, self.live)
        return np.stack([self.live_models.acceleration(v, grade, height), 1.0 / np.maximum(v, 1e-12)])

    def _standing_start(self) -> None:
        """Constant acceleration over the first centimetre from rest (removes dt/dx = 1/v at v = 0)."""
        slow = np.flatnonzero((self.v0 < _STALL_SPEED) & ~self.done)
        if not slow.size:
            return
        at = self.start[slow]
        a0 = self.models.take(slow).acceleration(
            self.v0[slow], self.profiles.grade(at, slow), self.base[slow] + self.profiles.elevation(at, slow)
        )
        stuck = slow[a0 <= 0]  # cannot move off: crawl speed zero on this grade
        self.done[stuck], self.stalled[stuck], self.crawl[stuck] = True, True, 0.0
        moving, a = slow[a0 > 0], a0[a0 > 0]
        u = 0.5 * self.v0[moving] ** 2 + a * _START_STEP
        v = np.sqrt(2 * u)
        t = (v - self.v0[moving]) / a
        self.x[moving] += _START_STEP
        self.y[0, moving], self.y[1, moving] = u, t
        self.launch[moving] = a
        # a target speed below the speed after the first centimetre is reached on it
        low = ~self.reached[moving] & (u >= 0.5 * self.target[moving] ** 2)
        hit, a_hit = moving[low], a[low]
        self.target_x[hit] = self.start[hit] + (0.5 * self.target[hit] ** 2 - 0.5 * self.v0[hit] ** 2) / a_hit
        self.target_t[hit] = (self.target[hit] - self.v0[hit]) / a_hit
        self.reached[hit] = True

    def _segment_edges(self, x: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Next grade breakpoint of each live column, and a point just before it."""
        following = self.profiles.next_knot(x + 1e-9, self.live)
        return following, following - 1e-9 * np.maximum(1.0, np.abs(following))

    def _initial_step(self) -> FloatArray:
        """h0 = 0.01 ||y|| / ||f|| in the error norm (Hairer et al. II.4, first estimate), within 1e-6 to 10 m."""
        x, y = self.x[self.live], self.y[:, self.live]
        _, edge = self._segment_edges(x)
        f = self._rhs(x, y, edge)
        scale = TOLERANCE + TOLERANCE * np.abs(y)
        d0 = np.sqrt(np.mean((y / scale) ** 2, axis=0))
        d1 = np.sqrt(np.mean((f / scale) ** 2, axis=0))
        h0 = np.where((d0 < 1e-5) | (d1 < 1e-5), 1e-6, 0.01 * d0 / np.maximum(d1, 1e-300))
        return np.asarray(np.clip(h0, 1e-6, 10.0), dtype=float)

    def advance(self) -> None:
        """One Dormand-Prince step attempt for every live column; accept, locate events, stop the finished."""
        live = self.live
        x, y = self.x[live], self.y[:, live]
        following, edge = self._segment_edges(x)
        limit = np.minimum(following, self.end_limit[live])
        limit = np.where(self.reached[live], np.minimum(limit, self.through[live]), limit)
        h = np.minimum(self.h[live], limit - x)
        k = np.empty((7, *y.shape))
        k[0] = self._rhs(x, y, edge)
        for s in range(1, 6):
            k[s] = self._rhs(x + _C[s] * h, y + h * np.einsum("s,s...->...", _A[s, :s], k[:s]), edge)
        y_new = y + h * np.einsum("s,s...->...", _B, k[:6])
        x_new = np.where(h >= limit - x, limit, x + h)  # land exactly on breakpoints and stops
        k[6] = self._rhs(x_new, y_new, edge)
        scale = TOLERANCE + TOLERANCE * np.maximum(np.abs(y), np.abs(y_new))
        norm = np.sqrt(np.mean((h * np.einsum("s,s...->...", _E, k) / scale) ** 2, axis=0))
        accept = norm < 1.0
        failed = ~np.isfinite(norm) | (h < 1e-12)  # a model returning nonsense: stop that vehicle where it is
        if failed.any():
            self.done[live[failed]] = True
            accept &= ~failed
        factor = np.where(norm == 0.0, _MAX_FACTOR, _SAFETY * np.maximum(norm, 1e-300) ** -0.2)
        grow = np.where(self.rejected[live], np.minimum(factor, 1.0), np.minimum(factor, _MAX_FACTOR))
        self.h[live] = np.where(accept, h * grow, h * np.maximum(factor, _MIN_FACTOR))
        self.rejected[live] = ~accept
        if not accept.any():
            if failed.any():
                self._update_live()
            return
        taken = np.flatnonzero(accept)
        cols = live[taken]
        x0, h, end = x[taken], h[taken], x_new[taken]
        y0, y1 = y[:, taken], y_new[:, taken]
        q = np.einsum("sj,s...->j...", _P, k[:, :, taken])  # (4, 2, m): continuous extension
        # the target speed, first reached inside this step
        level = 0.5 * self.target[cols] ** 2
        crossed = np.where(self.slowing[cols], y1[0] <= level, y1[0] >= level)
        hit = np.flatnonzero(~self.reached[cols] & crossed)
        if hit.size:
            sigma = _crossing(y0[0, hit], h[hit], q[:, 0, hit], 0.5 * self.target[cols[hit]] ** 2)
            self.target_x[cols[hit]] = x0[hit] + sigma * h[hit]
            self.target_t[cols[hit]] = _dense(y0[1, hit], h[hit], q[:, 1, hit], sigma)
            self.reached[cols[hit]] = True
        # a stall: the vehicle slows to a stop; its path ends there
        stall = np.flatnonzero(y1[0] < 0.5 * _STALL_SPEED**2)
        if stall.size:
            sigma = _crossing(y0[0, stall], h[stall], q[:, 0, stall], 0.5 * _STALL_SPEED**2)
            end[stall] = x0[stall] + sigma * h[stall]
            for row in (0, 1):
                y1[row, stall] = _dense(y0[row, stall], h[stall], q[:, row, stall], sigma)
            self.stalled[cols[stall]], self.crawl[cols[stall]] = True, 0.0
        self.steps.append(cols, x0, h, y0, q)
        self.x[cols], self.y[:, cols] = end, y1
        finished = self.stalled[cols] | (end >= self.end_limit[cols] - 1e-9)
        finished |= self.reached[cols] & (end >= self.through[cols] - 1e-9)
        finished |= self._settled(cols, end, np.sqrt(2.0 * np.maximum(y1[0], 0.0)), finished)
        if finished.any() or failed.any():
            self.done[cols[finished]] = True
            self._update_live()

    def _settled(
        self, cols: IndexArray, x: FloatArray, v: FloatArray, finished: NDArray[np.bool_]
    ) -> NDArray[np.bool_]:
        """Past the last grade change and ``through``, short of the target: settled near the crawl speed?"""
        check = ~finished & ~self.reached[cols] & (x >= self.last_change_end[cols]) & (x >= self.through[cols])
        again = check & (np.isnan(self.crawl_checked_at[cols]) | (x - self.crawl_checked_at[cols] >= _RECHECK))
        if again.any():
            c = cols[again]
            height = self.base[c] + self.profiles.elevation(x[again], c)
            settle = equilibrium_speeds(self.models.take(c), self.final_grade[c], height, v[again])
            short = np.where(self.slowing[c], settle > self.target[c], settle < self.target[c])
            self.crawl[c] = np.where(short, settle, np.nan)
            self.crawl_checked_at[c] = x[again]
        crawl = self.crawl[cols]
        with np.errstate(invalid="ignore"):
            return np.asarray(check & (np.abs(v - crawl) <= _SETTLED * np.maximum(crawl, 1.0)), dtype=bool)

    def trajectories(self, runs: list[Run], output_step: float) -> list[Trajectory]:
        """One trajectory per column, holding its own steps."""
        column, steps = self.steps.joined()
        bounds = np.searchsorted(column, np.arange(len(runs) + 1))
        result = []
        for i, run in enumerate(runs):
            piece = slice(bounds[i], bounds[i + 1])
            reached, crawl = bool(self.reached[i]), float(self.crawl[i])
            result.append(
                Trajectory(
                    initial_speed=run.initial_speed,
                    target_speed=run.target_speed,
                    target_station=float(self.target_x[i]) if reached else None,
                    target_time=float(self.target_t[i]) if reached else None,
                    crawl_speed=None if math.isnan(crawl) else crawl,
                    stalled=bool(self.stalled[i]),
                    start=run.start,
                    end=float(self.x[i]),
                    launch=None if math.isnan(self.launch[i]) else float(self.launch[i]),
                    pieces=Pieces(steps.x[piece], steps.h[piece], steps.y[:, piece], steps.q[:, :, piece]),
                    output_step=output_step,
                )
            )
        return result


@dataclass(slots=True)
class _Steps:
    """Accepted steps of every column, kept as each trajectory's continuous extension."""

    column: list[IndexArray]
    x: list[FloatArray]
    h: list[FloatArray]
    y: list[FloatArray]
    q: list[FloatArray]

    def append(self, column: IndexArray, x: FloatArray, h: FloatArray, y: FloatArray, q: FloatArray) -> None:
        self.column.append(column)
        self.x.append(x)
        self.h.append(h)
        self.y.append(y)
        self.q.append(q)

    def joined(self) -> tuple[IndexArray, Pieces]:
        """All steps as one set of pieces grouped by column in station order, and the column of each."""
        if not self.column:
            self.append(np.empty(0, np.intp), np.empty(0), np.ones(0), np.empty((2, 0)), np.empty((4, 2, 0)))
        column, x = np.concatenate(self.column), np.concatenate(self.x)
        order = np.lexsort((x, column))
        pieces = Pieces(
            x[order],
            np.concatenate(self.h)[order],
            np.concatenate(self.y, axis=1)[:, order],
            np.concatenate(self.q, axis=2)[:, :, order],
        )
        return column[order], pieces


def _dense(y0: FloatArray, h: FloatArray, q: FloatArray, sigma: FloatArray) -> FloatArray:
    """Continuous extension: y(x0 + sigma h) = y0 + h sum_j Q_j sigma^(j+1) (Dormand and Prince 1980)."""
    return np.asarray(y0 + h * sigma * (q[0] + sigma * (q[1] + sigma * (q[2] + sigma * q[3]))), dtype=float)


def _crossing(y0: FloatArray, h: FloatArray, q: FloatArray, level: float | FloatArray) -> FloatArray:
    """Fraction sigma of the step where the continuous extension of u crosses ``level`` (bisection)."""
    low, high = np.zeros_like(y0), np.ones_like(y0)
    below_at_start = y0 < level
    for _ in range(60):
        middle = 0.5 * (low + high)
        same = (_dense(y0, h, q, middle) < level) == below_at_start
        low, high = np.where(same, middle, low), np.where(same, high, middle)
    return high
