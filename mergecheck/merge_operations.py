"""Merge-area operations at a site: capacity-manual density and LOS, and what breakdown costs.

Joins the site's geometry and design-vehicle results to the capacity manual's
merge method (:mod:`mergecheck.merge_area`) and, when demand exceeds what the
section downstream carries, to the queue between the arriving and queued
mainline states (:mod:`mergecheck.shockwave`, triangular flow-density
relation).

Conversions and assumptions, each stated in the report:

* The manual's acceleration length L_A includes the taper; the site's lane
  length (convergence point to start of taper) does not. L_A = lane + taper.
* Heavy vehicles on the mainline take E_T = 2.0 (level) or 3.0 (rolling)
  (HCM, from REFERENCES.md section 6).
* Heavy design vehicles on the ramp take E_T times the ratio of the stream's
  free-flow speed to the vehicle's speed at the end of the lane (at least
  E_T): a vehicle at half the stream's speed holds its place in the lane for
  twice as long. This speed-ratio equivalent is a stated assumption standing
  in for the manual's specific-grade tables, which were not at hand; the
  capacity lost to slow trucks is the extra passenger-car equivalents.
* In breakdown the ramp's demand (at its hourly rate) is served first and the
  mainline discharges the rest of the downstream capacity from a queue on the
  congested branch of a triangular relation (capacity per lane from the
  manual, jam density a site input). The queue is followed in vehicles, not
  passenger cars: capacities and demands are converted with f_HV, so flows
  and the jam density share one unit.
* The peak-hour factor applies to the peak 15 minutes only: with the default
  demand profile the mainline arrives at V/PHF for 15 minutes, then at the
  rate that keeps the design hour's volume V for the rest of the first hour,
  then at V for the rest of the peak period, then at the share after the peak.
  A demand profile the user gives is taken as it is, as shares of V. The
  queued state is held after the peak, which slightly overstates the time to
  clear.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .merge_area import (
    COVERAGE,
    LANES_COVERED,
    MergeArea,
    OutsideMethod,
    freeway_capacity_per_lane,
    merge_area,
    passenger_car_flow,
)
from .shockwave import QueueGrowth, QueueHistory, Triangular, queue_growth, queue_history
from .site import MergeAreaSettings, Site

MPH = 0.44704
FT = 0.3048
TRUCK_EQUIVALENT = {"level": 2.0, "rolling": 3.0}


@dataclass(frozen=True, slots=True, kw_only=True)
class RampEquivalent:
    vehicle_id: str
    share: float
    equivalent: float
    """Passenger-car equivalent used for this vehicle on the ramp. [-]"""


@dataclass(frozen=True, slots=True, kw_only=True)
class MergeOperations:
    area: MergeArea
    mainline_pc_h: float
    ramp_pc_h: float
    acceleration_length: float
    """L_A as the manual measures it (lane plus taper). [m]"""
    mainline_truck_equivalent: float
    ramp_equivalents: tuple[RampEquivalent, ...]
    capacity_lost_pc_h: float
    """Passenger-car equivalents added by heavy ramp vehicles slower than a level-terrain truck. [pc/h]"""
    veh_per_pc_mainline: float
    """f_HV of the mainline: vehicles per passenger car. [-]"""
    queue: QueueGrowth | None
    """The queue while the mainline arrives at its peak 15-minute rate (flows in veh)."""
    history: QueueHistory | None
    """The queue over the demand profile (vehicles)."""

    @property
    def breaks_down(self) -> bool:
        return self.area.breaks_down

    @property
    def queue_length_after_hour(self) -> float | None:
        """Back of the queue one hour into the demand profile, upstream of the merge. [m]"""
        if self.history is None:
            return None
        return float(np.interp(3600.0, self.history.time, self.history.length))


_PEAK_15 = 900.0  # s: the analysis period the peak-hour factor describes


def merge_operations(site: Site, speeds_at_lane_end: dict[str, float]) -> MergeOperations | str | None:
    """The merge-area check for a site; None when the site gives no mainline flow; a sentence saying why when the
    manual's method does not apply (one lane, or more than five, in the direction; its equations outside their
    range for these inputs).

    Parameters
    ----------
    speeds_at_lane_end
        Each design vehicle's speed at the end of the full-width lane. [m/s]
    """
    m = site.merge
    if m.mainline_flow is None:
        return None
    if site.lanes not in LANES_COVERED:
        return f"{site.lanes} lane{'s' if site.lanes > 1 else ''} in the direction of travel: {COVERAGE}"
    e_t = TRUCK_EQUIVALENT[m.terrain]
    mainline_pc = passenger_car_flow(m.mainline_flow * 3600, m.mainline_heavy_vehicles, e_t, m.peak_hour_factor)
    equivalents = []
    ramp_pc = 0.0
    level_pc = 0.0
    for entry in site.vehicles:
        equivalent = 1.0
        if entry.vehicle.category != "passenger-car":
            speed = max(speeds_at_lane_end[entry.vehicle.id], 1.0)
            equivalent = max(e_t, e_t * m.free_flow_speed / speed)
        equivalents.append(RampEquivalent(vehicle_id=entry.vehicle.id, share=entry.share, equivalent=equivalent))
        ramp_pc += site.ramp_flow * 3600 * entry.share * equivalent / m.peak_hour_factor
        level_pc += (
            site.ramp_flow
            * 3600
            * entry.share
            * (1.0 if entry.vehicle.category == "passenger-car" else e_t)
            / m.peak_hour_factor
        )
    length = site.lane_length + site.taper_length
    try:
        area = merge_area(
            lanes=site.lanes,
            mainline_pc_h=mainline_pc,
            ramp_pc_h=ramp_pc,
            acceleration_length_ft=length / FT,
            free_flow_speed_mph=m.free_flow_speed / MPH,
            ramp_free_flow_speed_mph=m.ramp_free_flow_speed / MPH,
            lanes_downstream=site.lanes_downstream,
            ramp_lanes=m.ramp_lanes,
        )
    except OutsideMethod as outside:
        return str(outside)
    veh_per_pc = 1.0 / (1.0 + m.mainline_heavy_vehicles * (e_t - 1.0))  # f_HV
    queue = history = None
    if area.downstream.exceeded:
        to_veh = veh_per_pc / 3600  # pc/h to veh/s
        upstream = Triangular(
            free_flow_speed=m.free_flow_speed,
            capacity=site.lanes * freeway_capacity_per_lane(m.free_flow_speed / MPH) * to_veh,
            jam_density=site.lanes * m.jam_density,
        )
        hour_pc = mainline_pc * m.peak_hour_factor  # V / f_HV: the design hour without the PHF
        discharge = max(area.downstream.capacity_pc_h - ramp_pc * m.peak_hour_factor, 0.0) * to_veh
        queued = upstream.congested(min(discharge, upstream.capacity))
        peak = upstream.free(min(mainline_pc * to_veh, upstream.capacity))
        if peak.flow > queued.flow:
            queue = queue_growth(peak, queued, _PEAK_15)
            periods = [
                (duration, upstream.free(min(rate * to_veh, upstream.capacity)))
                for duration, rate in _demand_periods(m, mainline_pc, hour_pc)
            ]
            history = queue_history(periods, queued, step=30.0)
    return MergeOperations(
        area=area,
        mainline_pc_h=mainline_pc,
        ramp_pc_h=ramp_pc,
        acceleration_length=length,
        mainline_truck_equivalent=e_t,
        ramp_equivalents=tuple(equivalents),
        capacity_lost_pc_h=ramp_pc - level_pc,
        veh_per_pc_mainline=veh_per_pc,
        queue=queue,
        history=history,
    )


def _demand_periods(m: MergeAreaSettings, peak_pc: float, hour_pc: float) -> list[tuple[float, float]]:
    """(duration [s], mainline demand [pc/h]) over the demand profile (module docstring)."""
    if m.demand_profile_given:
        return [(duration, share * hour_pc) for duration, share in m.demand_profile]
    (peak_duration, _), *after = m.demand_profile
    rest_of_hour = max(hour_pc * (1.0 - 0.25 / m.peak_hour_factor) / 0.75, 0.0)  # keeps the hour's volume V
    periods = [
        (min(peak_duration, _PEAK_15), peak_pc),
        (min(max(peak_duration - _PEAK_15, 0.0), 3600.0 - _PEAK_15), rest_of_hour),
        (max(peak_duration - 3600.0, 0.0), hour_pc),
    ]
    periods += [(duration, share * hour_pc) for duration, share in after]
    return [(duration, rate) for duration, rate in periods if duration > 0]
