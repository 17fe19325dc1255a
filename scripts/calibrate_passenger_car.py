"""Calibrate the passenger-car driver model to the policy acceleration lengths.

Fits alpha, beta (level-grade linear-decreasing acceleration, Long 2000) and
kappa (share of the grade force the driver does not make up) by least squares
on log lengths:

* every cell of the level-grade table (length from the ramp's initial speed Va'
  to the merge speed Va), with the closed form
  x = [(v0 - v) + (alpha/beta) ln((alpha - beta v0)/(alpha - beta v))] / beta;
* every 3-4 % upgrade factor, as the ratio of the closed-form length with
  alpha - kappa g G (G = 3.5 %) to the level length.

The physical capability cap of the car does not bind anywhere in the table
(checked below), so the closed form is exact for the model.

Run: ``python scripts/calibrate_passenger_car.py`` (prints the fit and every
residual; paste alpha, beta and kappa into vehicle_profiles/passenger-car.yaml).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import yaml
from scipy.optimize import least_squares

from mergecheck.dynamics import STANDARD_GRAVITY
from mergecheck.units import ureg
from mergecheck.vehicles import load_vehicle

TABLE = Path(__file__).resolve().parent.parent / "mergecheck" / "data" / "policy-aashto-2011-us.yaml"
GRADE = 0.035  # midpoint of the 3 to 4 % factor block


def level_length(alpha: float, beta: float, v0: float, v: float) -> float:
    if alpha - beta * v <= 0:
        return math.inf
    return ((v0 - v) + (alpha / beta) * math.log((alpha - beta * v0) / (alpha - beta * v))) / beta


def main() -> None:
    table = yaml.safe_load(TABLE.read_text())
    speed = float(ureg.Quantity(1, table["units"]["speed"]).to("m/s").magnitude)
    length = float(ureg.Quantity(1, table["units"]["length"]).to("m").magnitude)
    merge = dict(zip(table["highway_speeds"], table["merge_speeds"], strict=True))
    initial = dict(zip(table["ramp_speeds"], table["ramp_initial_speeds"], strict=True))
    cells = [
        (V, ramp, merge[V] * speed, initial[ramp] * speed, L * length)
        for V, row in zip(table["highway_speeds"], table["lengths"], strict=True)
        for ramp, L in zip(table["ramp_speeds"], row, strict=True)
        if L is not None
    ]
    block = table["grade_factors"][0]
    factors = [
        (V, ramp, merge[V] * speed, initial[ramp] * speed, f)
        for V, row in zip(block["highway_speeds"], block["factors"], strict=True)
        for ramp, f in zip(block["ramp_speeds"], row, strict=True)
        if f is not None
    ]

    def residuals(p: np.ndarray) -> np.ndarray:
        alpha, beta, kappa = p
        level = [math.log(level_length(alpha, beta, v0, v) / L) for _, _, v, v0, L in cells]
        graded = [
            math.log(
                level_length(alpha - kappa * STANDARD_GRAVITY * GRADE, beta, v0, v)
                / level_length(alpha, beta, v0, v)
                / f
            )
            for _, _, v, v0, f in factors
        ]
        return np.array(level + graded)

    fit = least_squares(residuals, [1.2, 0.03, 0.5])
    alpha, beta, kappa = fit.x
    r = 100 * (np.exp(residuals(fit.x)) - 1)
    n = len(cells)
    print(f"alpha = {alpha:.4f} m/s^2, beta = {beta:.5f} 1/s, kappa = {kappa:.4f}, alpha/beta = {alpha / beta:.2f} m/s")
    print(f"level cells: {n}, rms {np.sqrt(np.mean(r[:n] ** 2)):.1f} %, max |error| {np.max(np.abs(r[:n])):.1f} %")
    print(
        f"grade factors: {len(factors)}, rms {np.sqrt(np.mean(r[n:] ** 2)):.1f} %, max |error| {np.max(np.abs(r[n:])):.1f} %"
    )
    for (V, ramp, *_), e in zip(cells, r[:n], strict=True):
        print(f"  level  V={V} mph  V'={ramp!s:>4}: {e:+5.1f} %")
    for (V, ramp, *_), e in zip(factors, r[n:], strict=True):
        print(f"  factor V={V} mph  V'={ramp!s:>4}: {e:+5.1f} %")

    car = load_vehicle("passenger-car")
    capability = car.physical
    assert capability is not None
    top = max(v for _, _, v, _, _ in cells)
    speeds = np.linspace(0.0, top, 200)
    chosen = alpha - beta * speeds - kappa * STANDARD_GRAVITY * 0.04
    headroom = capability.acceleration(speeds, 0.04) - chosen
    print(
        f"capability headroom on a 4 % upgrade up to {top:.1f} m/s: min {headroom.min():.2f} m/s^2 (> 0: cap never binds)"
    )


if __name__ == "__main__":
    main()
