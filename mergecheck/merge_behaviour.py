"""Merge behaviour from an acceleration lane: active gap selection, pressure near the lane end, yielding.

A merging driver is eligible from the station x_a past the convergence point
where they are within the minimum merge speed differential of the stream. From
there they look at the adjacent lane in stream time tau (the headway time
that has passed beside them, moving-observer relation):

.. math:: \\frac{d\\tau}{dx} = \\frac{u(x)}{v_m\\,(v_m - u(x))}, \\qquad u(x) = \\max(\\delta(x), u_s)      (1)

with delta(x) = v_m - v(x) the vehicle's own shortfall from the stream's
speed v_m (its speed held at merge speed once reached) and u_s the search
differential: a driver close to the stream's speed who has rejected the gap
beside them eases off (or speeds up) to bring the next gap alongside, at a
relative speed of at least u_s, instead of waiting for gaps to drift past
(active gap selection; Choudhury, Ramanujam and Ben-Akiva 2009, TRR 2124:
drivers target a gap other than the adjacent one and accelerate or
decelerate to reach it).

Watching the stream from the ramp, the driver arrives beside a gap picked
from the first W_a of stream time (the approach window: tau starts at W_a at
x_a, every gap within it judged there). The gap beside the driver is judged
by its length h and by the part r still behind them (the lag, which must
hold the lag share of the critical gap plus the closing term below), not by
its length alone. Each later gap h (lead to lag vehicle) is judged once, as
it comes alongside at station x:

* it is accepted if h >= t_req(x), with

  .. math:: t_{req}(x) = t_c\\, m(d) + \\frac{u^2}{2\\, v_m\\, (a(x) + b_f)}             (2)

  t_c the driver's critical gap at ease (log-normal across drivers), the
  second term the time the lag vehicle needs to close the speed difference u
  while the merger accelerates at a(x) (its own capability at that station)
  and the follower eases off at b_f without braking (the safe-gap reasoning
  of Gipps 1986, "A model for the structure of lane-changing decisions",
  Transportation Research B 20(5)): a vehicle slower than the stream needs a
  longer gap, most of all a heavy vehicle on an upgrade; and m(d) the
  pressure of the lane end d metres ahead,

  .. math:: m(d) = r_e + (1 - r_e) \\min(1, d / D_p)                                   (3)

  (drivers accept shorter gaps as the end nears: Daamen, Loot and
  Hoogendoorn 2010, TRR 2188; Marczak, Daamen and Buisson 2013,
  Transportation Research C 36);
* otherwise, if h >= t_f(x) = t_f0 + u^2 / (2 v_m (a(x) + b_y)), the lag
  vehicle yields (eases back and lets the merger in, braking at up to b_y)
  with probability

  .. math:: p_y = p_c \\min(1, k / k_c), \\qquad k = q / v_m                          (4)

  rising with the density of the adjacent lane (courtesy yielding: Kita 1993,
  Transportation Research A 27(4); Hidas 2005, Transportation Research C
  13(1)); in the taper every such gap is forced (p = 1): the driver noses in
  and the follower must give way;
* otherwise the gap passes and the next one comes alongside.

At the end of the full-width lane a driver still beside a refused gap forces
into it if the part behind them holds the forced lag. A vehicle that never
comes within the minimum merge speed differential is judged from the end of
the lane by the forced rule alone. A merge is counted where the lane change
is half done, half the lane-change time after the decision.

Merging is then a renewal process in tau whose acceptance rule changes with
the station where each gap is judged. With g_s the probability that a fresh
gap comes alongside at stream time s, unmerged, and R_s(h) the probability
that a gap of length h judged at s is refused,

.. math::

    g_s = g^{(0)}_s + \\int_0^s g_{s'} f(s - s') R_{s'}(s - s')\\, ds'                  (5)

    P_{not}(\\tau) = w(\\tau) + \\int_0^\\tau g_s \\int_{\\tau - s}^\\infty f(h) R_s(h)\\, dh\\, ds  (6)

with g^(0) the density of refused first gaps ending and w(tau) the probability of a
refused first gap still beside the driver at tau. :func:`solve` integrates Eqs.
(5)-(6) forward on a grid in tau, exactly per cell for the headway masses,
every driver node and design vehicle at once; :func:`simulate` draws the
same behaviour gap by gap (Monte Carlo) to check it. Two curves are solved
per vehicle: at the site (Eq. 3 with the real lane end, forced merges in the
taper), and unhurried (m = 1, no forcing, on a lane imagined long enough):
the length for the target reliability is read from the unhurried curve, so
that a lane never counts as long enough because drivers are forced in.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, fields
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .headways import CowanM3, Exponential, HeadwayModel, m3_survival, m3_survival_integral
from .padded_rows import interp_rows

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]
Times = NDArray[np.floating[Any]]

CELL = 0.2
"""Grid step of Eqs. (5)-(6) in stream time. [s]"""


@dataclass(frozen=True, slots=True, kw_only=True)
class MergeBehaviour:
    """Parameters of the active merge behaviour (SI units); each default names its basis in ``SOURCES``."""

    search_differential: float = 15 / 3.6
    """u_s of Eq. (1). [m/s]"""
    follower_easing: float = 0.5
    """b_f of Eq. (2): deceleration of a follower who only eases off. [m/s^2]"""
    lane_end_share: float = 0.5
    """r_e of Eq. (3): share of the critical gap still asked for at the end of the lane. [-]"""
    pressure_distance: float = 150.0
    """D_p of Eq. (3): how far before the end of the lane the pressure begins. [m]"""
    yield_at_capacity: float = 0.8
    """p_c of Eq. (4): probability that a lag vehicle yields to a merger at the capacity density. [-]"""
    capacity_density: float = 28.0 / 1000
    """k_c of Eq. (4). [veh/m]"""
    forced_gap: float = 0.8
    """t_f0: least gap a driver forces into, or is let into. [s]"""
    yield_braking: float = 2.0
    """b_y: deceleration a yielding or forced follower accepts. [m/s^2]"""
    approach_window: float = 5.0
    """W_a: stream time from which a driver picks the gap to arrive beside at x_a. [s]"""
    lag_share: float = 0.5
    """Share of the critical gap (and of the forced gap) that must lie behind the merger, the closing term
    coming on top. [-]"""
    lane_change_time: float = 4.0
    """Duration of the lane change; a merge counts where it is half done. [s]"""

    def __post_init__(self) -> None:
        checks = {
            "search differential": self.search_differential > 0,
            "follower easing": self.follower_easing > 0,
            "lane-end share": 0 < self.lane_end_share <= 1,
            "pressure distance": self.pressure_distance > 0,
            "yield probability": 0 <= self.yield_at_capacity <= 1,
            "capacity density": self.capacity_density > 0,
            "forced gap": self.forced_gap > 0,
            "yield braking": self.yield_braking > 0,
            "approach window": self.approach_window >= 0,
            "lag share": 0 <= self.lag_share <= 1,
            "lane-change time": self.lane_change_time >= 0,
        }
        bad = [name for name, ok in checks.items() if not ok]
        if bad:
            raise ValueError(f"merge behaviour: {bad[0]} out of range")

    def yield_probability(self, flow: float, stream_speed: float) -> float:
        """p_y of Eq. (4) at a flow [veh/s] and stream speed [m/s]. [-]"""
        return self.yield_at_capacity * min(1.0, flow / stream_speed / self.capacity_density)


SOURCES: dict[str, str] = {
    "search_differential": (
        "assumption: a driver close to the stream's speed adjusts speed to reach the next gap (active selection, "
        "Choudhury, Ramanujam and Ben-Akiva 2009, TRR 2124); 15 km/h not from a published measurement"
    ),
    "follower_easing": "common practice: a following driver easing off without braking slows at about 0.5 m/s^2",
    "lane_end_share": (
        "assumption: accepted gaps shrink towards the lane end (Daamen, Loot and Hoogendoorn 2010, TRR 2188, and "
        "Marczak, Daamen and Buisson 2013, Transportation Research C 36, found the distance to the lane end "
        "significant); the share 0.5 is not from those papers"
    ),
    "pressure_distance": "assumption: about 6 s of travel at highway speed before the end of the lane",
    "yield_at_capacity": (
        "assumption: courtesy yielding rises with density (Kita 1993, Transportation Research A 27(4); Hidas 2005, "
        "Transportation Research C 13(1)); 0.8 at capacity not from a published measurement, set with the approach "
        "window so that the field pattern holds (tests/test_merge_behaviour.py)"
    ),
    "approach_window": (
        "assumption: a driver watching the stream from the ramp picks among the gap beside them and those either side "
        "(the adjacent, forward and backward gaps of Choudhury, Ramanujam and Ben-Akiva 2009, TRR 2124), about 5 s "
        "of stream time; set so that the field pattern holds (tests/test_merge_behaviour.py)"
    ),
    "lag_share": "assumption: lead and lag share the gap equally when speeds match; the closing term adds to the lag",
    "lane_change_time": (
        "from memory: lane changes last about 3 to 6 s (Toledo and Zohar 2007, TRR 1999); a merge counts where it "
        "is half done"
    ),
    "capacity_density": "Highway Capacity Manual 6th ed.: capacity of a basic freeway lane at about 45 pc/mi/ln (from memory)",
    "forced_gap": (
        "Daamen, Loot and Hoogendoorn 2010 (TRR 2188, abstract read): the smallest accepted gap observed lay "
        "between 0.75 and 1.0 s; 0.8 s taken within that range"
    ),
    "yield_braking": "common practice: moderate braking of about 2 m/s^2, well below an emergency stop",
}


@dataclass(frozen=True, slots=True)
class Rules:
    """The acceptance rule of Eqs. (2)-(4) on a grid of stream time, one row per design vehicle.

    Cell i holds stream time i * CELL; a gap judged there is accepted if at least
    ``share[i] * t_c + closing[i]``, or if at least ``forced[i]`` with probability ``yielding[i]``.
    Rows are padded with their last cell.
    """

    station: FloatArray
    """(V, N) station where a gap of cell i is judged. [m]"""
    share: FloatArray
    """(V, N) m(d) of Eq. (3). [-]"""
    closing: FloatArray
    """(V, N) the closing term of Eq. (2). [s]"""
    forced: FloatArray
    """(V, N) t_f. [s]"""
    yielding: FloatArray
    """(V, N) probability of a yield for a gap between t_f and t_req. [-]"""
    forced_lag: FloatArray
    """(V, N) lag needed in a yield or forced merge. [s]"""
    lag_part: FloatArray
    """(V, N) share of t_c needed behind the merger (the lag share times m(d)); the closing term comes on top. [-]"""
    cells: IntArray
    """(V,) cells solved per row."""
    force_cell: IntArray
    """(V,) cell at the end of the lane, where a driver beside a refused gap forces in if its part behind
    them is at least the forced lag; beyond the solved cells for the unhurried curve."""

    def row(self, i: int) -> Rules:
        """Row i alone."""
        cut = {name: getattr(self, name)[i : i + 1, : self.cells[i]] for name in _PER_CELL}
        return Rules(**cut, cells=self.cells[i : i + 1], force_cell=self.force_cell[i : i + 1])

    @classmethod
    def stack(cls, rows: Sequence[tuple[FloatArray, ...]]) -> Rules:
        """Rows of (station, share, closing, forced, yielding, forced_lag, lag_part) per cell and the force
        cell, padded to a common length."""
        cells = np.array([r[0].size for r in rows], dtype=np.intp)
        force = np.array([int(r[7][0]) for r in rows], dtype=np.intp)
        width = int(cells.max())

        def pad(k: int) -> FloatArray:
            out = np.empty((len(rows), width))
            for i, r in enumerate(rows):
                out[i, : r[k].size], out[i, r[k].size :] = r[k], r[k][-1]
            return out

        return cls(pad(0), pad(1), pad(2), pad(3), pad(4), pad(5), pad(6), cells, force)


_PER_CELL = ("station", "share", "closing", "forced", "yielding", "forced_lag", "lag_part")


def search_rate(speed: FloatArray, stream_speed: FloatArray, search: FloatArray) -> tuple[FloatArray, FloatArray]:
    """u(x) of Eq. (1) and d tau / dx, for a speed already held at merge speed, with search differential
    u_s. ([m/s], [s/m])"""
    u = np.minimum(np.maximum(stream_speed - speed, search), 0.95 * stream_speed)
    return u, u / (stream_speed * (stream_speed - u))


def rules_along(
    station: ArrayLike,
    speed: ArrayLike,
    acceleration: ArrayLike,
    *,
    eligible: ArrayLike,
    until: ArrayLike,
    stream_speed: ArrayLike,
    merge_speed: ArrayLike,
    flow: ArrayLike,
    lane_end: ArrayLike,
    taper_end: ArrayLike,
    behaviour: MergeBehaviour | Sequence[MergeBehaviour],
    pressured: bool,
    cells: int | None = None,
) -> tuple[FloatArray, Rules]:
    """Each vehicle's tau(x) at its stations, and its acceptance rule per cell from x_a (``eligible``) to ``until``.

    ``station``, ``speed`` and ``acceleration`` are rows (V, S), one per vehicle, padded past each
    row's end by repeating its last sample (a single path may be given as one row): the vehicle's own
    speed and acceleration along the path ([m], [m/s], [m/s^2]; the speed is held at ``merge_speed``
    here). The rest are one value per row, or one for all: ``flow`` the adjacent lane's [veh/s], the
    others in m and m/s. ``pressured`` applies Eq. (3) with the real lane end and forced merges between
    ``lane_end`` and ``taper_end``; otherwise m = 1 and the yield probability is Eq. (4) throughout (the
    unhurried curve). ``cells`` caps the cells of every rule.

    Stream time is the trapezoid rule of Eq. (1) over each segment's part between x_a and ``until``
    (the rate taken linear along the segment), plus the approach window W_a at x_a; the station where
    each cell is judged is read back from it linearly.
    """
    x = np.atleast_2d(np.asarray(station, dtype=float))
    v = np.atleast_2d(np.asarray(speed, dtype=float))
    acc = np.atleast_2d(np.asarray(acceleration, dtype=float))
    rows = x.shape[0]

    def column(value: ArrayLike) -> FloatArray:
        return np.broadcast_to(np.asarray(value, dtype=float), (rows,)).reshape(-1, 1)

    e, end, vm = column(eligible), column(until), column(stream_speed)
    width = x.shape[1]
    reach = min(width, int(np.max(np.sum(x < end, axis=1), initial=0)) + 1)  # to each row's first station past `until`
    x, v, acc = x[:, :reach], v[:, :reach], acc[:, :reach]
    b = _parameters(behaviour, rows)
    u, rate = search_rate(np.minimum(v, column(merge_speed)), vm, b["search_differential"])
    low, high = np.clip(x[:, :-1], e, end), np.clip(x[:, 1:], e, end)
    length = np.diff(x, axis=1)
    slope = np.divide(np.diff(rate, axis=1), length, out=np.zeros_like(length), where=length > 0)
    part = 0.5 * (2 * rate[:, :-1] + slope * (low + high - 2 * x[:, :-1])) * (high - low)
    window = b["approach_window"]
    tau = np.concatenate([np.zeros((rows, 1)), np.cumsum(part, axis=1)], axis=1) + window
    total = tau[:, -1]
    tau = np.where(x >= e, tau, 0.0)
    count = np.maximum(1, np.floor(total / CELL).astype(np.intp) + 1)
    if cells is not None:
        count = np.minimum(count, cells)
    judged = (
        np.minimum(np.arange(int(count.max()))[None, :], (count - 1)[:, None]) * CELL
    )  # rows padded with their last cell
    past = np.where(x >= e, tau, window)
    used = min(reach, int(np.max(np.sum(past < judged[:, -1:], axis=1))) + 1)  # to the station of the last cell
    knots_tau = np.concatenate([np.zeros((rows, 1)), window, past[:, :used]], axis=1)
    knots_x = np.concatenate([e, e, np.clip(x[:, :used], e, end)], axis=1)  # the approach: gaps judged at x_a
    at = interp_rows(judged, knots_tau, knots_x)
    uc = interp_rows(at, x[:, :used], u[:, :used])
    ac = np.maximum(interp_rows(at, x[:, :used], acc[:, :used]), 0.0)
    closing = uc**2 / (2 * vm * (ac + b["follower_easing"]))
    forced_closing = uc**2 / (2 * vm * (ac + b["yield_braking"]))
    yielding = b["yield_at_capacity"] * np.minimum(1.0, column(flow) / vm / b["capacity_density"])
    p = np.broadcast_to(yielding, at.shape)
    share = np.ones_like(at)
    within = np.arange(at.shape[1])[None, :] < count[:, None]
    if pressured:
        lane, taper = column(lane_end), column(taper_end)
        share = b["lane_end_share"] + (1 - b["lane_end_share"]) * np.clip((lane - at) / b["pressure_distance"], 0, 1)
        p = np.where((at >= lane) & (at <= taper), 1.0, p)
        force = np.sum((at < lane) & within, axis=1)
    else:
        force = count + 1
    rules = Rules(
        station=at,
        share=share,
        closing=closing,
        forced=b["forced_gap"] + forced_closing,
        yielding=np.asarray(p, dtype=float),
        forced_lag=b["lag_share"] * b["forced_gap"] + forced_closing,
        lag_part=b["lag_share"] * share,
        cells=count,
        force_cell=np.asarray(force, dtype=np.intp),
    )
    return np.pad(tau, ((0, 0), (0, width - reach)), mode="edge"), rules  # past `until` tau holds


def _parameters(behaviour: MergeBehaviour | Sequence[MergeBehaviour], rows: int) -> dict[str, FloatArray]:
    """Each field of the merge behaviour as a column (V, 1)."""
    given = [behaviour] * rows if isinstance(behaviour, MergeBehaviour) else list(behaviour)
    if len(given) != rows:
        raise ValueError(f"{len(given)} merge behaviours for {rows} rows")
    names = [f.name for f in fields(MergeBehaviour)]
    distinct = {id(b): b for b in given}  # most rows share one object
    which = {key: i for i, key in enumerate(distinct)}
    table = np.array([[getattr(b, n) for n in names] for b in distinct.values()], dtype=float)
    index = np.array([which[id(b)] for b in given], dtype=np.intp)
    return {n: table[index, k : k + 1] for k, n in enumerate(names)}


@dataclass(frozen=True, slots=True)
class _Streams:
    """Headway models, one per design vehicle, as columns (V, 1) of the family S(t) = alpha exp(-lambda (t - Delta))
    beyond Delta, 1 below (Cowan's M3; the negative exponential is alpha = 1, Delta = 0)."""

    alpha: FloatArray
    decay: FloatArray
    shift: FloatArray

    @classmethod
    def of(cls, models: Sequence[HeadwayModel]) -> _Streams:
        forms = []
        for m in models:
            if not isinstance(m, (CowanM3, Exponential)):
                raise TypeError(f"no closed form for headway model {type(m).__name__}")
            forms.append(m.m3_form)
        a = np.array(forms, dtype=np.float64).reshape(-1, 3)
        return cls(a[:, :1], a[:, 1:2], a[:, 2:])

    def take(self, keep: NDArray[np.bool_]) -> _Streams:
        return _Streams(self.alpha[keep], self.decay[keep], self.shift[keep])

    def survival(self, t: Times) -> FloatArray:
        """P(h > t), t broadcast against the (V, 1) columns. [-]"""
        return m3_survival(t, self.alpha, self.decay, self.shift)

    def cdf(self, t: Times) -> FloatArray:
        """P(h <= t). [-]"""
        return 1.0 - self.survival(t)

    def survival_integral(self, t: Times) -> FloatArray:
        """Integral of P(h > r) from 0 to t. [s]"""
        return m3_survival_integral(t, self.alpha, self.decay, self.shift)


def solve(
    streams: Sequence[HeadwayModel],
    critical_gaps: FloatArray,
    weights: FloatArray,
    rules: Rules,
    *,
    stop_below: FloatArray | None = None,
) -> FloatArray:
    """P_not of Eqs. (5)-(6) at each cell, mixed over the critical-gap nodes of each row. (V, N)

    Parameters
    ----------
    streams
        Headway model of each row's adjacent lane (V).
    critical_gaps, weights
        (V, K) critical-gap nodes t_c and their weights (summing to 1 per row). [s], [-]
    rules
        The acceptance rule along each row.
    stop_below
        (V,) a row may stop once its mixed P_not is at or below this; later cells keep that value.

    Cell j of the headway axis holds lengths in ((j - 1/2) dt, (j + 1/2) dt], and a gap of that
    cell ends j cells after it came alongside; the refused share of each cell is cut exactly at
    t_f and t_req (closed forms of the M3 family), so that the grid only rounds when gaps end.
    How the refused gaps still beside the drivers are carried from cell to cell is told in
    :class:`_Pending`.
    """
    v_count = critical_gaps.shape[0]
    state = _Pending.start(_Streams.of(streams), rules, critical_gaps.astype(float), weights.astype(float))
    n_cells = rules.share.shape[1]
    out = np.zeros((v_count, n_cells))
    last = np.full(v_count, n_cells - 1)
    running = np.ones(v_count, dtype=bool)
    for s in range(n_cells):
        out[state.vehicles, s] = np.clip(state.step(s, rules), 0.0, 1.0)
        finished = running & (s + 1 >= rules.cells)
        if stop_below is not None:
            finished |= running & (out[:, s] <= stop_below)
        if finished.any():
            last[finished] = s
            running &= ~finished
            if not running.any():
                break
            state = state.keep(running)
    cells = np.arange(n_cells)
    return np.asarray(
        np.where(cells[None, :] > last[:, None], out[np.arange(v_count), last][:, None], out), dtype=float
    )


class _Pending:
    """The refused gaps still beside the drivers of :func:`solve`, by the cell where each will end; one row per
    design vehicle, one column per critical-gap node.

    A gap refused at cell s and ending j cells later carries the headway mass of its length cell,
    d_j = P((j - 1/2) dt < h <= (j + 1/2) dt), times the probability of a fresh gap at s, g_s, and the
    refused share of that cell under the rule of s. Cells wholly above the least headway Delta and below
    the rule's cut at m (the cell holding t_f or t_req) are refused whole, and there the M3 family gives

    .. math:: d_j = \\alpha\\, e^{-\\lambda ((j - 1/2) dt - \\Delta)} (1 - e^{-\\lambda dt}) = d_{j-1}\\, e^{-\\lambda dt}

    so that the sum over past cells s of g_s d_{k - s} at cell k is one decaying sum, R_k = e^{-lambda dt}
    R_{k-1} + (terms starting) - (terms ending), not a convolution over the width of the widest gap. Each
    refusal then costs a constant number of writes: the start and end of its run of whole cells into
    ``decaying``, and the cell holding Delta and the cell cut by the rule (the only ones not whole) into
    ``ending``. Both are rings of ``span`` cells indexed by absolute cell. The arithmetic equals the
    cell-by-cell convolution to rounding (tests/test_merge_behaviour.py).
    """

    __slots__ = (
        "beside",
        "decay_step",
        "decaying",
        "ending",
        "family",
        "first_whole",
        "index",
        "kept_step",
        "run",
        "shift_cell",
        "span",
        "tc",
        "top0",
        "top_shift",
        "vehicles",
        "weight",
    )
    _PER_VEHICLE = ("vehicles", "tc", "weight", "run", "beside", "decay_step", "kept_step", "top0", "shift_cell",
                    "top_shift", "first_whole")  # fmt: skip

    vehicles: IntArray
    """(V',) the design vehicles still solved."""
    tc: FloatArray
    weight: FloatArray
    """(V', K) critical-gap nodes and their weights."""
    family: _Streams
    ending: FloatArray
    """(span, V', K) mass of refused gaps ending at each cell, written cell by cell."""
    decaying: FloatArray
    """(span, V', K) what enters (positive) and leaves (negative) the decaying sum at each cell."""
    run: FloatArray
    """(V', K) R_k: refused gaps of whole cells ending at the cell just judged."""
    beside: FloatArray
    """(V', K) P_not: refused gaps that end after the cell just judged."""
    span: int
    index: IntArray
    """(V', K) flat column of each node in a ring's cell."""
    decay_step: FloatArray
    """(V', 1) exp(-lambda dt)."""
    kept_step: FloatArray
    """(V', 1) 1 - exp(-lambda dt)."""
    top0: FloatArray
    """(V', 1) P(h <= dt / 2): gaps that end in the cell where they came alongside."""
    shift_cell: IntArray
    """(V', 1) cell holding Delta."""
    top_shift: FloatArray
    """(V', 1) headway mass of that cell."""
    first_whole: FloatArray
    """(V', 1) d_j of the first cell above it."""

    @classmethod
    def start(cls, family: _Streams, rules: Rules, tc: FloatArray, weight: FloatArray) -> _Pending:
        """The state at x_a: the gap beside the driver is length-biased, the driver at a uniform place in it;
        what matters is its length h and the part r still behind the driver."""
        self = object.__new__(cls)
        v_count, nodes = tc.shape
        top = np.maximum(rules.share.max(axis=1)[:, None] * tc + rules.closing.max(axis=1)[:, None],
                         rules.forced.max(axis=1)[:, None])  # fmt: skip
        width = int(np.ceil(top.max() / CELL + 0.5)) + 2  # cells a refused gap may span
        upper = (np.arange(width + 2) + 0.5) * CELL
        self.shift_cell = np.searchsorted(upper, family.shift.ravel(), side="left").reshape(-1, 1)
        self.span = max(width, int(self.shift_cell.max()) + 2) + 1  # every cell written lies within the ring
        self.vehicles, self.tc, self.weight, self.family = np.arange(v_count), tc, weight, family
        self.index = np.arange(v_count * nodes).reshape(v_count, nodes)
        self.ending = np.zeros((self.span, v_count, nodes))
        self.beside = np.zeros((v_count, nodes))
        first = _first_rule(rules, tc)
        reach = np.minimum(width, np.ceil(first[0].max(axis=1) / CELL).astype(np.intp) + 2)  # a refused first gap
        order = np.argsort(reach, kind="stable")  # has less than c0 behind the driver: rows of like reach together
        for rows in np.array_split(order, max(1, min(3, v_count))):
            far = int(reach[rows].max())
            part = _Streams(family.alpha[rows], family.decay[rows], family.shift[rows])
            refused = _refused_lags(part, np.arange(far + 1) * CELL, *(a[rows] for a in first))  # (V, K, far + 1)
            self.ending[1 : far + 1, rows] = np.moveaxis(np.diff(refused, axis=2), 2, 0)  # r in [i dt, (i + 1) dt):
            self.beside[rows] = refused[:, :, -1] - refused[:, :, 0]  # the next gap comes alongside at i + 1
        self.decaying = np.zeros_like(self.ending)
        self.run = np.zeros_like(self.beside)
        self.decay_step = np.exp(-family.decay * CELL)
        self.kept_step = -np.expm1(-family.decay * CELL)
        self.top0 = family.cdf(np.full_like(family.shift, 0.5 * CELL))
        self.top_shift = family.cdf((self.shift_cell + 0.5) * CELL)
        self.first_whole = family.survival((self.shift_cell + 0.5) * CELL) * self.kept_step
        return self

    def step(self, s: int, rules: Rules) -> FloatArray:
        """Judge the gaps coming alongside at cell s; the weighted P_not of each vehicle still solved at s. (V',)"""
        fam, span, v = self.family, self.span, self.vehicles
        slot = s % span
        self.run *= self.decay_step
        self.run += self.decaying[slot]
        fresh = self.ending[slot] + self.run  # refused gaps ending at s: the next gap comes alongside
        self.ending[slot] = 0.0
        self.decaying[slot] = 0.0
        c = rules.share[v, s, None] * self.tc + rules.closing[v, s, None]
        p = rules.yielding[v, s, None]
        cut = np.stack([np.minimum(rules.forced[v, s, None], c), c])  # t_f and t_req, (2, V', K)
        below = fam.cdf(cut)
        refused_share = np.stack([p, 1.0 - p])  # (2, V', 1): of gaps below t_f, and between t_f and t_req
        in_cell0 = (refused_share * np.minimum(self.top0, below)).sum(axis=0)
        g = fresh / np.maximum(1.0 - in_cell0, 1e-12)  # gaps of cell 0 end at once: the next comes in the same cell
        self.beside -= fresh
        end = rules.force_cell[v] == s
        if end.any():
            self._force(s, np.flatnonzero(end), rules.forced_lag[v[end], s])
        self.beside += g * ((refused_share * below).sum(axis=0) - in_cell0)
        mass = g * refused_share  # (2, V', K): refused share of the gaps below each cut
        m = np.where(cut < fam.shift, 0, np.maximum(np.ceil(cut / CELL - 0.5), 0.0)).astype(np.intp)
        j0 = self.shift_cell
        at_shift = (mass * (m > j0)).sum(axis=0) * self.top_shift * (j0 >= 1)
        whole = (mass * (m > j0 + 1)).sum(axis=0) * self.first_whole
        tail = fam.survival((m - 0.5) * CELL)  # 1 - P(h <= the lower edge of cell m)
        lower = np.where(m - 1 >= j0, 1.0 - tail, 0.0)
        cut_cell = mass * np.maximum(below - lower, 0.0) * (m >= 1)
        leaving = mass * tail * self.kept_step * (m > j0 + 1)
        n = self.index.size
        at_cut = (((s + m) % span) * n + self.index).ravel()
        np.add.at(self.ending.reshape(-1), np.concatenate([(((s + j0) % span) * n + self.index).ravel(), at_cut]),
                  np.concatenate([at_shift.ravel(), cut_cell.ravel()]))  # fmt: skip
        np.add.at(self.decaying.reshape(-1), np.concatenate([(((s + j0 + 1) % span) * n + self.index).ravel(), at_cut]),
                  np.concatenate([whole.ravel(), -leaving.ravel()]))  # fmt: skip
        return np.asarray(np.einsum("vk,vk->v", self.beside, self.weight), dtype=float)

    def _force(self, s: int, e: IntArray, lag: FloatArray) -> None:
        """At the end of the lane (vehicles ``e``): refused gaps with enough left behind the driver are forced.

        A gap ending j cells on has (j - 1/2, j + 1/2] cells left: the share of that beyond the forced lag
        goes. Past ``reach`` every pending gap goes, so the decaying sum is written out cell by cell up to it.
        """
        span = self.span
        reach = min(span - 1, int(np.ceil(lag.max() / CELL + 0.5)) + 1)
        j = np.arange(1, reach + 1)
        at = (s + j) % span
        q = self.decay_step[e, 0]
        lags = j[:, None] - j[None, :]
        power = np.where(lags >= 0, q[:, None, None] ** np.maximum(lags, 0)[None], 0.0)  # (E, J, J)
        pending = self.ending[at][:, e] + (
            (q[None, :] ** j[:, None])[:, :, None] * self.run[e][None]
            + np.einsum("ejl,lek->jek", power, self.decaying[at][:, e])
        )  # (J, E, K)
        pending -= np.clip(j[:, None] + 0.5 - lag[None, :] / CELL, 0.0, 1.0)[:, :, None] * pending
        self.ending[:, e] = 0.0
        self.decaying[:, e] = 0.0
        self.ending[at[:, None], e[None, :]] = pending
        self.run[e] = 0.0
        self.beside[e] = pending.sum(axis=0)

    def keep(self, running: NDArray[np.bool_]) -> _Pending:
        """Without the finished design vehicles, once they are many (copying is dear)."""
        keep = running[self.vehicles]
        if keep.mean() >= 0.7:
            return self
        new = object.__new__(_Pending)
        for name in self._PER_VEHICLE:
            setattr(new, name, getattr(self, name)[keep])
        new.family, new.span = self.family.take(keep), self.span
        new.ending = np.ascontiguousarray(self.ending[:, keep])
        new.decaying = np.ascontiguousarray(self.decaying[:, keep])
        new.index = np.arange(new.tc.size).reshape(new.tc.shape)
        return new


def _first_rule(rules: Rules, tc: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray]:
    """At cell 0: gap needed c, lag needed a, forced gap f, forced lag b and yield probability p. (V, K)"""
    c = rules.share[:, :1] * tc + rules.closing[:, :1]
    a = rules.lag_part[:, :1] * tc + rules.closing[:, :1]
    f = np.minimum(rules.forced[:, :1], c)
    b = np.minimum(rules.forced_lag[:, :1], a)
    return c, a, f, b, np.broadcast_to(rules.yielding[:, :1], c.shape)


def _refused_lags(
    family: _Streams, e: Times, c: FloatArray, a: FloatArray, f: FloatArray, b: FloatArray, p: FloatArray
) -> FloatArray:
    """Probability that the first gap is refused and its part behind the driver is shorter than each of e. (V, K, E)

    Accepted are (h >= c and r >= a), or a yield (probability p) with h >= f and r >= b; with
    f <= c and b <= a, the refused density of r is

    .. math:: w(r) = [S(r) - 1_{r \\ge a} S(r \\vee c) - p (1_{r \\ge b} S(r \\vee f) - 1_{r \\ge a} S(r \\vee c))] / \\mu

    integrated here in closed form (S the headway survival function, mu the mean headway).
    """
    fam = _Streams(family.alpha[:, :, None], family.decay[:, :, None], family.shift[:, :, None])
    grid = e[None, None, :]
    whole = fam.survival_integral(grid)

    def beyond(start: FloatArray, cut: FloatArray) -> FloatArray:
        """Integral of S(max(r, cut)) over r from start to e (0 where e <= start)."""
        start, cut = start[:, :, None], cut[:, :, None]
        z = np.maximum(cut, start)
        part = fam.survival(cut) * (np.minimum(grid, z) - start)
        part += np.where(grid > z, whole - fam.survival_integral(z), 0.0)
        return np.asarray(np.where(grid > start, part, 0.0), dtype=float)

    normal = beyond(a, c)
    total = whole - normal - p[:, :, None] * (beyond(b, f) - normal)
    mean = family.shift + family.alpha / family.decay
    return np.asarray(np.maximum(total, 0.0) / mean[:, :, None], dtype=float)


def simulate(
    headways: HeadwayModel, critical_gaps: FloatArray, rules: Rules, row: int, rng: np.random.Generator
) -> FloatArray:
    """Monte Carlo of the same behaviour for one row: stream time at which each driver merges (inf if not). [s]

    One driver per critical gap given. Each starts beside a gap drawn length-biased (resampled from
    a large pool in proportion to length) at a uniform position in it; the lag (the part still
    behind) is judged first, then each gap as it comes alongside, by the rule of the cell holding
    that stream time. Vectorised over drivers; shares no arithmetic with :func:`solve`.
    """
    tc = np.asarray(critical_gaps, dtype=float)
    n = tc.size
    count = int(rules.cells[row])
    reach = count * CELL

    def taken(t: FloatArray, gap: FloatArray, drivers: IntArray, behind: FloatArray | None = None) -> NDArray[np.bool_]:
        i = np.minimum((t / CELL + 0.5).astype(np.intp), count - 1)
        need = rules.share[row, i] * tc[drivers] + rules.closing[row, i]
        least = np.minimum(rules.forced[row, i], need)
        yielded = rng.random(drivers.size) < rules.yielding[row, i]
        if behind is None:
            return np.asarray((gap >= need) | ((gap >= least) & yielded), dtype=bool)
        lag = rules.lag_part[row, i] * tc[drivers] + rules.closing[row, i]
        lag_least = np.minimum(rules.forced_lag[row, i], lag)
        normal = (gap >= need) & (behind >= lag)
        return np.asarray(normal | ((gap >= least) & (behind >= lag_least) & yielded), dtype=bool)

    pool = headways.sample(rng, 20 * n)
    beside = rng.choice(pool, size=n, p=pool / pool.sum())
    lag = rng.random(n) * beside
    everyone = np.arange(n)
    merged = np.full(n, np.inf)
    first = taken(np.zeros(n), beside, everyone, lag)
    merged[first] = 0.0
    force_at = int(rules.force_cell[row])
    force_time = force_at * CELL
    force_lag = rules.forced_lag[row, min(force_at, count - 1)]

    def forced(drivers: IntArray, start: FloatArray, end: FloatArray) -> None:
        """Drivers beside a refused gap (from ``start`` to ``end``) at the end of the lane force in."""
        spans = (np.round(start / CELL) < force_at) & (end - force_time >= force_lag) & (force_at < count)
        merged[drivers[spans]] = force_time

    forced(everyone[~first], np.zeros(n)[~first], lag[~first])
    clock = lag.copy()
    active = everyone[~first & (clock < reach) & ~np.isfinite(merged)]
    while active.size:
        h = headways.sample(rng, active.size)
        take = taken(clock[active], h, active)
        merged[active[take]] = clock[active[take]]
        refused = active[~take]
        forced(refused, clock[refused], clock[refused] + h[~take])
        clock[active] += h
        active = active[~take & (clock[active] < reach)]
        active = active[~np.isfinite(merged[active])]
    return merged
