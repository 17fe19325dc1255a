"""Traffic states, the flow-density relation, and the queue behind a bottleneck.

With the fundamental relation q = k v, the boundary between an upstream
arriving state A and a queued state Q moves at

.. math:: w = \\frac{q_Q - q_A}{k_Q - k_A}                                      (1)

(Lighthill and Whitham 1955; Richards 1956): negative, upstream, while the
queue grows. The queue region gains vehicles, over what the arriving state
would hold on the same road, at q_A - q_Q; its back lies |w| t upstream of
the bottleneck after t. The flow-density relation is triangular (free-flow
speed, capacity, jam density; Newell 1993).

References
----------
Lighthill, M. J., and Whitham, G. B. (1955). "On kinematic waves II. A theory of traffic flow on long
crowded roads." Proc. R. Soc. Lond. A 229, 317-345.
Richards, P. I. (1956). "Shock waves on the highway." Operations Research 4(1), 42-51.
Newell, G. F. (1993). "A simplified theory of kinematic waves in highway traffic." Transportation Research B 27(4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class TrafficState:
    """A traffic state: flow [veh/s] and density [veh/m]."""

    flow: float
    density: float

    @property
    def speed(self) -> float:
        """Space-mean speed q / k. [m/s]"""
        return self.flow / self.density if self.density > 0 else math.inf


def on_one_relation(a: TrafficState, b: TrafficState) -> bool:
    """Whether two states can lie on one concave flow-density relation through the origin (the relation of
    kinematic-wave theory): then the shock between them, the chord's slope, is no faster than the lower-density
    state's own speed, w <= q1 / k1 (a chord of a concave function through the origin is no steeper than the chord
    from the origin). Upstream-moving shocks are held to the same bound in magnitude, |w| <= the faster state's
    speed: backward waves run at 15-25 km/h on freeways, far below traffic speeds (common practice).

    >>> on_one_relation(TrafficState(1800 / 3600, 20 / 1000), TrafficState(1200 / 3600, 80 / 1000))
    True
    >>> on_one_relation(TrafficState(4000 / 3600, 40 / 1000), TrafficState(3600 / 3600, 40.0003 / 1000))
    False
    """
    if a.density == b.density:
        return False
    low = a if a.density < b.density else b
    w = shock_speed(a, b)
    return w <= low.speed * (1 + 1e-9) and -w <= max(a.speed, b.speed) * (1 + 1e-9)


def shock_speed(upstream: TrafficState, downstream: TrafficState) -> float:
    """Speed of the boundary between two states, Eq. (1). [m/s]

    Examples
    --------
    1800 veh/h at 20 veh/km arriving on a queue discharging 1200 veh/h at 80 veh/km:
    w = (1200 - 1800) / (80 - 20) = -10 km/h, upstream.

    >>> a = TrafficState(1800 / 3600, 20 / 1000)
    >>> q = TrafficState(1200 / 3600, 80 / 1000)
    >>> round(shock_speed(a, q) * 3.6, 6)
    -10.0
    """
    if downstream.density == upstream.density:
        raise ValueError("two states with the same density have no boundary")
    return (downstream.flow - upstream.flow) / (downstream.density - upstream.density)


@dataclass(frozen=True, slots=True)
class Triangular:
    """Triangular flow-density relation for a road of one or more lanes (totals over the lanes).

    Attributes
    ----------
    free_flow_speed : float
        [m/s]
    capacity : float
        [veh/s]
    jam_density : float
        [veh/m]
    """

    free_flow_speed: float
    capacity: float
    jam_density: float

    @property
    def critical_density(self) -> float:
        """[veh/m]"""
        return self.capacity / self.free_flow_speed

    @property
    def wave_speed(self) -> float:
        """Speed of waves on the congested branch (positive number, waves move upstream). [m/s]"""
        return self.capacity / (self.jam_density - self.critical_density)

    def free(self, flow: float) -> TrafficState:
        """Uncongested state carrying a flow (at most capacity)."""
        return TrafficState(flow, flow / self.free_flow_speed)

    def congested(self, flow: float) -> TrafficState:
        """Congested (queued) state carrying a flow."""
        return TrafficState(flow, self.jam_density - flow / self.wave_speed)


@dataclass(frozen=True, slots=True, kw_only=True)
class QueueGrowth:
    """The queue behind a bottleneck between an arriving and a queued state."""

    arriving: TrafficState
    queued: TrafficState
    shock_speed: float
    """Eq. (1); negative while the queue grows. [m/s]"""
    growth: float
    """Vehicles gained by the queue region per unit time, q_A - q_Q. [veh/s]"""
    duration: float
    """[s]"""

    @property
    def length_after(self) -> float:
        """Distance from the bottleneck to the back of the queue after the duration. [m]"""
        return max(0.0, -self.shock_speed) * self.duration

    @property
    def joined_after(self) -> float:
        """Vehicles that joined the queue (crossed its moving back) in the duration, (q_A - k_A w) t. [veh]

        Examples
        --------
        By hand: 1,800 veh/h at 90 km/h (20 veh/km) stopped by a full closure (no discharge, jam density
        150 veh/km): w = (0 - 1800) / (150 - 20) = -13.85 km/h; in one hour the queue reaches 13.85 km and
        holds 150 x 13.85 = 2,077 vehicles, all of which joined it; 1,800 more than the road held before.

        >>> closure = queue_growth(TrafficState(0.5, 0.02), TrafficState(0.0, 0.15), 3600.0)
        >>> round(closure.length_after), round(closure.joined_after), round(closure.excess_after)
        (13846, 2077, 1800)
        """
        if self.shock_speed >= 0:
            return 0.0
        return (self.arriving.flow - self.arriving.density * self.shock_speed) * self.duration

    @property
    def excess_after(self) -> float:
        """Vehicles on the queued stretch in excess of what it held before, (q_A - q_Q) t. [veh]"""
        return max(0.0, self.growth) * self.duration


def queue_growth(arriving: TrafficState, queued: TrafficState, duration: float) -> QueueGrowth:
    """Shock speed and queue figures between two states (Eq. 1)."""
    return QueueGrowth(
        arriving=arriving,
        queued=queued,
        shock_speed=shock_speed(arriving, queued),
        growth=arriving.flow - queued.flow,
        duration=duration,
    )


@dataclass(frozen=True, slots=True, kw_only=True)
class QueueHistory:
    """The queue over a demand profile, sampled in time."""

    time: FloatArray
    """[s]"""
    length: FloatArray
    """Back of the queue, distance upstream of the bottleneck. [m]"""
    entered: FloatArray
    """Vehicles that have crossed the moving back of the queue. [veh]"""
    discharged: FloatArray
    """Vehicles that have left the queue at the bottleneck. [veh]"""
    stored: FloatArray
    """Vehicles in the queue, k_Q times its length. [veh]"""
    clears_at: float | None
    """When the queue is gone; None if it outlasts the profile. [s]"""


def queue_history(periods: list[tuple[float, TrafficState]], queued: TrafficState, step: float = 10.0) -> QueueHistory:
    """Follow the back of the queue through periods of arriving demand.

    Each period (duration [s], arriving state) sends its state to the back of
    the queue, which moves at Eq. (1) for that pair of states; the queue
    discharges q_Q while it exists. Vehicles cross the moving back at
    q_A - k_A w, so entered = discharged + stored at every time (mass
    conservation across a moving boundary).
    """
    times, lengths, entered, discharged = [0.0], [0.0], [0.0], [0.0]
    clears_at: float | None = None
    clock, length, n_in, n_out = 0.0, 0.0, 0.0, 0.0
    for duration, arriving in periods:
        w = shock_speed(arriving, queued)
        end = clock + duration
        while clock < end - 1e-9:
            dt = min(step, end - clock)
            if length <= 0 and w >= 0:  # no queue, none forming: flow passes through
                clock += dt
                times.append(clock)
                lengths.append(0.0)
                entered.append(n_in)
                discharged.append(n_out)
                continue
            grow = -w * dt
            if length + grow < 0:  # the queue clears within this step
                dt = length / w
                grow = -length
                clears_at = clock + dt
            length += grow
            clock += dt
            n_in += (arriving.flow - arriving.density * w) * dt
            n_out += queued.flow * dt
            times.append(clock)
            lengths.append(length)
            entered.append(n_in)
            discharged.append(n_out)
        if length > 0:
            clears_at = None
    length_arr = np.array(lengths)
    return QueueHistory(
        time=np.array(times),
        length=length_arr,
        entered=np.array(entered),
        discharged=np.array(discharged),
        stored=queued.density * length_arr,
        clears_at=clears_at,
    )
