"""JSON renderer: SI values under stable keys. Reads results, computes nothing."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import orjson

from ..assessment import SiteAssessment
from ..batch import BatchResult, BatchSummary
from ..cautions import CAUTIONS
from ..command_results import AccelerationRun, GapFigures
from ..critical_gap_estimation import CriticalGapEstimate
from ..exception_study import DesignException
from ..merge_area import MergeArea
from ..merge_operations import MergeOperations
from ..narrative import assumptions, summary_sentence
from ..shockwave import QueueGrowth
from ..sweep import Sweep
from ..vehicle_figures import VehicleFigures


def _number(value: float | None, digits: int = 6) -> float | None:
    return None if value is None else round(float(value), digits)


def acceleration_json(run: AccelerationRun) -> dict[str, Any]:
    """The ``accel --json`` document."""
    trajectory = run.trajectory
    station, speed, time = trajectory.samples()
    return {
        "vehicle": run.vehicle.id,
        "vehicle_name": run.vehicle.name,
        "model": run.vehicle.model_name,
        "initial_speed_m_s": _number(trajectory.initial_speed),
        "target_speed_m_s": _number(trajectory.target_speed),
        "direction": "slowing" if trajectory.target_speed < trajectory.initial_speed else "accelerating",
        "reaches_target": trajectory.reaches_target,
        "distance_m": _number(trajectory.distance, 3),
        "time_s": _number(trajectory.duration, 3),
        "crawl_speed_m_s": _number(trajectory.crawl_speed),
        "stalled": trajectory.stalled,
        "elevation_m": _number(run.elevation, 3),
        "trajectory": {
            "station_m": [round(float(x), 3) for x in station],
            "speed_m_s": [round(float(v), 5) for v in speed],
            "time_s": [round(float(t), 4) for t in time],
            "grade": [round(float(g), 6) for g in run.profile.grade(station)],
        },
        "cautions": list(CAUTIONS),
    }


def vehicles_json(figures: list[VehicleFigures]) -> list[dict[str, Any]]:
    """The ``vehicles --json`` document."""
    return [
        {
            "id": f.vehicle.id,
            "name": f.vehicle.name,
            "category": f.vehicle.category,
            "model": f.vehicle.model_name,
            "weight_to_power_kg_kw": _number(None if f.weight_to_power is None else f.weight_to_power * 1000, 3),
            "sustained_speed_m_s": {f"{g:.0%}": _number(v, 4) for g, v in f.sustained_speeds},
            "level_stop_to_80_km_h_m": _number(f.level_distance, 2),
            "level_stop_to_80_km_h_s": _number(f.level_time, 2),
            "parameters": [
                {"name": p.name, "value": p.text, "si_value": p.value, "source": p.source} for p in f.vehicle.parameters
            ],
        }
        for f in figures
    ]


_OPTIONS = orjson.OPT_INDENT_2 | orjson.OPT_SERIALIZE_NUMPY


def dumps(document: Any) -> str:
    """A document as JSON text (UTF-8, two-space indent; orjson, which writes only valid JSON)."""
    return orjson.dumps(document, option=_OPTIONS).decode("utf-8") + "\n"


def site_json(assessment: SiteAssessment, exception: DesignException | None = None) -> dict[str, Any]:
    """The ``check --json`` document (SI values, stable keys); ``design_exception`` is null unless the study was
    run (a site that falls short, or ``--exception``)."""
    site = assessment.site
    policy = assessment.policy
    return {
        "site": site.name,
        "source": site.source,
        "verdict": assessment.verdict,
        "verdict_basis": assessment.basis,
        "policy_basis": {"verdict": assessment.policy_verdict, "reason": assessment.policy_reason},
        "performance_basis": {"verdict": assessment.performance_verdict},
        "governing_vehicle": assessment.governing.vehicle.id,
        "summary": summary_sentence(assessment, "si"),
        "mainline": {
            "design_speed_m_s": _number(site.design_speed),
            "operating_speed_m_s": _number(site.operating_speed),
            "lanes": site.lanes,
            "adjacent_lane_flow_veh_h": _number(site.adjacent_lane_flow * 3600, 3),
        },
        "geometry": {
            "entrance": site.entrance,
            "convergence_station_m": _number(site.convergence, 3),
            "taper_start_station_m": _number(site.taper_start, 3),
            "taper_end_station_m": _number(site.taper_end, 3),
            "lane_length_m": _number(site.lane_length, 3),
            "taper_length_m": _number(site.taper_length, 3),
            "average_grade_over_lane": _number(assessment.average_grade),
            "elevation_m": _number(site.elevation, 3),
        },
        "initial_speed_m_s": _number(assessment.initial_speed),
        "merge_reliability_target": site.gaps.reliability,
        "vehicles": [
            {
                "id": v.vehicle.id,
                "name": v.vehicle.name,
                "share": v.share,
                "flow_veh_h": _number(v.flow * 3600, 3),
                "verdict": v.verdict,
                "merge_speed_m_s": _number(v.merge_speed),
                "required_length_m": _number(v.required_length, 3),
                "available_length_m": _number(v.available_length, 3),
                "deficit_m": _number(v.deficit, 3),
                "merge_station_m": _number(v.merge_station, 3),
                "speed_at_convergence_m_s": _number(v.speed_at_convergence),
                "speed_at_taper_start_m_s": _number(v.speed_at_taper_start),
                "speed_at_taper_end_m_s": _number(v.speed_at_taper_end),
                "speed_differential_at_taper_start_m_s": _number(v.speed_differential_at_taper_start),
                "large_speed_differential": v.large_differential,
                "crawl_speed_m_s": _number(v.crawl_speed),
                "merge_eligible_station_m": _number(v.merge.eligible_station, 3),
                "merge_model": v.merge.model,
                # the lane's end is the end of the length available: the taper's start plus the taper credit
                "merge_probability_by_lane_end": _number(v.merge.by_lane_end),
                "merge_probability_by_taper_end": _number(v.merge.by_taper_end),
                "merge_probability_unforced": _number(v.merge.unforced),
                "length_for_reliability_m": _number(v.merge.length_for_reliability, 3),
                "length_needed_m": _number(v.length_needed, 3),
                "forced_merges_per_h": _number(v.merge.forced_merges_per_h, 3),
                "stops_per_h": _number(v.merge.stops_per_h, 3),
                "mean_stopped_wait_s": _number(v.merge.mean_stopped_wait, 3),
                "critical_gap_s": {"mean": v.critical_gap.mean, "sd": v.critical_gap.sd},
                "monte_carlo": None
                if v.monte_carlo is None
                else {
                    "merges": v.monte_carlo.merges,
                    "merge_probability_by_lane_end": _number(v.monte_carlo.by_lane_end),
                    "merge_probability_by_taper_end": _number(v.monte_carlo.by_taper_end),
                    "standard_error": _number(v.monte_carlo.standard_error),
                },
            }
            for v in assessment.vehicles
        ],
        "policy": None
        if policy is None
        else {
            "minimum_length_m": _number(policy.minimum_length, 3),
            "level_length_m": _number(policy.level_length, 3),
            "grade_factor": _number(policy.grade_factor, 4),
            "merge_speed_m_s": _number(policy.merge_speed),
            "note": policy.note,
            "title": policy.table.title,
            "source": policy.table.source,
            "caution": policy.table.caution,
            "length_definition": policy.table.length_definition,
            "interpolation": policy.table.interpolation,
            "table": policy.table.origin,
        },
        "merge_area": merge_area_json(assessment.merge_area),
        "merge_area_not_applied": assessment.merge_area_not_applied or None,
        "design_exception": None if exception is None else design_exception_json(exception),
        "assumptions": [{"name": a.name, "value": a.value, "source": a.source} for a in assumptions(assessment)],
        "cautions": list(CAUTIONS),
    }


def design_exception_json(study: DesignException) -> dict[str, Any]:
    """The design-exception study: what it was run on and by whom, the policy deficit, the consequences at the
    design hour and each mitigation's rerun (SI)."""
    return {
        "site_file": study.base.site.source,
        "site_file_sha256": study.input_sha256,
        "prepared_on": study.prepared_on,
        "prepared_by": study.prepared_by,
        "policy_length_m": _number(study.policy_length, 3),
        "provided_length_m": _number(study.provided_length, 3),
        "short_of_policy_m": _number(study.policy_deficit, 3),
        "consequences": [
            {
                "vehicle": v.vehicle.id,
                "speed_differential_at_taper_start_m_s": _number(v.speed_differential_at_taper_start),
                "merge_probability_by_lane_end": _number(v.merge.by_lane_end),
                "forced_merges_veh_h": _number(v.merge.forced_merges_per_h, 3),
                "stops_veh_h": _number(v.merge.stops_per_h, 3),
            }
            for v in study.base.vehicles
        ],
        "mitigations": [
            {
                "name": m.name,
                "change": m.change,
                "before_si": _number(m.before),
                "after_si": _number(m.after),
                "applies": m.assessment is not None,
                "performance_verdict": None if m.assessment is None else m.assessment.performance_verdict,
                "governing_vehicle": None if m.assessment is None else m.assessment.governing.vehicle.id,
                "length_needed_m": None if m.assessment is None else _number(m.assessment.governing.length_needed, 3),
                "note": m.note,
            }
            for m in study.mitigations
        ],
        "sign_off": study.sign_off,
    }


def gaps_json(figures: GapFigures) -> dict[str, Any]:
    """The ``gaps --json`` document."""
    return {
        "model": figures.model,
        "flow_veh_h": _number(figures.flow * 3600, 3),
        "critical_gap_s": figures.critical_gap,
        "min_headway_s": figures.min_headway,
        "free_fraction": _number(figures.free_fraction),
        "p_headway_at_least": _number(figures.p_headway_at_least, 8),
        "acceptable_gaps_per_h": _number(figures.acceptable_gaps_per_h, 4),
        "mean_wait_s": _number(figures.mean_wait, 4),
        "cautions": list(CAUTIONS),
    }


def critical_gap_json(estimate: CriticalGapEstimate, source: str) -> dict[str, Any]:
    """The ``critical-gap --json`` document."""
    return {
        "file": source,
        "method": estimate.method,
        "drivers": estimate.drivers,
        "critical_gap_mean_s": _number(estimate.mean, 4),
        "critical_gap_sd_s": _number(estimate.sd, 4),
        "ci95_low_s": _number(estimate.ci_low, 4),
        "ci95_high_s": _number(estimate.ci_high, 4),
        "log_mean": _number(estimate.log_mean),
        "log_sd": _number(estimate.log_sd),
        "log_likelihood": _number(estimate.log_likelihood, 4),
        "note": estimate.note,
        "cautions": list(CAUTIONS),
    }


def area_json(area: MergeArea) -> dict[str, Any]:
    """The capacity-manual figures (the ``merge-area --json`` document)."""
    return {
        "lanes": area.lanes,
        "mainline_pc_h": _number(area.mainline_pc_h, 3),
        "ramp_pc_h": _number(area.ramp_pc_h, 3),
        "acceleration_length_ft": _number(area.acceleration_length_ft, 3),
        "p_fm": _number(area.p_fm),
        "v12_pc_h": _number(area.v12_pc_h, 3),
        "v12_raised_by": area.lane_distribution or None,
        "lane_5_pc_h": _number(area.lane_five_pc_h, 3),
        "vr12_pc_h": _number(area.vr12_pc_h, 3),
        "density_pc_mi_ln": _number(area.density_pc_mi_ln, 4),
        "density_pc_km_ln": _number(area.density_pc_km_ln, 4),
        "los": area.los,
        "demand_pc_h": _number(area.downstream.demand_pc_h, 3),
        "capacity_pc_h": _number(area.downstream.capacity_pc_h, 3),
        "breaks_down": area.breaks_down,
        "capacity_checks": [
            {
                "check": c.name,
                "demand_pc_h": _number(c.demand_pc_h, 3),
                "capacity_pc_h": _number(c.capacity_pc_h, 3),
                "exceeded": c.exceeded,
            }
            for c in area.checks
        ],
    }


def queue_json(queue: QueueGrowth) -> dict[str, Any]:
    """Shock-wave and queue figures between two states (the ``queue --json`` document)."""
    return {
        "cautions": list(CAUTIONS),
        "shock_speed_m_s": _number(queue.shock_speed),
        "queue_growth_veh_h": _number(queue.growth * 3600, 3),
        "duration_s": _number(queue.duration, 3),
        "queue_length_m": _number(queue.length_after, 3),
        "vehicles_joined_queue": _number(queue.joined_after, 3),
        "vehicles_in_excess": _number(queue.excess_after, 3),
        "arriving": {
            "flow_veh_h": _number(queue.arriving.flow * 3600, 3),
            "density_veh_km": _number(queue.arriving.density * 1000, 4),
        },
        "queued": {
            "flow_veh_h": _number(queue.queued.flow * 3600, 3),
            "density_veh_km": _number(queue.queued.density * 1000, 4),
        },
    }


def merge_area_json(operations: MergeOperations | None) -> dict[str, Any] | None:
    if operations is None:
        return None
    document = area_json(operations.area)
    document |= {
        "acceleration_length_m": _number(operations.acceleration_length, 3),
        "mainline_truck_equivalent": operations.mainline_truck_equivalent,
        "ramp_equivalents": {e.vehicle_id: _number(e.equivalent, 4) for e in operations.ramp_equivalents},
        "capacity_lost_to_slow_trucks_pc_h": _number(operations.capacity_lost_pc_h, 3),
    }
    if operations.queue is not None:
        queue = queue_json(operations.queue)
        document |= {
            "shock_speed_m_s": queue["shock_speed_m_s"],
            "queue_growth_veh_h": queue["queue_growth_veh_h"],
            "queue_length_m_after_1h": _number(operations.queue_length_after_hour, 3),
            "queue_clears_after_s": None if operations.history is None else _number(operations.history.clears_at, 1),
        }
    return document


def batch_json(results: list[BatchResult], summary: BatchSummary) -> Iterator[str]:
    """The ``batch --json`` document, a piece at a time: the summary, then every site ranked worst first with its
    full check. Each site's check is built and encoded in turn, so a document of 100,000 sites is never held
    whole, as objects or as text."""
    head = {
        "summary": {
            "sites": summary.total,
            "meets": summary.meets,
            "short": summary.short,
            "unreadable": summary.unreadable,
            "skipped": list(summary.skipped),
            "cannot_reach": summary.cannot_reach,
            "short_by_governing_vehicle": summary.short_by_vehicle,
        },
        "cautions": list(CAUTIONS),
    }
    opening = orjson.dumps(head, option=_OPTIONS).decode("utf-8")
    yield opening[: opening.rindex("}")].rstrip() + ',\n  "sites": ['
    for rank, r in enumerate(results, start=1):
        item = {
            "rank": rank,
            "input": r.label,
            "error": r.error,
            "check": None if r.assessment is None else site_json(r.assessment),
        }
        text = orjson.dumps(item, option=_OPTIONS).decode("utf-8").replace("\n", "\n    ")
        yield ("\n    " if rank == 1 else ",\n    ") + text
    yield "\n  ]\n}\n" if results else "]\n}\n"


def sweep_json(result: Sweep) -> dict[str, Any]:
    return {
        "field": result.field,
        "cautions": list(CAUTIONS),
        "points": [
            {
                "value_si": p.value,
                "verdict": p.assessment.verdict,
                "verdict_basis": p.assessment.basis,
                "verdict_changes": p.verdict_changes,
                "governing_vehicle": p.assessment.governing.vehicle.id,
                "length_needed_m": _number(p.assessment.governing.length_needed, 3),
                "deficit_m": _number(p.assessment.governing.deficit, 3),
                "merge_probability_by_lane_end": _number(p.assessment.governing.merge.by_lane_end),
            }
            for p in result.points
        ],
    }


def merge_area_command_json(area: MergeArea) -> dict[str, Any]:
    """The ``merge-area --json`` document: the figures and the cautions."""
    return area_json(area) | {"cautions": list(CAUTIONS)}
