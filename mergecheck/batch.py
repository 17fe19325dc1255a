"""Many sites at once: read a folder, a YAML list or a CSV of sites, assess each, rank worst first.

Sites are read as ``mergecheck check`` reads them (:func:`mergecheck.site.site_from_input`)
and assessed in runs of up to CHUNK by :func:`mergecheck.assessment.assess_many`, which
integrates every design vehicle of every site in one pass; a vehicle's integration does
not depend on its neighbours, so a batch row equals ``mergecheck check`` on that site.
Runs are spread over worker processes when there are enough sites to pay for starting
them. Each result keeps the site's figures, not its curves along the path. A site that
cannot be read is reported with its reason and does not stop the others.

CSV input: one site per row. Column names are the site file's fields joined by
underscores, with the unit as a suffix or in each cell:

========================================  =====================================================
column                                    meaning (site-file field)
========================================  =====================================================
name                                      name
design_speed_kmh / _mph / (unit in cell)  mainline.design_speed
operating_speed_kmh / _mph                mainline.operating_speed (optional)
lanes                                     mainline.lanes
adjacent_lane_flow_veh_h                  mainline.adjacent_lane_flow
mainline_flow_veh_h                       mainline.flow (optional)
controlling_speed_kmh / _mph              ramp.controlling_speed ("stop" allowed)
ramp_flow_veh_h                           ramp.flow
vehicles                                  ramp.vehicles as "passenger-car:0.85;semitrailer-design:0.15"
entrance                                  geometry.entrance
curve_end_to_convergence_m / _ft          geometry.curve_end_to_convergence
lane_length_m / _ft                       geometry.lane_length
taper_length_m / _ft                      geometry.taper_length
grade_pct                                 one grade for the whole path, or
profile                                   geometry.profile as "0 m:3 %;250 m:1.5 %"
elevation_m / _ft                         geometry.elevation (optional)
merge_speed_differential_kmh / _mph       criteria.merge_speed_differential (optional)
========================================  =====================================================
"""

from __future__ import annotations

import gc
import os
import re
import stat
from collections.abc import Callable, Iterator, Mapping, Sequence
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager, nullcontext
from dataclasses import dataclass
from functools import partial
from pathlib import Path
from typing import Any

from .assessment import SiteAssessment, assess, assess_many
from .errors import InputError
from .inputs import LARGEST_TEXT, csv_rows, file_kind, printable, read_text, read_yaml, validated
from .policy import load_policy
from .site import Site, SiteInput, site_from_input
from .spreadsheet import sheet_rows

UNIT_SUFFIXES = {"kmh": "km/h", "mph": "mph", "m": "m", "ft": "ft", "veh_h": "veh/h", "pct": "%", "s": "s"}
PARALLEL_FROM = 200
"""Use worker processes from this many sites on (below it, starting them costs more than it saves)."""
CHUNK = 500
"""Sites integrated together in one pass, at most."""


@dataclass(frozen=True, slots=True)
class SiteEntry:
    """One site of a batch: where it comes from and how to load it (read by the worker that assesses it)."""

    label: str
    """File, file and list index, or file and CSV row."""
    load: Callable[[], Any]
    """Returns the site as loaded (a mapping of fields) or raises InputError."""

    @classmethod
    def given(cls, label: str, site: Any) -> SiteEntry:
        """An entry for a site already loaded (e.g. one item of a YAML list)."""
        return cls(label, partial(_given, site))

    def read(self) -> SiteInput:
        """The validated site input; InputError names the entry, the field and the rule."""
        return validated(self.load(), SiteInput, self.label, "a site")


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchResult:
    label: str
    assessment: SiteAssessment | None
    error: str | None


def source_files(path: str) -> list[Path]:
    """The files a batch reads: the site files of a folder, or the one file given."""
    source = Path(path)
    if file_kind(source, path, "") == "folder":
        try:
            return sorted(p for p in source.iterdir() if p.suffix in (".yaml", ".yml"))
        except OSError as error:
            raise InputError(path, "", f"cannot list the folder: {error.strerror}") from None
    return [source]


_OTHER_FILES = (
    (re.compile(r"^(model|parameters)\s*:", re.MULTILINE), "a vehicle profile"),
    (re.compile(r"^(highway_speeds|lengths)\s*:", re.MULTILINE), "a policy table"),
)
_PLAIN_NUMBER = re.compile(r"\s*[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?\s*")  # one way to read each digit
_SITE_KEY = re.compile(r"^mainline\s*:", re.MULTILINE)


def not_a_site(path: Path) -> str | None:
    """What a YAML file in a folder of sites is, when it is clearly something else (a vehicle profile, a policy
    table: no top-level ``mainline`` and that kind's own keys); None for a site or anything unclear."""
    try:
        status = path.stat()
        if not stat.S_ISREG(status.st_mode) or status.st_size > LARGEST_TEXT:
            return None  # not a regular file, or too large: reported as such when it is read
        text = path.read_text(encoding="utf-8", errors="replace")
    except (OSError, ValueError):
        return None  # unreadable: reported as such when it is read
    if _SITE_KEY.search(text):
        return None
    return next((kind for pattern, kind in _OTHER_FILES if pattern.search(text)), None)


@dataclass(frozen=True, slots=True)
class BatchSource:
    """What a batch reads, each file looked at once: the sites, and the files of a folder that are clearly not
    sites, each with what it is (left out; :func:`not_a_site`)."""

    entries: list[SiteEntry]
    skipped: list[str]


def read_batch(path: str) -> BatchSource:
    """Sites from a folder of site files, a YAML file with a list of sites, or a CSV with one site a row."""
    if file_kind(path, path, "") != "folder":
        return BatchSource(_file_entries(path), [])
    files, skipped = [], []
    for f in source_files(path):
        kind = not_a_site(f)
        if kind is None:
            files.append(f)
        else:
            skipped.append(f"{printable(f.name)} ({kind}, not a site)")
    if not files:
        raise InputError(path, "", "the folder holds no .yaml site files")
    return BatchSource([SiteEntry(printable(str(f)), partial(read_yaml, str(f))) for f in files], skipped)


def read_entries(path: str) -> list[SiteEntry]:
    """The sites of :func:`read_batch`."""
    return read_batch(path).entries


def _file_entries(path: str) -> list[SiteEntry]:
    source = Path(path)
    if source.suffix.lower() == ".csv":
        return list(_csv_entries(path))
    if source.suffix.lower() == ".xlsx":
        return [SiteEntry(label, partial(csv_row_to_site, row, label)) for label, row in sheet_rows(path)]
    raw = read_yaml(path)
    sites = raw.get("sites") if isinstance(raw, dict) else raw
    if not isinstance(sites, list) or not sites:
        raise InputError(path, "sites", "a batch file is a list of sites, or a mapping with a 'sites' list")
    return [SiteEntry.given(f"{path}: sites.{i}", site) for i, site in enumerate(sites)]


def _given(value: Any) -> Any:
    return value


def _csv_entries(path: str) -> Iterator[SiteEntry]:
    rows = csv_rows(read_text(path, "the CSV file"), path)
    if not rows:
        raise InputError(path, "", "no header and no rows")
    header = rows[0][1]
    for line, cells in rows[1:]:
        label = f"{path}: row {line}"
        row = dict(zip(header, cells + [""] * (len(header) - len(cells)), strict=False))
        yield SiteEntry(label, partial(csv_row_to_site, row, label))


def csv_row_to_site(row: Mapping[str, str | None], label: str) -> dict[str, Any]:
    """A CSV row in the site file's form (strings with units), for the same validation."""
    cells: dict[str, str] = {key.strip(): (value or "").strip() for key, value in row.items() if key}

    def quantity(field: str, required: bool = True) -> str | None:
        for suffix, unit in UNIT_SUFFIXES.items():
            value = cells.get(f"{field}_{suffix}")
            if value:
                if value.lower() == "stop":
                    return value
                if not _PLAIN_NUMBER.fullmatch(value):
                    rule = f"the column's unit ({unit}) is in its heading: give the number alone, not {value!r}"
                    raise InputError(label, f"{field}_{suffix}", rule)
                return f"{value} {unit}"
        value = cells.get(field)
        if value:
            return value
        if required:
            raise InputError(
                label, field, "column missing or empty (give the unit as a suffix, e.g. _m, _kmh, or in the cell)"
            )
        return None

    def share_list(text: str) -> dict[str, float]:
        shares: dict[str, float] = {}
        for part in filter(None, text.split(";")):
            vehicle, _, share = part.partition(":")
            try:
                shares[vehicle.strip()] = float(share)
            except ValueError:
                raise InputError(label, "vehicles", f"{part!r} is not 'vehicle:share'") from None
        return shares

    profile: list[dict[str, str | None]] = []
    if cells.get("profile"):
        for part in filter(None, cells["profile"].split(";")):
            start, _, grade = part.partition(":")
            profile.append({"from": start.strip(), "grade": grade.strip()})
    else:
        profile = [{"from": "0 m", "grade": quantity("grade")}]
    try:
        lanes = int(cells.get("lanes") or "")
    except ValueError:
        raise InputError(label, "lanes", "must be a whole number of lanes") from None
    site: dict[str, Any] = {
        "name": cells.get("name") or label,
        "mainline": {
            "design_speed": quantity("design_speed"),
            "lanes": lanes,
            "adjacent_lane_flow": quantity("adjacent_lane_flow"),
        },
        "ramp": {
            "controlling_speed": quantity("controlling_speed"),
            "flow": quantity("ramp_flow"),
            "vehicles": share_list(cells.get("vehicles", "")),
        },
        "geometry": {
            "entrance": cells.get("entrance") or "parallel",
            "curve_end_to_convergence": quantity("curve_end_to_convergence"),
            "lane_length": quantity("lane_length"),
            "taper_length": quantity("taper_length"),
            "profile": profile,
        },
    }
    optional = {
        ("mainline", "operating_speed"): quantity("operating_speed", False),
        ("mainline", "flow"): quantity("mainline_flow", False),
        ("geometry", "elevation"): quantity("elevation", False),
    }
    for (section, field), value in optional.items():
        if value is not None:
            site[section][field] = value
    differential = quantity("merge_speed_differential", False)
    if differential is not None:
        site["criteria"] = {"merge_speed_differential": differential}
    return site


def assess_entry(entry: SiteEntry) -> BatchResult:
    """The single-site path for one entry (full assessment, curves kept); errors become the row's reason."""
    try:
        return BatchResult(label=entry.label, assessment=assess(site_from_input(entry.read(), entry.label)), error=None)
    except InputError as error:
        return BatchResult(label=entry.label, assessment=None, error=_reason(error, entry.label))


def _reason(error: InputError, label: str) -> str:
    """Why an entry could not be read, without repeating the entry it belongs to."""
    return str(error).removeprefix(f"{label}: ")


def assess_chunk(entries: list[SiteEntry]) -> list[BatchResult]:
    """Read a run of entries and assess them together (:func:`mergecheck.assessment.assess_many`), keeping the
    figures only.

    Each site's figures equal the single-site path's: the vehicles of all
    sites are integrated side by side, each independently of the others.
    """
    with collection_paused():
        return _assess_chunk(entries)


def _assess_chunk(entries: list[SiteEntry]) -> list[BatchResult]:
    results: list[BatchResult | None] = [None] * len(entries)
    readable: list[tuple[int, Site]] = []
    policies: dict[str, str | None] = {}  # policy file -> why it cannot be read (None: readable)
    for i, entry in enumerate(entries):
        try:
            site = site_from_input(entry.read(), entry.label)
            table = site.policy_choice.table
            if table is not None:
                if table not in policies:
                    policies[table] = _policy_problem(table)
                if policies[table] is not None:
                    raise InputError(entry.label, "policy", str(policies[table]))
            readable.append((i, site))
        except InputError as error:
            results[i] = BatchResult(label=entry.label, assessment=None, error=_reason(error, entry.label))
    assessments = assess_many([site for _, site in readable]) if readable else []  # a chunk may be all unreadable
    for (i, _), assessment in zip(readable, assessments, strict=True):
        results[i] = BatchResult(label=entries[i].label, assessment=assessment.figures_only(), error=None)
    return [r for r in results if r is not None]


@contextmanager
def collection_paused() -> Iterator[None]:
    """Cyclic garbage collection paused while many small result objects (and no cycles) are made.

    Collections would otherwise walk every result kept so far, again and again.
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def _policy_problem(path: str) -> str | None:
    try:
        load_policy(path)
    except InputError as error:
        return str(error)
    return None


def assess_all(
    entries: list[SiteEntry], *, workers: int | None = None, tick: Callable[[int], None] | None = None
) -> list[BatchResult]:
    """Assess every entry, in input order, in chunks of CHUNK sites on up to ``workers`` processes (default: all cores).

    ``tick`` is called with the number of sites after each chunk (for a progress bar).
    """
    workers = workers or os.cpu_count() or 1
    parallel = workers > 1 and len(entries) >= PARALLEL_FROM
    size = min(CHUNK, -(-len(entries) // (4 * workers))) if parallel else CHUNK  # four runs a worker
    chunks = [entries[i : i + size] for i in range(0, len(entries), size)]
    results: list[BatchResult] = []
    with collection_paused(), ProcessPoolExecutor(max_workers=workers) if parallel else nullcontext() as pool:
        done: Iterator[list[BatchResult]] = pool.map(assess_chunk, chunks) if pool else map(assess_chunk, chunks)
        for chunk in done:
            results.extend(chunk)
            if tick:
                tick(len(chunk))
    return results


def severity(result: BatchResult) -> tuple[int, float]:
    """Sort key, worst first: unreadable; sites whose verdict is short (a vehicle that cannot reach, then by
    deficit on the verdict's basis); then sites that meet, by least margin on the verdict's basis."""
    a = result.assessment
    if a is None:
        return (0, 0.0)
    g = a.governing
    if a.basis == "performance" and a.verdict != "meets" and (g.verdict == "cannot-reach" or g.deficit is None):
        return (1, -g.speed_differential_at_taper_start)
    policy = a.policy.minimum_length if a.policy is not None else None
    if a.basis == "policy" and policy is not None:
        margin = a.site.lane_length - policy  # the lane as the table measures it, as the policy basis compares
    else:
        margin = a.site.available_length - (g.length_needed or 0.0)
    return (2, margin) if a.verdict != "meets" else (3, margin)


def ranked(results: list[BatchResult]) -> list[BatchResult]:
    return sorted(results, key=severity)


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchSummary:
    total: int
    meets: int
    short: int
    unreadable: int
    cannot_reach: int
    """Sites where the governing vehicle never reaches merge speed."""
    short_by_vehicle: dict[str, int]
    """How many short sites each design vehicle governs."""
    skipped: tuple[str, ...] = ()
    """Files of the folder left out as clearly not sites, each with what it is."""


def summarize(results: list[BatchResult], skipped: Sequence[str] = ()) -> BatchSummary:
    assessed = [r.assessment for r in results if r.assessment is not None]
    short = [a for a in assessed if a.verdict == "short"]
    by_vehicle: dict[str, int] = {}
    for a in short:
        by_vehicle[a.governing.vehicle.id] = by_vehicle.get(a.governing.vehicle.id, 0) + 1
    return BatchSummary(
        total=len(results),
        meets=sum(a.verdict == "meets" for a in assessed),
        short=len(short),
        unreadable=len(results) - len(assessed),
        cannot_reach=sum(a.governing.verdict == "cannot-reach" for a in assessed),
        short_by_vehicle=dict(sorted(by_vehicle.items(), key=lambda kv: -kv[1])),
        skipped=tuple(skipped),
    )
