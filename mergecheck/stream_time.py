"""Stream time: how much of the adjacent lane's headway time passes a merging vehicle along its path.

Gaps pass a merging vehicle at the rate the stream overtakes it (moving-observer relation): with density
k = q / v_m, the number of stream vehicles passing per unit of the merging vehicle's travel is
k |v_m - v_r| / v_r. Measured in stream time (the headway time that has passed the merging vehicle),

.. math:: \\tau(x) = \\int_{x_a}^{x} \\frac{\\max(|v_m - v_r(x')|,\\, \\Delta v_s)}{v_m\\, v_r(x')} dx'      (1)

from the station x_a where the vehicle may first merge (past the convergence point and within the
minimum-merge-speed differential of the stream). The search speed Delta v_s is an explicit assumption: a
driver matched to the stream's speed adjusts speed to search, so that gaps keep passing at least at that
relative speed. Once at merge speed, the driver holds it.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


def stream_time(
    station: FloatArray,
    speed: FloatArray,
    stream_speed: float,
    search_speed: float,
    eligible_from: float,
    hold_speed: float,
) -> FloatArray:
    """tau(x) of Eq. (1) at each station; 0 before the eligible station. [s]

    Parameters
    ----------
    station, speed
        The merging vehicle's trajectory. [m], [m/s]
    stream_speed
        v_m. [m/s]
    search_speed
        Delta v_s, the least relative speed at which gaps pass. [m/s]
    eligible_from
        x_a, where merging may begin. [m]
    hold_speed
        The driver holds this speed once reached (the merge speed). [m/s]
    """

    def row(value: float) -> FloatArray:
        return np.array([value], dtype=float)

    tau = stream_times(
        np.asarray(station, dtype=float)[None],
        np.asarray(speed, dtype=float)[None],
        row(stream_speed),
        row(search_speed),
        row(eligible_from),
        row(hold_speed),
    )
    return np.asarray(tau[0], dtype=float)


def stream_times(
    station: FloatArray,
    speed: FloatArray,
    stream_speed: FloatArray,
    search_speed: FloatArray,
    eligible_from: FloatArray,
    hold_speed: FloatArray,
) -> FloatArray:
    """:func:`stream_time` for every row of (vehicles, stations) arrays; one value per row for the rest.

    Trapezoidal rule between stations; the segment that crosses x_a counts
    only its part past x_a.
    """
    v = np.minimum(np.maximum(speed, 0.1), hold_speed[:, None])
    vm = stream_speed[:, None]
    rate = np.maximum(np.abs(vm - v), search_speed[:, None]) / (vm * v)
    past = station >= eligible_from[:, None]
    rate = np.where(past, rate, 0.0)
    tau = np.zeros_like(station)
    tau[:, 1:] = np.cumsum(0.5 * (rate[:, 1:] + rate[:, :-1]) * np.diff(station, axis=1), axis=1)
    rows = np.arange(station.shape[0])
    first = np.argmax(past, axis=1)
    crossed = first > 0  # (a row that never becomes eligible has x_a = inf and no station past it)
    partial = np.where(crossed, (station[rows, first] - np.where(crossed, eligible_from, 0.0)) * rate[rows, first], 0.0)
    return np.asarray(np.where(past, tau - tau[rows, first][:, None] + partial[:, None], 0.0), dtype=float)
