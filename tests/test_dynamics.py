"""Physics identities of the power-limited model and the standard atmosphere."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from mergecheck.acceleration import PowerLimited
from mergecheck.dynamics import PowerLimitedVehicle, air_density
from mergecheck.profile import VerticalProfile
from mergecheck.trajectory import accelerate, equilibrium_speed
from mergecheck.vehicles import load_vehicle


def design_truck() -> PowerLimitedVehicle:
    body = load_vehicle("semitrailer-design").physical
    assert body is not None
    return body


@pytest.mark.parametrize(
    ("elevation", "density"),
    # ISO 2533:1975 / U.S. Standard Atmosphere 1976 table, kg/m^3 (values from memory, 4 figures)
    [(0.0, 1.225), (1000.0, 1.112), (2000.0, 1.007), (3000.0, 0.9093)],
)
def test_air_density_matches_standard_atmosphere(elevation: float, density: float) -> None:
    assert float(air_density(elevation)) == pytest.approx(density, rel=1e-3)


@pytest.mark.parametrize("grade", [0.01, 0.02, 0.03, 0.04, 0.05, 0.06])
def test_tractive_force_equals_resistance_at_crawl_speed(grade: float) -> None:
    """At the crawl speed the tractive force equals the total resistance (definition)."""
    truck = design_truck()
    crawl = equilibrium_speed(PowerLimited(truck), grade, 0.0, 0.0)
    assert crawl is not None and crawl > 0
    force = float(truck.tractive_force(crawl))
    assert force == pytest.approx(float(truck.resistance(crawl, grade)), rel=1e-8)


def test_steeper_upgrade_gives_longer_distance_and_lower_crawl_speed() -> None:
    model = PowerLimited(design_truck())
    distances, crawls = [], []
    for grade in (0.0, 0.01, 0.02, 0.03):
        run = accelerate(model, VerticalProfile.constant(grade), 10.0, 15.0)
        assert run.distance is not None
        distances.append(run.distance)
        crawls.append(equilibrium_speed(model, grade, 0.0, 0.0))
    assert all(np.diff(distances) > 0)
    assert all(np.diff(crawls) < 0)


def test_higher_weight_to_power_gives_longer_distance() -> None:
    truck = design_truck()
    distances = []
    for kg_per_kw in (80.0, 100.0, 120.0, 150.0):
        body = dataclasses.replace(truck, power=truck.mass / (kg_per_kw / 1000.0))
        run = accelerate(PowerLimited(body), VerticalProfile.constant(0.01), 0.0, 20.0)
        assert run.distance is not None
        distances.append(run.distance)
    assert all(np.diff(distances) > 0)


def test_elevation_lowers_performance() -> None:
    """Thinner air cuts a turbocharged engine's power more than it cuts drag at climbing speeds."""
    model = PowerLimited(design_truck())
    low = accelerate(model, VerticalProfile.constant(0.02), 10.0, 17.0, elevation=0.0)
    high = accelerate(model, VerticalProfile.constant(0.02), 10.0, 17.0, elevation=2000.0)
    assert low.distance is not None and high.distance is not None
    assert high.distance > low.distance


def test_adhesion_caps_tractive_force_at_low_speed() -> None:
    truck = design_truck()
    limit = truck.adhesion * truck.driven_axle_share * truck.mass * 9.80665
    assert float(truck.tractive_force(0.1)) == pytest.approx(limit)
    assert float(truck.tractive_force(20.0)) < limit
