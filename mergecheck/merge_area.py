"""Merge-area operations by the Highway Capacity Manual's method for merge segments.

Highway Capacity Manual, 6th ed. (2016) / 7th ed. (2022), Chapter 14
(freeway merge and diverge segments), isolated one-lane right-side on-ramp:

.. math::

    v_{12} = v_F \\, P_{FM}                                                  (14-2)

    P_{FM} = 1.000 \\quad \\text{(4-lane freeway, 2 lanes per direction)}

    P_{FM} = 0.5775 + 0.000028\\, L_A \\quad \\text{(6-lane)}                  (14-3)

    P_{FM} = 0.2178 - 0.000125\\, v_R + 0.01115\\, L_A / S_{FR}
             \\quad \\text{(8-lane)}                                          (14-4)

    D_R = 5.475 + 0.00734\\, v_R + 0.0078\\, v_{12} - 0.00627\\, L_A          (14-22)

with flows in pc/h, L_A in ft *including the taper*, S_FR the ramp free-flow
speed in mi/h and D_R the density of the ramp influence area (1,500 ft
downstream of the merge) in pc/mi/ln. Level of service by density: A <= 10,
B <= 20, C <= 28, D <= 35, E > 35; F when demand exceeds capacity.
Capacity checks: the downstream freeway section (2400, 2350, 2300 and 2250
pc/h/ln at free-flow speeds of 70+, 65, 60 and 55 mi/h), the maximum
desirable flow entering the influence area (4600 pc/h), and the ramp roadway.
Demand in passenger cars: v = V / (PHF f_HV), f_HV = 1 / (1 + P_T (E_T - 1)).

Lane-distribution (reasonableness) checks, three or more lanes in the
direction: the average flow in the n_o outer lanes (lane 3, or lanes 3 and 4),
v_o = (v_F - v12) / n_o, must not exceed 2,700 pc/h/ln nor 1.5 times the
average flow in lanes 1 and 2 (v12 / 2). Where either binds, v12 is raised to
what the binding rule allows: v12 = v_F - 2700 n_o, or
v12 = v_F / (1 + 0.75 n_o); the larger of the two and the original v12 is
used, which is the same as raising v12 until both rules hold. Five lanes in
the direction: the flow in lane 5 is taken off first as a share of v_F (0.198
at v_F >= 8,500 veh/h, 0.174 from 7,500, 0.160 from 6,500, 0.112 from 5,500,
0.053 below) and the 8-lane method is applied to the rest. One lane in the
direction is outside the method.

The 8-lane equation is used without the "v_F / S_FR > 72" condition that an
earlier version of this module applied: it could not be confirmed in the
manual (shared REFERENCES.md section 6), and the published Guidebook case
reproduced here does not depend on it.
Equation numbers and values as reproduced in a university course text of the
7th edition (shared REFERENCES.md section 6, CONFIRMED). The lane-distribution
checks (HCM 6th ed. Eqs. 14-12 to 14-14) and the lane-5 shares (the manual's lane-5 exhibit for five-lane directions) are from memory. Ramp roadway capacities are from
memory of HCM Exhibit 14-12.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

MAX_DESIRABLE_INFLUENCE_FLOW = 4600.0
"""Maximum desirable flow entering the ramp influence area. [pc/h]"""
LOS_THRESHOLDS = ((10.0, "A"), (20.0, "B"), (28.0, "C"), (35.0, "D"))
"""Upper density of each level of service in a merge influence area. [pc/mi/ln]"""
_CAPACITY_BY_FFS = ((55.0, 2250.0), (60.0, 2300.0), (65.0, 2350.0), (70.0, 2400.0))
"""Basic freeway segment capacity by free-flow speed [mi/h -> pc/h/ln]."""
_RAMP_CAPACITY = ((50.0, (2200.0, 4400.0)), (40.0, (2100.0, 4100.0)), (30.0, (2000.0, 3800.0)))
"""(ramp FFS above [mi/h], (one-lane, two-lane) capacity [pc/h]), from memory of HCM Exhibit 14-12."""
_RAMP_20_30 = (1900.0, 3500.0)
_SLOW_RAMP = (1800.0, 3200.0)
MI_PER_KM = 0.621371192
LANES_COVERED = range(2, 6)
"""Lanes in one direction the merge method covers."""
COVERAGE = "the capacity manual's merge method covers 2 to 5 lanes in one direction"


class OutsideMethod(ValueError):
    """The merge method's equations leave their physical range for these inputs (a share outside 0 to 1, a
    negative density): the inputs lie outside the conditions the equations were fitted on."""


OUTER_LANE_MAX = 2700.0
"""Highest average flow in the outer lanes the lane-distribution check allows. [pc/h/ln]"""
OUTER_LANE_RATIO = 1.5
"""Highest ratio of outer-lane average flow to the average of lanes 1 and 2. [-]"""
_LANE_FIVE_SHARE = ((8500.0, 0.198), (7500.0, 0.174), (6500.0, 0.160), (5500.0, 0.112), (0.0, 0.053))
"""(v_F at least [veh/h], share of v_F in lane 5) for five-lane directions, from memory of the HCM."""

Los = Literal["A", "B", "C", "D", "E", "F"]


@dataclass(frozen=True, slots=True, kw_only=True)
class CapacityCheck:
    name: str
    demand_pc_h: float
    capacity_pc_h: float

    @property
    def exceeded(self) -> bool:
        return self.demand_pc_h > self.capacity_pc_h


@dataclass(frozen=True, slots=True, kw_only=True)
class MergeArea:
    """Result of the HCM merge-segment method."""

    lanes: int
    mainline_pc_h: float
    """v_F. [pc/h]"""
    ramp_pc_h: float
    """v_R. [pc/h]"""
    acceleration_length_ft: float
    """L_A, including the taper. [ft]"""
    p_fm: float
    """P_FM from the manual's equation, before any lane-distribution adjustment. [-]"""
    v12_pc_h: float
    """Flow in lanes 1 and 2 approaching the merge, after the lane-distribution checks. [pc/h]"""
    lane_five_pc_h: float = 0.0
    """Flow taken off in lane 5 of a five-lane direction. [pc/h]"""
    lane_distribution: str = ""
    """Which lane-distribution rule raised v12, or empty when none binds."""
    vr12_pc_h: float
    density_pc_mi_ln: float
    los: Los
    downstream: CapacityCheck
    """Demand against the capacity of the freeway section downstream of the merge."""
    influence_area: CapacityCheck
    """Flow entering the ramp influence area against the maximum desirable."""
    ramp_roadway: CapacityCheck

    @property
    def density_pc_km_ln(self) -> float:
        return self.density_pc_mi_ln * MI_PER_KM

    @property
    def checks(self) -> tuple[CapacityCheck, ...]:
        return (self.downstream, self.influence_area, self.ramp_roadway)

    @property
    def breaks_down(self) -> bool:
        """Demand exceeds the capacity of the section downstream of the merge (or of the ramp)."""
        return breaks_down(self.downstream, self.ramp_roadway)


def passenger_car_flow(
    volume_veh_h: float, heavy_share: float, truck_equivalent: float, peak_hour_factor: float
) -> float:
    """Demand flow rate in passenger cars: V / (PHF f_HV), f_HV = 1 / (1 + P_T (E_T - 1)). [pc/h]

    Examples
    --------
    10 % trucks at E_T = 2 (level terrain), PHF 0.95: 1000 veh/h is 1000 * 1.1 / 0.95 pc/h.

    >>> round(passenger_car_flow(1000, 0.10, 2.0, 0.95), 1)
    1157.9
    """
    f_hv = 1.0 / (1.0 + heavy_share * (truck_equivalent - 1.0))
    return volume_veh_h / (peak_hour_factor * f_hv)


def freeway_capacity_per_lane(free_flow_speed_mph: float) -> float:
    """Basic freeway capacity per lane by free-flow speed, interpolated, held beyond 55-70 mi/h. [pc/h/ln]"""
    speeds, capacities = zip(*_CAPACITY_BY_FFS, strict=True)
    return float(np.interp(free_flow_speed_mph, speeds, capacities))


def ramp_capacity(ramp_free_flow_speed_mph: float, ramp_lanes: int = 1) -> float:
    """Ramp roadway capacity by ramp free-flow speed (from memory of HCM Exhibit 14-12). [pc/h]

    One lane: 2200 above 50 mi/h, 2100 above 40, 2000 above 30, 1900 from 20, 1800 below 20;
    two lanes: 4400, 4100, 3800, 3500, 3200.
    """
    speed = ramp_free_flow_speed_mph
    row = next((r for bound, r in _RAMP_CAPACITY if speed > bound), _SLOW_RAMP if speed < 20 else _RAMP_20_30)
    return row[0] if ramp_lanes == 1 else row[1]


def merge_influence_share(lanes: int, ramp_pc_h: float, acceleration_length_ft: float, ramp_ffs_mph: float) -> float:
    """P_FM, the share of approaching mainline flow in lanes 1 and 2 (HCM Eqs. above; five lanes: Eq. 14-4 on
    the flow left after lane 5)."""
    match lanes:
        case 2:
            return 1.0
        case 3:
            return 0.5775 + 0.000028 * acceleration_length_ft  # Eq. 14-3
        case 4 | 5:
            return 0.2178 - 0.000125 * ramp_pc_h + 0.01115 * acceleration_length_ft / ramp_ffs_mph  # Eq. 14-4
    raise ValueError(f"{COVERAGE}, not {lanes}")


def lane_five_flow(mainline_pc_h: float) -> float:
    """Flow in lane 5 of a five-lane direction, a share of v_F by its size (from memory of the HCM). [pc/h]"""
    share = next(s for lower, s in _LANE_FIVE_SHARE if mainline_pc_h >= lower)
    return share * mainline_pc_h


def checked_lanes_1_2(lanes: int, mainline_pc_h: float, v12_pc_h: float) -> tuple[float, str]:
    """v12 after the lane-distribution checks (module docstring), and which rule raised it ('' if none).

    Examples
    --------
    Four lanes, v_F 6,000 pc/h, P_FM v12 557 pc/h (issue 17's case, by hand): the outer lanes would carry
    2,722 pc/h/ln, over both rules; 1.5 times lanes 1-2 binds hardest, v12 = 6000 / 2.5 = 2,400 pc/h.

    >>> checked_lanes_1_2(4, 6000.0, 557.0)
    (2400.0, 'outer lanes at most 1.5 times the average of lanes 1 and 2')
    """
    outer = lanes - 2
    if outer <= 0:
        return v12_pc_h, ""
    by_cap = mainline_pc_h - OUTER_LANE_MAX * outer
    by_ratio = mainline_pc_h / (1.0 + OUTER_LANE_RATIO / 2.0 * outer)
    if v12_pc_h >= max(by_cap, by_ratio):
        return v12_pc_h, ""
    if by_ratio >= by_cap:
        return by_ratio, "outer lanes at most 1.5 times the average of lanes 1 and 2"
    return by_cap, f"outer lanes at most {OUTER_LANE_MAX:.0f} pc/h/ln"


def breaks_down(downstream: CapacityCheck, ramp_roadway: CapacityCheck) -> bool:
    """Demand exceeds capacity downstream of the merge or on the ramp: level of service F."""
    return downstream.exceeded or ramp_roadway.exceeded


def level_of_service(density_pc_mi_ln: float, demand_exceeds_capacity: bool) -> Los:
    """LOS of a merge influence area from its density [pc/mi/ln]."""
    if demand_exceeds_capacity:
        return "F"
    for upper, grade in LOS_THRESHOLDS:
        if density_pc_mi_ln <= upper:
            return grade  # type: ignore[return-value]
    return "E"


def merge_area(
    *,
    lanes: int,
    mainline_pc_h: float,
    ramp_pc_h: float,
    acceleration_length_ft: float,
    free_flow_speed_mph: float,
    ramp_free_flow_speed_mph: float,
    lanes_downstream: int | None = None,
    ramp_lanes: int = 1,
) -> MergeArea:
    """Apply the HCM merge-segment method (module docstring).

    Examples
    --------
    HCM Applications Guidebook, Case 4 Problem 2 (HCM 2000 method, published values): 4 lanes per
    direction, v_F = 1109, v_R = 848 pc/h, L_A = 500 ft, S_FR = 45 mi/h gives P_FM 0.24, v12 261,
    D_R 10.6 pc/mi/ln, LOS B. The later editions' lane-distribution check raises v12 to 1109 / 2.5
    (the HCM 2000 method had no such check): D_R 12.0, still LOS B.

    >>> result = merge_area(lanes=4, mainline_pc_h=1109, ramp_pc_h=848, acceleration_length_ft=500,
    ...                     free_flow_speed_mph=55, ramp_free_flow_speed_mph=45)
    >>> round(result.p_fm, 2), round(1109 * result.p_fm), round(result.v12_pc_h, 1), round(result.density_pc_mi_ln, 1), result.los
    (0.24, 261, 443.6, 12.0, 'B')
    """
    p_fm = merge_influence_share(lanes, ramp_pc_h, acceleration_length_ft, ramp_free_flow_speed_mph)
    if not 0.0 <= p_fm <= 1.0:
        equation = "14-3" if lanes == 3 else "14-4"
        raise OutsideMethod(
            f"Eq. {equation} gives P_FM {p_fm:.3f}, outside 0 to 1 (it is a share of the mainline flow): the ramp"
            " flow, acceleration length and ramp speed lie outside the conditions the equation was fitted on"
        )
    lane_five = lane_five_flow(mainline_pc_h) if lanes == 5 else 0.0
    approaching = mainline_pc_h - lane_five
    v12, binding = checked_lanes_1_2(min(lanes, 4), approaching, approaching * p_fm)  # Eq. 14-2, then the checks
    vr12 = v12 + ramp_pc_h
    density = 5.475 + 0.00734 * ramp_pc_h + 0.0078 * v12 - 0.00627 * acceleration_length_ft  # Eq. 14-22
    if density < 0.0:
        raise OutsideMethod(
            f"Eq. 14-22 gives an influence-area density of {density:.1f} pc/mi/ln, below 0: an acceleration length"
            " this long for flows this light lies outside the conditions the equation was fitted on"
        )
    down_lanes = lanes_downstream or lanes
    downstream = CapacityCheck(
        name="through lanes past the merge",
        demand_pc_h=mainline_pc_h + ramp_pc_h,
        capacity_pc_h=down_lanes * freeway_capacity_per_lane(free_flow_speed_mph),
    )
    ramp = CapacityCheck(
        name="the ramp itself", demand_pc_h=ramp_pc_h, capacity_pc_h=ramp_capacity(ramp_free_flow_speed_mph, ramp_lanes)
    )
    return MergeArea(
        lanes=lanes,
        mainline_pc_h=mainline_pc_h,
        ramp_pc_h=ramp_pc_h,
        acceleration_length_ft=acceleration_length_ft,
        p_fm=p_fm,
        v12_pc_h=v12,
        lane_five_pc_h=lane_five,
        lane_distribution=binding,
        vr12_pc_h=vr12,
        density_pc_mi_ln=density,
        los=level_of_service(density, breaks_down(downstream, ramp)),
        downstream=downstream,
        influence_area=CapacityCheck(
            name="into the merge zone (lanes 1 and 2 with the ramp)",
            demand_pc_h=vr12,
            capacity_pc_h=MAX_DESIRABLE_INFLUENCE_FLOW,
        ),
        ramp_roadway=ramp,
    )
