"""Merge-area operations by the Highway Capacity Manual's method for merge segments.

Highway Capacity Manual, 6th ed. (2016) / 7th ed. (2022), Chapter 14
(freeway merge and diverge segments), isolated one-lane right-side on-ramp:

.. math::

    v_{12} = v_F \\, P_{FM}                                                  (14-2)

    P_{FM} = 1.000 \\quad \\text{(4-lane freeway, 2 lanes per direction)}

    P_{FM} = 0.5775 + 0.000028\\, L_A \\quad \\text{(6-lane)}                  (14-3)

    P_{FM} = 0.2178 - 0.000125\\, v_R + 0.01115\\, L_A / S_{FR}
             \\quad \\text{(8-lane; last term dropped when } v_F/S_{FR} > 72)

    D_R = 5.475 + 0.00734\\, v_R + 0.0078\\, v_{12} - 0.00627\\, L_A          (14-22)

with flows in pc/h, L_A in ft *including the taper*, S_FR the ramp free-flow
speed in mi/h and D_R the density of the ramp influence area (1,500 ft
downstream of the merge) in pc/mi/ln. Level of service by density: A <= 10,
B <= 20, C <= 28, D <= 35, E > 35; F when demand exceeds capacity.
Capacity checks: the downstream freeway section (2400, 2350, 2300 and 2250
pc/h/ln at free-flow speeds of 70+, 65, 60 and 55 mi/h), the maximum
desirable flow entering the influence area (4600 pc/h), and the ramp roadway.
Demand in passenger cars: v = V / (PHF f_HV), f_HV = 1 / (1 + P_T (E_T - 1)).

Equation numbers and values as reproduced in a university course text of the
7th edition (shared REFERENCES.md section 6, CONFIRMED). The manual's checks
of the distribution of flow in the outer lanes are not applied (not
confirmed here). Ramp roadway capacities are from memory of HCM Exhibit 14-12.
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
    v12_pc_h: float
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


def merge_influence_share(
    lanes: int, mainline_pc_h: float, ramp_pc_h: float, acceleration_length_ft: float, ramp_ffs_mph: float
) -> float:
    """P_FM, the share of approaching mainline flow in lanes 1 and 2 (HCM Eqs. above)."""
    match lanes:
        case 2:
            return 1.0
        case 3:
            return 0.5775 + 0.000028 * acceleration_length_ft  # Eq. 14-3
        case 4:
            share = 0.2178 - 0.000125 * ramp_pc_h
            if mainline_pc_h / ramp_ffs_mph <= 72:
                share += 0.01115 * acceleration_length_ft / ramp_ffs_mph
            return share
    raise ValueError(f"the HCM merge method covers 2 to 4 lanes per direction, not {lanes}")


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
    D_R 10.6 pc/mi/ln, LOS B.

    >>> result = merge_area(lanes=4, mainline_pc_h=1109, ramp_pc_h=848, acceleration_length_ft=500,
    ...                     free_flow_speed_mph=55, ramp_free_flow_speed_mph=45)
    >>> round(result.p_fm, 2), round(result.v12_pc_h), round(result.density_pc_mi_ln, 1), result.los
    (0.24, 261, 10.6, 'B')
    """
    p_fm = merge_influence_share(lanes, mainline_pc_h, ramp_pc_h, acceleration_length_ft, ramp_free_flow_speed_mph)
    v12 = mainline_pc_h * p_fm  # Eq. 14-2
    vr12 = v12 + ramp_pc_h
    density = 5.475 + 0.00734 * ramp_pc_h + 0.0078 * v12 - 0.00627 * acceleration_length_ft  # Eq. 14-22
    down_lanes = lanes_downstream or lanes
    downstream = CapacityCheck(
        name="downstream freeway section",
        demand_pc_h=mainline_pc_h + ramp_pc_h,
        capacity_pc_h=down_lanes * freeway_capacity_per_lane(free_flow_speed_mph),
    )
    ramp = CapacityCheck(
        name="ramp roadway", demand_pc_h=ramp_pc_h, capacity_pc_h=ramp_capacity(ramp_free_flow_speed_mph, ramp_lanes)
    )
    return MergeArea(
        lanes=lanes,
        mainline_pc_h=mainline_pc_h,
        ramp_pc_h=ramp_pc_h,
        acceleration_length_ft=acceleration_length_ft,
        p_fm=p_fm,
        v12_pc_h=v12,
        vr12_pc_h=vr12,
        density_pc_mi_ln=max(density, 0.0),
        los=level_of_service(density, breaks_down(downstream, ramp)),
        downstream=downstream,
        influence_area=CapacityCheck(
            name="flow entering the influence area", demand_pc_h=vr12, capacity_pc_h=MAX_DESIRABLE_INFLUENCE_FLOW
        ),
        ramp_roadway=ramp,
    )
