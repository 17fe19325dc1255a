"""Bundled design vehicles against published figures.

Sources are named beside each check; values recalled from memory say so.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import yaml
from scipy.optimize import brentq

from mergecheck.acceleration import PowerLimited
from mergecheck.profile import VerticalProfile
from mergecheck.trajectory import accelerate, equilibrium_speed
from mergecheck.vehicles import bundled_ids, load_vehicle

G = 9.80665
MPH = 0.44704


def test_required_ids_are_bundled() -> None:
    """Issue 2 lists the ids every installation must have."""
    required = {
        "passenger-car",
        "single-unit-truck",
        "bus",
        "semitrailer-design",
        "semitrailer-fleet",
        "recreational-vehicle",
    }
    assert required <= set(bundled_ids())


@pytest.mark.parametrize("vehicle_id", bundled_ids())
def test_every_parameter_names_its_source(vehicle_id: str) -> None:
    vehicle = load_vehicle(vehicle_id)
    assert vehicle.parameters
    for parameter in vehicle.parameters:
        assert len(parameter.source) > 10, parameter.name


def test_design_truck_is_120_kg_per_kw() -> None:
    """120 kg/kW (200 lb/hp): the truck behind the Green Book and HCM grade curves (REFERENCES.md 3, CONFIRMED)."""
    vehicle = load_vehicle("semitrailer-design")
    assert vehicle.weight_to_power == pytest.approx(0.120, rel=1e-9)


def test_fleet_truck_is_lighter_than_the_87_5th_percentile() -> None:
    """MnDOT Road Design Manual (2000) 5-4.01.06: 87.5th percentile 192 lb/hp in 1997 (CONFIRMED).

    A typical (median) fleet truck must be lighter per unit power than that percentile,
    and lighter than the 120 kg/kW design truck (Gillespie 1986; TRR 2483, 2015: fleets climb better).
    """
    fleet = load_vehicle("semitrailer-fleet").weight_to_power
    percentile_87_5 = 192 * 0.45359237 / 745.69987  # lb/hp to kg/W
    assert fleet is not None and fleet < percentile_87_5 and fleet < 0.120


def independent_crawl_speed(grade: float) -> float:
    """Crawl speed of the design truck from a hand-written force balance (no package physics).

    eta P / v = m g (sin + cos * Cr (c2 * 3.6 v + c3) / 1000) + 0.5 rho Cd A v^2, Rakha et al. (2001)
    with the profile's parameters; full power at crawl speeds (above the 8 m/s build-up speed).
    """
    m, p, eta, cd, area, cr = 36287.0, 36287.0 / 0.120, 0.85, 0.78, 10.7, 1.75
    theta = math.atan(grade)

    def balance(v: float) -> float:
        rolling = cr * (0.0328 * 3.6 * v + 4.575) / 1000.0
        return eta * p / v - m * G * (math.sin(theta) + math.cos(theta) * rolling) - 0.5 * 1.225 * cd * area * v**2

    return brentq(balance, 8.0, 60.0)


@pytest.mark.parametrize("grade", [0.01, 0.02, 0.03, 0.04, 0.05, 0.06])
def test_design_truck_crawl_speeds_are_physically_consistent(grade: float) -> None:
    truck = load_vehicle("semitrailer-design").model
    crawl = equilibrium_speed(truck, grade, 0.0, 0.0)
    assert crawl == pytest.approx(independent_crawl_speed(grade), rel=1e-6)


def test_design_truck_is_on_fair_asphalt() -> None:
    """Rakha and Yu: the capacity manual's truck curves match a 120 kg/kW truck on fair asphalt
    (CONFIRMED, abstract); Fitch (1994) as used by Rakha et al. (2001) gives Cr = 1.75 for fair
    asphalt (FROM MEMORY, REFERENCES.md section 9). 1.25 is good asphalt."""
    vehicle = load_vehicle("semitrailer-design")
    assert vehicle.physical is not None and vehicle.physical.rolling_surface == 1.75
    (record,) = [r for r in vehicle.parameters if r.name == "parameters.rolling_surface"]
    assert "fair asphalt" in record.source


def _truck_curves() -> dict:  # type: ignore[type-arg]
    return yaml.safe_load((Path(__file__).parent / "data" / "green_book_2011_truck_curves.yaml").read_text())


def test_design_truck_crawl_speeds_match_the_policy_truck() -> None:
    """Green Book 2011 curves of the 120 kg/kW truck (FROM MEMORY, tests/data/green_book_2011_truck_curves.yaml):
    crawl about 35-38 mph on 3 % and 21-23 mph on 6 %. Tolerance: inside the recalled range widened by
    1 mph, the precision of the recollection. With the good-asphalt factor (Cr 1.25) and eta 0.94 the
    truck crawled at 41 and 26 mph, outside it."""
    truck = load_vehicle("semitrailer-design").model
    for grade, low, high in _truck_curves()["crawl_speeds_mph"]:
        crawl = equilibrium_speed(truck, grade / 100, 0.0, 0.0)
        assert crawl is not None
        assert low - 1 <= crawl / MPH <= high + 1, (grade, crawl / MPH)


def speed_loss_distance(grade: float, entry: float, loss: float) -> float:
    truck = load_vehicle("semitrailer-design").model
    run = accelerate(truck, VerticalProfile.constant(grade), entry, 100.0, through=4000.0)
    stations = np.linspace(0.0, 4000.0, 40_001)
    slower = run.speed_at(stations) <= entry - loss
    assert slower.any()
    return float(stations[np.argmax(slower)])


def test_design_truck_speed_loss_matches_the_policy_chart() -> None:
    """Distance to lose speed on an upgrade, entering at 70 mph, against the Green Book 2011 chart for the
    120 kg/kW truck (readings FROM MEMORY, moderate confidence: REFERENCES.md section 9).

    Tolerance 12 % on the 3, 4 and 5 % readings: chart readings to about 50 ft, and 325 ft on 5 % is read
    near the chart's origin. The 2 % reading (6 mph in 1,650 ft) cannot be matched together with the 3 %
    one by any truck of this model (it would need a truck that still gains speed on the level at 65 mph;
    scripts/calibrate_design_truck.py): it is held to 30 %, and to falling short of it, as a model of this
    kind must."""
    curves = _truck_curves()
    entry = curves["entry_speed_mph"] * MPH
    for grade, loss, published in curves["speed_loss_ft"]:
        distance = speed_loss_distance(grade / 100, entry, loss * MPH) / 0.3048
        tolerance = 0.30 if grade == 2 else 0.12
        assert distance == pytest.approx(published, rel=tolerance), (grade, distance)
        if grade == 2:
            assert distance < published


def test_design_truck_cannot_reach_90_kmh_on_5_percent() -> None:
    """Issue 2, done means: from 50 to 90 km/h on a 5 % upgrade it never gets there."""
    truck = load_vehicle("semitrailer-design").model
    run = accelerate(truck, VerticalProfile.constant(0.05), 50 / 3.6, 90 / 3.6)
    assert not run.reaches_target
    # crawl on 5 %: between the recalled 3 % and 6 % crawl speeds of the Green Book 2011 curves (FROM MEMORY)
    assert run.crawl_speed is not None and 21 * MPH < run.crawl_speed < 38 * MPH


def test_fleet_truck_climbs_better_than_design_truck() -> None:
    """Field fleets climb better than the 120 kg/kW truck (Gillespie 1986; TRR 2483, 2015; CONFIRMED)."""
    design = equilibrium_speed(load_vehicle("semitrailer-design").model, 0.04, 0.0, 0.0)
    fleet = equilibrium_speed(load_vehicle("semitrailer-fleet").model, 0.04, 0.0, 0.0)
    assert design is not None and fleet is not None and fleet > design


@pytest.mark.parametrize("vehicle_id", ["single-unit-truck", "bus", "recreational-vehicle", "semitrailer-fleet"])
def test_heavy_vehicles_rank_between_car_and_design_truck(vehicle_id: str) -> None:
    """Common practice: every heavy design vehicle needs more length than a car and less than the design truck."""
    level = VerticalProfile.constant(0.0)
    lengths = {
        v: accelerate(load_vehicle(v).model, level, 0.0, 80 / 3.6).distance
        for v in ("passenger-car", "semitrailer-design", vehicle_id)
    }
    assert all(x is not None for x in lengths.values())
    assert lengths["semitrailer-design"] > lengths[vehicle_id]  # type: ignore[operator]


def test_passenger_car_every_policy_cell(green_book_lengths: list) -> None:  # type: ignore[type-arg]
    """Every cell of the Green Book 2011 acceleration-length table (FROM MEMORY, REFERENCES.md 1).

    Tolerance: 15 % per cell and 7 % rms. The calibration on the level table and all four grade-factor
    blocks leaves 5.5 % rms and 14.9 % at worst (the 70 mph / 50 mph cell; 11.7 % at the 30 mph / stop
    cell, whose implied acceleration is out of line with its neighbours); the table itself is recalled,
    not read, so a tighter fit would be fitting memory errors.
    """
    car = load_vehicle("passenger-car").model
    errors = []
    for cell in green_book_lengths:
        run = accelerate(car, VerticalProfile.constant(0.0), cell.initial_speed, cell.merge_speed)
        assert run.distance is not None
        errors.append(run.distance / cell.length - 1)
        assert abs(errors[-1]) < 0.15, (cell, run.distance)
    assert float(np.sqrt(np.mean(np.square(errors)))) < 0.07


def test_passenger_car_70_mph_from_stop() -> None:
    """Issue 2, done means: 0 to 53 mph on level grade, close to 1620 ft (Green Book 2011, FROM MEMORY); 3 %."""
    run = accelerate(load_vehicle("passenger-car").model, VerticalProfile.constant(0.0), 0.0, 53 * 0.44704)
    assert run.distance == pytest.approx(1620 * 0.3048, rel=0.03)


def test_passenger_car_upgrade_factors(green_book_grade_factors: list) -> None:  # type: ignore[type-arg]
    """3 to 4 % upgrade factors (Green Book 2011, FROM MEMORY, about 60 % sure: REFERENCES.md 2),
    evaluated at 3.5 %. Tolerance 10 % per factor: the calibration leaves 7.1 % at worst, and the
    1954 factors have no documented derivation (TRR 2023, 2007), so a mechanics model cannot match them exactly."""
    car = load_vehicle("passenger-car").model
    for _, merge, initial, factor in green_book_grade_factors:
        level = accelerate(car, VerticalProfile.constant(0.0), initial, merge).distance
        graded = accelerate(car, VerticalProfile.constant(0.035), initial, merge).distance
        assert level is not None and graded is not None
        assert graded / level == pytest.approx(factor, rel=0.10)


def test_passenger_car_capability_caps_driver_choice() -> None:
    """The chosen acceleration never exceeds what the car can do (issue 2)."""
    car = load_vehicle("passenger-car")
    assert car.physical is not None
    speeds = np.linspace(0.0, 40.0, 81)
    for grade in (-0.06, 0.0, 0.06, 0.10):
        assert np.all(car.model.acceleration(speeds, grade) <= car.physical.acceleration(speeds, grade) + 1e-12)


def _table(name: str) -> list[list[float]]:
    data = yaml.safe_load((Path(__file__).parent / "data" / "green_book_2011_acceleration_lengths.yaml").read_text())
    return data[name]


def test_passenger_car_steep_upgrade_and_downgrade_factors() -> None:
    """The Green Book 2011 5-6 % upgrade factors and the 3-4 % and 5-6 % downgrade factors (FROM MEMORY,
    about 50 % sure; tests/data), each block at its middle grade. The driver model has separate upgrade and
    downgrade responses calibrated on all four blocks (scripts/calibrate_passenger_car.py leaves 12.8 % at
    worst); 15 % per factor, since the factors are recalled and date from 1954 with no documented derivation
    (TRR 2023, 2007). With one symmetric grade term the downgrade lengths were 14-30 % too long and the
    5-6 % upgrade factors up to 16 % off."""
    car = load_vehicle("passenger-car").model
    merge = {40: 31, 50: 39, 60: 47, 70: 53}
    initial = [18, 26, 36, 44]  # ramp design speeds 20, 30, 40, 50 mph
    level = VerticalProfile.constant(0.0)

    def factor(grade: float, highway: int, v0: float) -> float:
        flat = accelerate(car, level, v0 * MPH, merge[highway] * MPH).distance
        graded = accelerate(car, VerticalProfile.constant(grade), v0 * MPH, merge[highway] * MPH).distance
        assert flat is not None and graded is not None
        return graded / flat

    for row in _table("grade_factors_5_6"):
        for v0, published in zip(initial, row[1:], strict=False):
            assert factor(0.055, row[0], v0) == pytest.approx(published, rel=0.15), (row[0], v0)
    for block, grade in (("downgrade_factors_3_4", -0.035), ("downgrade_factors_5_6", -0.055)):
        for highway, published in _table(block):
            for v0 in initial[: {40: 2, 50: 3}.get(int(highway), 4)]:
                assert factor(grade, int(highway), v0) == pytest.approx(published, rel=0.15), (block, highway, v0)


def test_passenger_car_has_power_to_spare_on_steep_upgrades() -> None:
    """Issue 17: on a 6 % upgrade the car reached no more than 95 km/h (a grade-induced 'crawl' far below its
    power). The driver's choice never falls below a share of the level-road choice, so the car's own physical
    limit (110 kW, 1550 kg: far above 120 km/h on 6 %, force balance of Rakha et al. 2001) is the only ceiling."""
    car = load_vehicle("passenger-car")
    run = accelerate(car.model, VerticalProfile.constant(0.06), 54 / 3.6, 97 / 3.6)
    assert run.reaches_target
    level_speed = car.model.alpha / car.model.beta  # type: ignore[attr-defined]
    for grade in (0.02, 0.04, 0.06, 0.08):
        chosen = equilibrium_speed(car.model, grade, 0.0, 1.0)
        physical = equilibrium_speed(PowerLimited(car.physical), grade, 0.0, 1.0)  # type: ignore[arg-type]
        assert chosen is not None and physical is not None
        assert chosen == pytest.approx(min(level_speed, physical), rel=1e-6), grade


@pytest.mark.parametrize("vehicle_id", ["bus", "recreational-vehicle"])
def test_buses_and_rvs_do_not_out_accelerate_the_design_car(vehicle_id: str) -> None:
    """Common practice: the policy's passenger car is the quickest design vehicle. At full power the coach
    (333 m) and the RV (240 m) reached 80 km/h from a stop before the car (411 m); with their drivers'
    share of the available acceleration they take at least as long, on the level and on a 4 % upgrade."""
    car = load_vehicle("passenger-car").model
    heavy = load_vehicle(vehicle_id).model
    for grade in (0.0, 0.04):
        profile = VerticalProfile.constant(grade)
        car_run, heavy_run = accelerate(car, profile, 0.0, 80 / 3.6), accelerate(heavy, profile, 0.0, 80 / 3.6)
        assert car_run.distance is not None and heavy_run.distance is not None
        assert heavy_run.distance >= car_run.distance, grade


@pytest.mark.parametrize("vehicle_id", ["bus", "recreational-vehicle"])
def test_driver_share_of_light_and_passenger_vehicles_is_the_measured_one(vehicle_id: str) -> None:
    """Snare (2002, MS thesis, Virginia Tech; CONFIRMED): typical drivers use about 0.60 of their vehicle's
    maximum acceleration, s.d. 0.08. The share must lie within two standard deviations of it
    (the coach sits one below, for passenger comfort)."""
    model = load_vehicle(vehicle_id).model
    speeds = np.linspace(1.0, 25.0, 49)
    assert isinstance(model, PowerLimited)
    share = model.acceleration(speeds, 0.0) / model.vehicle.acceleration(speeds, 0.0)
    assert np.all(np.abs(share - 0.60) <= 2 * 0.08)


def test_coach_stays_within_passenger_comfort() -> None:
    """Hoberock (1977), J. Dyn. Syst. Meas. Control 99(2): comfortable longitudinal acceleration of public
    transport about 0.11 to 0.15 g (FROM MEMORY). The coach's chosen acceleration on the level never exceeds
    0.15 g; at full power it reached 0.19 g."""
    model = load_vehicle("bus").model
    speeds = np.linspace(0.0, 30.0, 301)
    assert float(np.max(model.acceleration(speeds, 0.0))) <= 0.15 * G


@pytest.mark.parametrize("vehicle_id", ["bus", "recreational-vehicle"])
def test_driver_share_leaves_crawl_speeds_and_speed_loss_alone(vehicle_id: str) -> None:
    """Eq. (2) of PowerLimited: the share scales only a surplus; a vehicle losing speed on an upgrade is at
    full power, so its crawl speed and its deceleration are the vehicle's own (force balance, Rakha et al. 2001)."""
    model = load_vehicle(vehicle_id).model
    assert isinstance(model, PowerLimited)
    full = PowerLimited(model.vehicle)
    for grade in (0.04, 0.06):
        assert equilibrium_speed(model, grade, 0.0, 0.0) == pytest.approx(equilibrium_speed(full, grade, 0.0, 0.0))
    speeds = np.linspace(25.0, 35.0, 11)
    np.testing.assert_array_equal(model.acceleration(speeds, 0.06), full.acceleration(speeds, 0.06))
