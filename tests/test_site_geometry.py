"""A vehicle's need is a property of the vehicle and the site, not of the lane provided; taper-type entrances."""

from __future__ import annotations

from typing import Any

import pytest

from mergecheck.assessment import assess
from mergecheck.errors import InputError
from mergecheck.narrative import assumptions


@pytest.mark.parametrize("vehicle", ["passenger-car", "bus", "semitrailer-design"])
def test_sweeping_the_lane_length_never_changes_a_vehicles_need(vehicle: str, make_site: Any) -> None:
    """The search for merge speed and for the reliability target runs to a horizon measured from the
    convergence point, not from the end of the taper (before, a heavy vehicle's need read "never" up to a
    2,400 ft lane and 12,556 ft beyond it). The design truck on the level at 100 km/h needs well over a
    kilometre; its need must not move by more than half a metre (station-grid interpolation) whatever the
    lane provided."""
    needs = []
    for length in ["150 m", "400 m", "900 m", "2500 m"]:
        v = assess(make_site(geometry__lane_length=length, ramp__vehicles={vehicle: 1.0})).vehicles[0]
        assert v.required_length is not None and v.merge.length_for_reliability is not None
        needs.append((v.required_length, v.merge.length_for_reliability))
    for required, for_gaps in needs[1:]:
        assert required == pytest.approx(needs[0][0], abs=0.5)
        assert for_gaps == pytest.approx(needs[0][1], abs=0.5)
    if vehicle == "semitrailer-design":
        assert needs[0][0] > 800.0  # the case that used to fall off the search


def test_a_taper_type_entrance_may_have_no_parallel_section(make_site: Any) -> None:
    """lane_length 0 is a taper-type entrance with no parallel lane: it is checked (the taper credited as the
    site says), its average grade taken over the taper; a parallel-type entrance still needs a lane."""
    taper = make_site(
        geometry__entrance="taper", geometry__lane_length="0 m", geometry__taper_length="250 m",
        criteria={"taper_credit": 1.0},
    )  # fmt: skip
    result = assess(taper)
    car = result.vehicles[0]
    assert car.available_length == pytest.approx(250.0)
    assert result.average_grade == pytest.approx(0.0)
    assert car.merge.by_taper_end > 0.9  # the taper is where drivers merge: every gap there may be forced
    with pytest.raises(InputError, match=r"geometry\.lane_length.*taper-type"):
        make_site(geometry__lane_length="0 m")


def test_speed_gained_before_the_nose_is_stated_and_the_policy_strict_reading_offered(make_site: Any) -> None:
    """With 300 m of ramp before the convergence point a car gains speed the policy tables do not credit (they
    take the initial speed at the convergence point, Green Book 2011 acceleration-length table, from memory).
    The report states the gain; criteria.acceleration_from: convergence gives the policy-strict reading, which
    needs more length."""
    free = assess(make_site(geometry__curve_end_to_convergence="300 m"))
    strict = assess(
        make_site(geometry__curve_end_to_convergence="300 m", criteria={"acceleration_from": "convergence"})
    )
    assumption = next(a for a in assumptions(free) if a.name == "Speed gained before the convergence point")
    assert "credited over the 300 m" in assumption.value
    car, strict_car = free.vehicles[0], strict.vehicles[0]
    assert car.speed_at_convergence > car.initial_speed + 3.0  # m/s gained before the nose
    assert strict_car.speed_at_convergence == pytest.approx(strict_car.initial_speed)
    assert strict_car.required_length is not None and car.required_length is not None
    assert strict_car.required_length > car.required_length + 50.0
    assert "policy-strict" in next(a for a in assumptions(strict) if a.name.startswith("Speed gained")).source


def test_the_default_operating_speed_is_the_policys_running_speed(make_site: Any) -> None:
    """Not given, the operating speed at the merge is the average running speed the policy table sets its merge
    speeds against, from the table in use, stated as an assumption, never the design speed silently. A km/h site
    takes the metric table: 100 km/h design, running speed 82 km/h (Green Book 2011 metric table, merge speed
    74 km/h, about 8 km/h below the running speed; from memory). A mph site takes the US customary table: 60 mph
    design, running speed 52 mph (Green Book 2011 US table, merge speed 47 mph, about 5 mph below; from memory).
    The issue's case: a level parallel lane of 300 m at 100 km/h design, against a policy minimum of about 205 m,
    has the car SHORT when the stream runs at the design speed and within the lane at the running speed."""
    data_free = {"design_speed": "100 km/h", "lanes": 3, "adjacent_lane_flow": "600 veh/h"}
    default = assess(make_site(mainline=data_free, geometry__lane_length="300 m"))
    assert default.site.operating_speed == pytest.approx(82 / 3.6, rel=1e-9)
    basis = next(a for a in assumptions(default) if a.name == "Mainline operating speed at the merge").source
    assert "average running speed" in basis and "give mainline.operating_speed" in basis
    in_mph = assess(make_site(mainline={**data_free, "design_speed": "60 mph"}, geometry__lane_length="300 m"))
    assert in_mph.site.operating_speed == pytest.approx(52 * 0.44704, rel=1e-9)
    at_design = assess(make_site(mainline={**data_free, "operating_speed": "100 km/h"}, geometry__lane_length="300 m"))
    car, car_at_design = default.vehicles[0], at_design.vehicles[0]
    assert car.required_length is not None and car_at_design.required_length is not None
    assert car.required_length < 300.0 < car_at_design.required_length
    no_table = assess(make_site(mainline=data_free, policy="none"))
    assert no_table.site.operating_speed == pytest.approx(100 / 3.6)  # no table: the conservative case, said so
