"""The public Python interface: load or build a site, assess it, run a batch or a sweep, and read the results as
plain data or as documents. The command line (:mod:`mergecheck.cli`) is built on these functions.

Everything returned is immutable data in SI units (m, s, m/s, veh/s, grade as a fraction), with one exception
kept from the JSON documents: :func:`vehicle_records` gives flows in veh/h under names that say so.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import Any

from .assessment import SiteAssessment, SiteCheck, assess_many
from .assessment import assess as _assess
from .batch import BatchResult, SiteEntry, assess_all, ranked, read_entries
from .errors import InputError
from .exception_study import DesignException
from .exception_study import design_exception as _design_exception
from .inputs import validated
from .limits import DRIVERS, WORKERS, check_count
from .site import Site, SiteInput, site_from_input
from .site import load_site as _load_site
from .sweep import Sweep, parse_range
from .sweep import sweep as _sweep
from .units import UnitSystem

__all__ = [
    "assess",
    "assess_batch",
    "assess_sites",
    "design_exception",
    "load_site",
    "site_from_dict",
    "sweep_site",
    "to_html",
    "to_json",
    "to_markdown",
    "vehicle_records",
]


def load_site(path: str | os.PathLike[str]) -> Site:
    """Read, validate and convert a site file (YAML); bad input raises :class:`InputError` naming the file,
    the field and the rule."""
    return _load_site(os.fspath(path))


def site_from_dict(data: Mapping[str, Any], *, source: str = "site") -> Site:
    """A site from a mapping written as the site file is (quantities as strings with units: ``"300 m"``).

    ``source`` names the site in error messages; vehicle and policy files named by a relative path are read
    from the working directory.
    """
    raw = dict(data) if isinstance(data, Mapping) else data  # anything else is refused by the validation
    return site_from_input(validated(raw, SiteInput, source, "a site (name, mainline, ramp, ...)"), source)


def assess(
    site: Site, *, monte_carlo: int = 0, seed: int = 20261202, progress: Callable[[int], None] | None = None
) -> SiteCheck:
    """Assess every design vehicle at a site against the policy table and their own needs
    (:func:`mergecheck.assessment.assess`); ``monte_carlo`` adds a seeded simulation of that many drivers,
    ``progress`` is told how many have been drawn as each batch of them is done."""
    check_count(monte_carlo, DRIVERS, "assess", "monte_carlo", "drivers")
    return _assess(site, monte_carlo=monte_carlo, seed=seed, progress=progress)


def assess_sites(sites: Sequence[Site]) -> list[SiteCheck]:
    """Assess many sites in one pass (each result equals :func:`assess` of that site alone)."""
    return assess_many(list(sites))


def assess_batch(
    source: str | os.PathLike[str] | Iterable[Mapping[str, Any]], *, workers: int | None = None
) -> list[BatchResult]:
    """Assess many sites, ranked worst first: a folder of site files, a YAML list, a CSV (one site a row), or
    mappings as :func:`site_from_dict` takes. A site that cannot be read is a result with its ``error`` and no
    ``assessment``; the others are assessed (figures only: no curves along the path)."""
    if workers is not None:
        check_count(workers, WORKERS, "assess_batch", "workers", "processes")
    if isinstance(source, (str, os.PathLike)):
        entries = read_entries(os.fspath(source))
    else:
        entries = [  # an item that is not a mapping is reported as unreadable, as in a YAML list of sites
            SiteEntry.given(f"site {i}", dict(site) if isinstance(site, Mapping) else site)
            for i, site in enumerate(source, start=1)
        ]
    return ranked(assess_all(entries, workers=workers))


def sweep_site(site: Site, vary: str) -> Sweep:
    """Rerun a site across one input, ``vary`` as ``FIELD=START:STOP:STEP`` with units, e.g.
    ``"lane_length=200 m:600 m:50 m"`` (fields: lane_length, grade, adjacent_lane_flow, weight_to_power)."""
    field, _, values = parse_range(vary, source="sweep_site", name="vary")
    return _sweep(site, field, values)


def vehicle_records(
    results: SiteAssessment | BatchResult | Iterable[SiteAssessment | BatchResult],
) -> list[dict[str, Any]]:
    """One flat record per site and design vehicle (SI values; flows in veh/h), ready for a data frame:
    ``pandas.DataFrame(vehicle_records(results))``. Unreadable batch entries are left out."""
    if isinstance(results, (SiteAssessment, BatchResult)):
        results = [results]
    records = []
    for item in results:
        assessment = item.assessment if isinstance(item, BatchResult) else item
        if assessment is None:
            continue
        site = assessment.site
        for v in assessment.vehicles:
            records.append(
                {
                    "site": site.name,
                    "site_verdict": assessment.verdict,
                    "verdict_basis": assessment.basis,
                    "vehicle": v.vehicle.id,
                    "category": v.vehicle.category,
                    "governs": v is assessment.governing,
                    "verdict": v.verdict,
                    "share": v.share,
                    "flow_veh_h": v.flow * 3600,
                    "initial_speed_m_s": v.initial_speed,
                    "merge_speed_m_s": v.merge_speed,
                    "speed_at_convergence_m_s": v.speed_at_convergence,
                    "speed_at_taper_start_m_s": v.speed_at_taper_start,
                    "speed_differential_at_taper_start_m_s": v.speed_differential_at_taper_start,
                    "crawl_speed_m_s": v.crawl_speed,
                    "required_length_m": v.required_length,
                    "length_needed_m": v.length_needed,
                    "available_length_m": v.available_length,
                    "deficit_m": v.deficit,
                    "merged_by_lane_end": v.merge.by_lane_end,
                    "merged_by_taper_end": v.merge.by_taper_end,
                    "merged_unforced": v.merge.unforced,
                    "forced_merges_veh_h": v.merge.forced_merges_per_h,
                    "stops_veh_h": v.merge.stops_per_h,
                }
            )
    return records


def to_json(result: SiteAssessment, *, exception: bool | DesignException = False) -> str:
    """The ``check --json`` document (SI values under stable keys), with the design-exception study when a
    vehicle falls short or ``exception`` is set (or given)."""
    from .report import json_report

    return json_report.dumps(json_report.site_json(result, _exception(result, exception)))


def to_markdown(result: SiteCheck, *, units: UnitSystem = "si", exception: bool | DesignException = False) -> str:
    """The Markdown report, with the design-exception section when a vehicle falls short or ``exception`` is
    set (or given, as :func:`design_exception` made it)."""
    from .report import markdown
    from .report.document import site_document

    return markdown.site_markdown(site_document(result, _units(units, "to_markdown"), _exception(result, exception)))


def to_html(result: SiteCheck, *, units: UnitSystem = "si", exception: bool | DesignException = False) -> str:
    """The self-contained HTML report with its figures (inline SVG; every user string escaped)."""
    from .report import html  # matplotlib is slow to import: only when a page is asked for
    from .report.document import site_document

    return html.site_html(site_document(result, _units(units, "to_html"), _exception(result, exception)), result)


def design_exception(result: SiteAssessment, *, prepared_by: str | None = None) -> DesignException:
    """The design-exception study: the policy value, the deficit, the consequences and each mitigation
    rerun on a modified layout, dated, with who prepared it and the site file's SHA-256."""
    return _design_exception(result, prepared_by=prepared_by)


def _units(units: object, call: str) -> UnitSystem:
    if units not in ("si", "us"):
        raise InputError(call, "units", f"must be 'si' or 'us', not {units!r}")
    return "si" if units == "si" else "us"


def _exception(result: SiteAssessment, given: bool | DesignException) -> DesignException | None:
    if isinstance(given, DesignException):
        return given
    return design_exception(result) if given or result.verdict == "short" else None
