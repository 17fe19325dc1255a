"""Physical ranges of the inputs, written once and checked the same way on every path.

The site file, the command line's options and ``sweep`` read a value with the same :class:`Limit`,
so that a flow, a headway or an elevation refused in one place is refused in every other, in the
same words. Values are SI; the rule is worded in the unit a designer reads.

The bounds are plausibility limits, not design values (common practice): they keep every model
inside the range where its equations mean something (a lane cannot carry more than about
3,000 veh/h; a minimum headway of over 5 s is no longer a car-following headway).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .errors import InputError
from .units import DISPLAY


@dataclass(frozen=True, slots=True)
class Limit:
    """A closed range [low, high] of one kind of quantity, and 0 besides when ``zero`` is set. [SI]"""

    kind: str
    low: float
    high: float
    zero: bool = False

    def holds(self, value: float) -> bool:
        return math.isfinite(value) and (self.low <= value <= self.high or (self.zero and value == 0))

    @property
    def rule(self) -> str:
        """The rule in words, e.g. 'must be 0 or lie between 1 and 3000 veh/h'."""
        shown = DISPLAY["si"][self.kind]
        span = f"lie between {shown.value(self.low):g} and {shown.value(self.high):g} {shown.symbol}"
        return f"must be 0 or {span}" if self.zero else f"must {span}"

    def check(self, value: float, source: str, field: str) -> float:
        """The value, or :class:`InputError` naming the source, the field and the rule."""
        if not self.holds(value):
            raise InputError(source, field, self.rule)
        return value


LANE_FLOW = Limit("flow", 1 / 3600, 3000 / 3600, zero=True)
"""Flow in one lane (the adjacent through lane, a one-lane ramp): none, or at least a vehicle an hour (below
that the headway formulas underflow, and no design hour is so empty)."""
PROBE_FLOW = Limit("flow", 1 / 3600, 3000 / 3600)
"""Flow in one lane for the headway figures of ``gaps`` (at least one vehicle an hour to wait for)."""
CRITICAL_GAP = Limit("time", 0.0, 60.0)
"""A critical gap or its spread."""
MIN_HEADWAY = Limit("time", 0.0, 5.0)
"""Cowan's M3 minimum headway Delta (also below the lane's mean headway, checked where the flow is known)."""
ELEVATION = Limit("length", -500.0, 5000.0)
"""Elevation above sea level."""
VEHICLE_SPEED = Limit("speed", 0.0, 300 / 3.6)
"""Any speed a design vehicle is asked about: ``accel`` speeds, a tabulated model's rows."""
MAINLINE_SPEED = Limit("speed", 40 / 3.6, 160 / 3.6)
"""Design and operating speeds of a freeway or expressway merge."""
PATH_LENGTH = Limit("length", 0.0, 5000.0)
"""A length along the vehicle path (ramp, lane, taper); which may be 0 depends on the layout."""
SPEED_DIFFERENTIAL = Limit("speed", 0.0, 160 / 3.6)
"""A speed differential to the stream (also below the operating speed, checked where it is known)."""
FLAG_DIFFERENTIAL = Limit("speed", 1 / 3.6, 160 / 3.6)
"""The differential flagged as large."""
SEARCH_SPEED = Limit("speed", 1 / 3.6, 50 / 3.6)
"""Least relative speed of a driver searching for a gap."""
FREE_FLOW_SPEED = Limit("speed", 15 / 3.6, 160 / 3.6)
"""Free-flow speed of a mainline or a ramp for the merge-area method."""
JAM_DENSITY = Limit("density", 0.06, 0.2)
"""Jam density per lane."""
PEAK_DURATION = Limit("time", 1.0, 6 * 3600.0)
"""How long the design-hour demand lasts."""
PERIOD_DURATION = Limit("time", 1.0, 24 * 3600.0)
"""One period of a demand profile."""
APPROACH_WINDOW = Limit("time", 0.0, 30.0)
FOLLOWER_EASING = Limit("acceleration", 0.05, 5.0)
PRESSURE_DISTANCE = Limit("length", 1.0, 2000.0)
CAPACITY_DENSITY = Limit("density", 0.005, 0.2)
FORCED_GAP = Limit("time", 0.3, 10.0)
YIELD_BRAKING = Limit("acceleration", 0.1, 8.0)
LANE_CHANGE_TIME = Limit("time", 0.0, 15.0)
"""The active merge model's parameters (:class:`mergecheck.merge_behaviour.MergeBehaviour`), each within a range
a driver could show."""
STATION = Limit("length", -1e7, 1e7)
"""A station on an alignment (design models start anywhere, negative included)."""
CARRIAGEWAY_FLOW = Limit("flow", 0.0, 9 * 3000 / 3600)
"""Flow of a whole carriageway (also at most 3,000 veh/h a lane and at least the adjacent lane's, checked where
the lanes are known)."""


DRIVERS = range(0, 10_000_001)
"""Drivers a Monte Carlo check simulates for each design vehicle."""
WORKERS = range(1, 65)
"""Worker processes of a batch."""


def check_count(value: object, allowed: range, source: str, field: str, unit: str) -> int:
    """A whole number within ``allowed``, or :class:`InputError` naming the source, the field and the rule."""
    if isinstance(value, bool) or not isinstance(value, int) or value not in allowed:
        last = allowed.stop - 1
        raise InputError(source, field, f"must be a whole number between {allowed.start:,} and {last:,} {unit}")
    return value
