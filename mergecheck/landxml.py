"""Vertical profiles from LandXML, the open exchange format for civil design data (versions 1.0 to 1.2).

A profile (``Alignment/Profile/ProfAlign``) is a run of points of vertical intersection: ``<PVI>`` (no
curve), ``<ParaCurve length="L">`` (an equal-tangent parabolic curve of length L centred on the PVI) and
``<CircCurve length="L" radius="R">`` (a circular curve, taken as the parabola of the same length: the two
differ by less than L^4 / (384 R^3) in elevation, millimetres for highway curves; common practice), each
holding its station and elevation as text. Grades follow from the elevations, g = (z2 - z1) / (s2 - s1),
and a parabolic curve's elevation x past its start is

.. math:: z(x) = z_{PVC} + g_1 x + \\frac{g_2 - g_1}{2 L} x^2

(AASHTO, A Policy on Geometric Design of Highways and Streets, 7th ed. 2018, Section 3.4.6, the equation of
the equal-tangent vertical curve), which is how :class:`~mergecheck.profile.VerticalProfile` evaluates it.
Stations and elevations are in the file's linear unit (``Units/Metric`` or ``Units/Imperial``).

The file is parsed without any document type: a file that declares one (and with it entities, the way to
entity-expansion and external-entity attacks) is refused before parsing.
"""

from __future__ import annotations

import itertools
import re
import xml.etree.ElementTree as ElementTree
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError
from .inputs import read_text
from .profile import GradeChange, VerticalProfile

_UNITS = {"meter": 1.0, "metre": 1.0, "kilometer": 1000.0, "foot": 0.3048, "USSurveyFoot": 1200 / 3937}
"""LandXML linear units, in metres (the US survey foot is 1200/3937 m)."""
_DECLARATION = re.compile(r"<!\s*(DOCTYPE|ENTITY)", re.IGNORECASE)


@dataclass(frozen=True, slots=True)
class LandXMLProfile:
    """A profile read from LandXML, with stations from a start station on the alignment."""

    profile: VerticalProfile
    """Grades by station from the start station (earlier PVIs at negative stations). [m]"""
    elevation: float
    """Elevation at the start station. [m]"""
    end: float
    """Last PVI, measured from the start station: the profile is known up to here. [m]"""


LANDXML_LARGEST = 1_000_000_000
"""Largest LandXML file read. [bytes] A design model's file may hold surfaces of hundreds of megabytes beside the
profile that is read."""


def read_profile(path: str, alignment: str, profile: str, start_station: float) -> LandXMLProfile:
    """The named profile of the named alignment, with station 0 at ``start_station`` [m, on the alignment].

    Raises :class:`InputError` naming the file, the element and the rule: a file that is not LandXML or
    declares a document type, an alignment or profile not found (the names found are listed), a PVI that
    cannot be read, stations out of order, or a start station outside the profile.
    """
    text = read_text(path, "the LandXML file", largest=LANDXML_LARGEST)
    if _DECLARATION.search(text):
        raise InputError(path, "", "declares a document type or entities: refused (LandXML needs neither)")
    try:
        root = ElementTree.fromstring(text)
    except ElementTree.ParseError as error:
        raise InputError(path, "", f"not well-formed XML: {error}") from None
    if _local(root.tag) != "LandXML":
        raise InputError(path, "", f"the root element is {_local(root.tag)}, not LandXML")
    factor = _linear_unit(root, path)
    alignments = [e for e in root.iter() if _local(e.tag) == "Alignment"]
    chosen = [a for a in alignments if a.get("name") == alignment]
    if not chosen:
        names = ", ".join(repr(a.get("name")) for a in alignments) or "none"
        raise InputError(path, f"Alignment {alignment!r}", f"not found; alignments in the file: {names}")
    lines = [
        (p, a)
        for p in chosen[0].iter()
        if _local(p.tag) == "Profile"
        for a in p
        if _local(a.tag) == "ProfAlign" and profile in (a.get("name"), p.get("name"))
    ]
    if not lines:
        found = [
            a.get("name") or p.get("name")
            for p in chosen[0].iter()
            if _local(p.tag) == "Profile"
            for a in p
            if _local(a.tag) == "ProfAlign"
        ]
        names = ", ".join(repr(n) for n in found) or "none"
        raise InputError(path, f"Alignment {alignment!r} / Profile {profile!r}", f"not found; profiles: {names}")
    where = f"Alignment {alignment!r} / Profile {profile!r}"
    points = _points(lines[0][1], factor, path, where)
    return _relative(points, start_station, path, where)


def _local(tag: str) -> str:
    """An element's name without its namespace."""
    return tag.rsplit("}", 1)[-1]


def _linear_unit(root: ElementTree.Element, path: str) -> float:
    for units in root:
        if _local(units.tag) == "Units":
            for system in units:
                unit = system.get("linearUnit")
                if unit is not None:
                    if unit not in _UNITS:
                        raise InputError(path, "Units", f"linear unit {unit!r} not known: {', '.join(_UNITS)}")
                    return _UNITS[unit]
    raise InputError(path, "Units", "no linear unit given (Units/Metric or Units/Imperial with linearUnit)")


def _points(line: ElementTree.Element, factor: float, path: str, where: str) -> list[tuple[float, float, float]]:
    """(station, elevation, curve length) of each PVI, in metres, in order."""
    points: list[tuple[float, float, float]] = []
    for i, element in enumerate(
        e for e in line if _local(e.tag) in ("PVI", "ParaCurve", "CircCurve", "UnsymParaCurve")
    ):
        kind = _local(element.tag)
        at = f"{where} / {kind} {i + 1}"
        if kind == "UnsymParaCurve":
            raise InputError(path, at, "unsymmetrical vertical curves are not supported: give a ParaCurve")
        try:
            station, elevation = (float(v) * factor for v in (element.text or "").split())
            length = float(element.get("length", "0")) * factor if kind != "PVI" else 0.0
        except ValueError:
            rule = "must hold a station and an elevation (two numbers), and a curve a numeric length"
            raise InputError(path, at, rule) from None
        if not all(map(_finite, (station, elevation, length))) or length < 0:
            raise InputError(path, at, "station, elevation and curve length must be finite, the length not negative")
        if points and station <= points[-1][0]:
            raise InputError(path, at, "stations must increase from one PVI to the next")
        points.append((station, elevation, length))
    if len(points) < 2:
        raise InputError(path, where, "a profile needs at least two PVIs")
    for (s0, _, l0), (s1, _, l1) in itertools.pairwise(points):
        if s0 + l0 / 2 > s1 - l1 / 2 + 1e-9:
            raise InputError(path, where, f"vertical curves overlap between stations {s0:g} m and {s1:g} m")
    return points


def _finite(value: float) -> bool:
    return value == value and abs(value) != float("inf")


def _relative(points: list[tuple[float, float, float]], start: float, path: str, where: str) -> LandXMLProfile:
    first, last = points[0][0], points[-1][0]
    if not first <= start < last:
        rule = f"the start station {start:g} m lies outside the profile ({first:g} to {last:g} m)"
        raise InputError(path, where, rule)
    grades = [(z1 - z0) / (s1 - s0) for (s0, z0, _), (s1, z1, _) in itertools.pairwise(points)]
    changes = tuple(
        GradeChange(station - start, grade, length)
        for (station, _, length), grade in zip(points[1:-1], grades[1:], strict=True)
    )
    shape = VerticalProfile(initial_grade=grades[0], changes=changes)
    # the elevation at the start station: the first PVI's, carried along the profile
    elevation = points[0][1] + float(shape.elevation(0.0) - shape.elevation(first - start))
    return LandXMLProfile(profile=shape, elevation=elevation, end=last - start)


def is_landxml(path: str | Path) -> bool:
    """Whether a profile file is LandXML (by its name)."""
    return str(path).lower().endswith(".xml")
