"""Calibrate the design truck's driveline efficiency to the policy's 120 kg/kW truck curves.

The design truck (vehicle_profiles/semitrailer-design.yaml) keeps the published
parameters of Rakha et al. (2001) (mass, drag, frontal area, radial-tyre rolling
constants) and the fair-asphalt pavement factor Cr = 1.75 under which Rakha and
Yu found the capacity manual's truck curves reproduced. One parameter is left to
fit: the driveline efficiency eta, which also stands for what the policy's
"200 lb/hp" leaves open (gross or net power, accessory loads). It is fitted by
least squares on log errors against the crawl speeds (midpoints of the recalled
ranges) and the speed-loss distances read off the policy chart
(tests/data/green_book_2011_truck_curves.yaml, from memory), and kept within the
textbook range 0.85 to 0.94.

The 2 % reading (6 mph lost in 1,650 ft) is not used in the fit: no member of this
model family matches it together with the 3 % reading (10 mph lost in 1,400 ft),
since a longer distance for a smaller loss on a gentler grade needs a truck that
gains speed on the level at 65 mph. The script prints its error all the same.

Run: ``python scripts/calibrate_design_truck.py`` (prints the fit and every
residual; paste eta into vehicle_profiles/semitrailer-design.yaml).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import yaml
from scipy.optimize import minimize_scalar

from mergecheck.acceleration import PowerLimited
from mergecheck.profile import VerticalProfile
from mergecheck.trajectory import accelerate, equilibrium_speed
from mergecheck.vehicles import load_vehicle

MPH, FT = 0.44704, 0.3048
DATA = Path(__file__).resolve().parent.parent / "tests" / "data" / "green_book_2011_truck_curves.yaml"


def speed_loss_distance(model: PowerLimited, grade: float, entry: float, loss: float) -> float:
    """Distance on a constant upgrade until the speed has fallen by ``loss``. [m]"""
    run = accelerate(model, VerticalProfile.constant(grade), entry, 100.0, through=5000.0)
    stations = np.linspace(0.0, 5000.0, 50_001)
    slower = run.speed_at(stations) <= entry - loss
    return float(stations[np.argmax(slower)]) if slower.any() else float("inf")


def residuals(model: PowerLimited, table: dict) -> list[tuple[str, float, float]]:  # type: ignore[type-arg]
    """(label, computed, published) for every reading, in mph and ft."""
    rows = []
    for grade, low, high in table["crawl_speeds_mph"]:
        crawl = equilibrium_speed(model, grade / 100, 0.0, 1.0)
        rows.append((f"crawl {grade} %", (crawl or 0.0) / MPH, 0.5 * (low + high)))
    entry = table["entry_speed_mph"] * MPH
    for grade, loss, distance in table["speed_loss_ft"]:
        x = speed_loss_distance(model, grade / 100, entry, loss * MPH)
        rows.append((f"{loss} mph lost on {grade} %", x / FT, float(distance)))
    return rows


def main() -> None:
    table = yaml.safe_load(DATA.read_text())
    base = load_vehicle("semitrailer-design").model
    assert isinstance(base, PowerLimited)

    def model(eta: float) -> PowerLimited:
        return dataclasses.replace(base, vehicle=dataclasses.replace(base.vehicle, efficiency=eta))

    def cost(eta: float) -> float:
        used = [r for r in residuals(model(eta), table) if r[0] != "6 mph lost on 2 %"]
        return float(np.mean([np.log(c / p) ** 2 for _, c, p in used]))

    fit = minimize_scalar(cost, bounds=(0.85, 0.94), method="bounded", options={"xatol": 1e-4})
    print(f"efficiency = {fit.x:.3f} (rms log error {np.sqrt(fit.fun):.3f}, excluding the 2 % reading)")
    for label, computed, published in residuals(model(round(fit.x, 2)), table):
        print(f"  {label:>20}: {computed:8.1f} against {published:8.1f} ({100 * (computed / published - 1):+.1f} %)")


if __name__ == "__main__":
    main()
