"""The design-exception case: the deficit, its consequences, and mitigations rerun on modified layouts.

Each mitigation is computed by rerunning the whole assessment
(:func:`mergecheck.assessment.assess`) on a copy of the site with one thing
changed, so its effect is measured with the same models as the base case:

* **Lengthen the lane** to the longest length any design vehicle needs
  (to reach merge speed and find a gap at the target reliability); vehicles
  that cannot reach merge speed are not helped by length, and the option
  says so.
* **Flatten the profile**: every upgrade steeper than 2 % cut to 2 %.
* **Raise the controlling-curve design speed** by 10 km/h (kept below the
  merge speed), with the initial speed taken from the policy table again.
* **Meter the ramp**: vehicles start from a stop at the end of the ramp
  (station 0), as behind a ramp meter.

The engineer's judgment and sign-off stay with the engineer: the options are
figures to inform that judgment, not recommendations.
"""

from __future__ import annotations

import dataclasses
import datetime
import hashlib
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from .assessment import SiteAssessment, assess
from .profile import GradeChange, VerticalProfile
from .site import Site

FLATTENED_GRADE = 0.02
"""Upgrades steeper than this are cut to it in the flattening option. [fraction]"""
SPEED_STEP = 10 / 3.6
"""Increase of the controlling-curve design speed in that option. [m/s]"""
MAX_RERUNS = 4
MAX_LANE = 5000.0
"""Longest lane the lengthening option considers. [m]"""
SIGN_OFF = (
    "The options here are computed effects, not recommendations. Whether a design exception is justified, "
    "and which mitigation to adopt, is the judgment of the licensed engineer responsible for the design, "
    "under the governing agency's procedures."
)

ChangeKind = Literal["lane_length", "flatten", "controlling_speed", "metering", "none"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Mitigation:
    """One modified layout and its rerun assessment."""

    name: str
    change: ChangeKind
    before: float | None = None
    """The changed quantity before, SI (lane length [m], steepest grade [fraction], controlling speed [m/s])."""
    after: float | None = None
    """The changed quantity after, SI."""
    assessment: SiteAssessment | None
    """None when the option does not apply to this site."""
    note: str = ""


@dataclass(frozen=True, slots=True, kw_only=True)
class DesignException:
    """What a design-exception request needs, in numbers."""

    base: SiteAssessment
    policy_length: float | None
    """[m]"""
    provided_length: float
    """[m]"""
    policy_deficit: float | None
    """Policy minimum less the length provided (positive when short of policy). [m]"""
    mitigations: tuple[Mitigation, ...]
    prepared_on: str
    """The date the study was run (ISO 8601)."""
    prepared_by: str | None
    """Who prepared it, as given (``check --prepared-by``)."""
    input_sha256: str | None
    """SHA-256 of the site file's bytes, so that a reviewer can tell the study from the file it came from; None
    for a site not read from a file."""
    sign_off: str = SIGN_OFF


def lane_for(site: Site, base: SiteAssessment) -> Mitigation:
    """Lengthen the lane to the longest need; rerun until the needs stop growing.

    A vehicle's needs do not depend on the lane length, but the search for
    the reliability length reaches further on a longer lane, so a need found
    only then can raise the answer; a few reruns settle it.
    """
    name = "Lengthen the lane"
    current = base
    length = site.lane_length
    for _ in range(MAX_RERUNS):
        needs = [v.length_needed for v in current.vehicles if v.length_needed is not None]
        if not needs or max(needs) <= length or max(needs) > MAX_LANE:
            break
        length = max(needs)
        current = assess(dataclasses.replace(site, lane_length=length))
    if current is base:
        if base.verdict == "meets":
            return Mitigation(
                name=name, change="none", assessment=base, note="the lane already meets every vehicle's need"
            )
        return Mitigation(
            name=name,
            change="none",
            assessment=None,
            note=f"no lane up to {MAX_LANE / 1000:.0f} km lets a vehicle that falls short reach merge speed and the target reliability",
        )
    stuck = [v.vehicle.id for v in current.vehicles if v.length_needed is None]
    note = (
        f"length does not help {', '.join(stuck)}: it never reaches merge speed or the target reliability"
        if stuck
        else ""
    )
    return Mitigation(
        name=name, change="lane_length", before=site.lane_length, after=length, assessment=current, note=note
    )


def flattened(site: Site) -> Mitigation:
    profile = site.profile
    steepest = max([profile.initial_grade, *(c.grade for c in profile.changes)])
    if steepest <= FLATTENED_GRADE:
        return Mitigation(
            name="Flatten the profile", change="none", assessment=None, note="no upgrade is steeper than 2 %"
        )
    new = VerticalProfile(
        min(profile.initial_grade, FLATTENED_GRADE),
        tuple(GradeChange(c.station, min(c.grade, FLATTENED_GRADE), c.curve_length) for c in profile.changes),
    )
    return Mitigation(
        name="Flatten the profile",
        change="flatten",
        before=steepest,
        after=FLATTENED_GRADE,
        assessment=assess(dataclasses.replace(site, profile=new)),
    )


def faster_curve(site: Site) -> Mitigation:
    name = "Raise the controlling-curve speed"
    if site.controlling_speed is None:
        return Mitigation(name=name, change="none", assessment=None, note="the ramp starts from a stop")
    speed = site.controlling_speed + SPEED_STEP
    if speed >= min(v.merge_speed for v in site.vehicles):
        return Mitigation(name=name, change="none", assessment=None, note="it would reach the merge speed")
    rerun = assess(dataclasses.replace(site, controlling_speed=speed, initial_speed=None))
    return Mitigation(
        name=name, change="controlling_speed", before=site.controlling_speed, after=speed, assessment=rerun
    )


def metered(site: Site) -> Mitigation:
    if site.controlling_speed is None:
        return Mitigation(
            name="Meter the ramp", change="none", assessment=None, note="the ramp already starts from a stop"
        )
    rerun = assess(dataclasses.replace(site, controlling_speed=None, initial_speed=0.0))
    return Mitigation(
        name="Meter the ramp",
        change="metering",
        assessment=rerun,
        note="metering smooths arrivals at the merge; this shows only its cost in acceleration length",
    )


def design_exception(base: SiteAssessment, *, prepared_by: str | None = None) -> DesignException:
    """The design-exception study for an assessed site, dated, with who prepared it and the site file's digest."""
    site = base.site
    source = Path(site.source)
    try:  # the digest of the file the site was read from; none for a site given as data, or gone since
        digest = hashlib.sha256(source.read_bytes()).hexdigest() if source.is_file() else None
    except OSError:
        digest = None
    policy_length = None if base.policy is None else base.policy.minimum_length
    deficit = None if policy_length is None else policy_length - site.lane_length
    return DesignException(
        base=base,
        policy_length=policy_length,
        provided_length=site.lane_length,
        policy_deficit=deficit,
        mitigations=(lane_for(site, base), flattened(site), faster_curve(site), metered(site)),
        prepared_on=datetime.date.today().isoformat(),
        prepared_by=prepared_by,
        input_sha256=digest,
    )
