"""Calibrate the passenger-car driver model to the policy acceleration lengths and grade factors.

Fits the five parameters of :class:`mergecheck.acceleration.LinearDecreasing`
by least squares on log lengths and log length ratios:

* every cell of the level-grade table (length from the ramp's initial speed Va'
  to the merge speed Va);
* every grade factor of all four blocks of the table (3-4 % and 5-6 % upgrades,
  3-4 % and 5-6 % downgrades), each block taken at its middle grade (3.5 % or
  5.5 %), as the ratio of the length on the grade to the length on the level,
  wherever the level table has the cell.

Lengths come from the closed form of the linear-decreasing model,
x = [(v0 - v) + (A/B) ln((A - B v0)/(A - B v))] / B for a = A - B v, applied
piecewise: on an upgrade the chosen acceleration is alpha - beta v - kappa_up g G
until it falls to the floor phi (alpha - beta v), and that floor beyond. The
physical capability cap of the car does not bind anywhere in the table (checked
below), so the closed form is exact for the model.

Run: ``python scripts/calibrate_passenger_car.py`` (prints the fit and every
residual; paste the parameters into vehicle_profiles/passenger-car.yaml).
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


def linear_length(a: float, b: float, v0: float, v: float) -> float:
    """Distance to go from v0 to v at acceleration a - b*speed (Long 2000 closed form). [m]"""
    if a - b * v <= 0:
        return math.inf
    if b == 0:
        return (v * v - v0 * v0) / (2 * a)
    return ((v0 - v) + (a / b) * math.log((a - b * v0) / (a - b * v))) / b


def length(p: np.ndarray, grade: float, v0: float, v: float) -> float:
    """Length of the model with parameters p on a constant grade. [m]"""
    alpha, beta, kappa_up, floor, kappa_down = p
    if grade <= 0:
        return linear_length(alpha + kappa_down * STANDARD_GRAVITY * -grade, beta, v0, v)
    c = kappa_up * STANDARD_GRAVITY * grade
    switch = (alpha - c / (1 - floor)) / beta  # speed where alpha - beta v - c falls to floor (alpha - beta v)
    if switch >= v:
        return linear_length(alpha - c, beta, v0, v)
    if switch <= v0:
        return linear_length(floor * alpha, floor * beta, v0, v)
    return linear_length(alpha - c, beta, v0, switch) + linear_length(floor * alpha, floor * beta, switch, v)


def main() -> None:
    table = yaml.safe_load(TABLE.read_text())
    speed = float(ureg.Quantity(1, table["units"]["speed"]).to("m/s").magnitude)
    metre = float(ureg.Quantity(1, table["units"]["length"]).to("m").magnitude)
    merge = dict(zip(table["highway_speeds"], table["merge_speeds"], strict=True))
    initial = dict(zip(table["ramp_speeds"], table["ramp_initial_speeds"], strict=True))
    level = {
        (V, ramp): L * metre
        for V, row in zip(table["highway_speeds"], table["lengths"], strict=True)
        for ramp, L in zip(table["ramp_speeds"], row, strict=True)
        if L is not None
    }
    factors = [
        (0.5 * (block["min_grade"] + block["max_grade"]), V, ramp, f)
        for block in table["grade_factors"]
        for V, row in zip(block["highway_speeds"], block["factors"], strict=True)
        for ramp, f in zip(block["ramp_speeds"], row, strict=True)
        if f is not None and (V, ramp) in level
    ]

    def residuals(p: np.ndarray) -> np.ndarray:
        flat = [math.log(length(p, 0.0, initial[r] * speed, merge[V] * speed) / L) for (V, r), L in level.items()]
        graded = [
            math.log(
                length(p, g, initial[r] * speed, merge[V] * speed)
                / length(p, 0.0, initial[r] * speed, merge[V] * speed)
                / f
            )
            for g, V, r, f in factors
        ]
        return np.array(flat + graded)

    fit = least_squares(
        residuals, [1.05, 0.028, 0.5, 0.4, 0.5], bounds=([0.1, 0.0, 0.0, 0.05, 0.0], [5, 0.5, 1.5, 0.95, 1.5])
    )
    alpha, beta, kappa_up, floor, kappa_down = fit.x
    r = 100 * (np.exp(residuals(fit.x)) - 1)
    n = len(level)
    print(
        f"alpha = {alpha:.4f} m/s^2, beta = {beta:.5f} 1/s, upgrade_response = {kappa_up:.4f},"
        f" upgrade_floor = {floor:.4f}, downgrade_response = {kappa_down:.4f}, alpha/beta = {alpha / beta:.2f} m/s"
    )
    print(f"level cells: {n}, rms {np.sqrt(np.mean(r[:n] ** 2)):.1f} %, max |error| {np.max(np.abs(r[:n])):.1f} %")
    for grade in sorted({g for g, *_ in factors}):
        block = np.array([e for (g, *_), e in zip(factors, r[n:], strict=True) if g == grade])
        print(
            f"grade factors at {100 * grade:+.1f} %: {block.size}, rms {np.sqrt(np.mean(block**2)):.1f} %, max |error| {np.max(np.abs(block)):.1f} %"
        )
    for ((V, ramp), _), e in zip(level.items(), r[:n], strict=True):
        print(f"  level  V={V} mph  V'={ramp!s:>4}: {e:+5.1f} %")
    for (g, V, ramp, _), e in zip(factors, r[n:], strict=True):
        print(f"  factor {100 * g:+.1f} % V={V} mph  V'={ramp!s:>4}: {e:+5.1f} %")

    car = load_vehicle("passenger-car")
    capability = car.physical
    assert capability is not None
    top = max(merge.values()) * speed
    speeds = np.linspace(0.0, top, 200)
    for grade in (0.055, -0.055):
        chosen = np.array([np.nan])
        if grade > 0:
            chosen = np.maximum(
                alpha - beta * speeds - kappa_up * STANDARD_GRAVITY * grade, floor * (alpha - beta * speeds)
            )
        else:
            chosen = alpha - beta * speeds + kappa_down * STANDARD_GRAVITY * -grade
        headroom = capability.acceleration(speeds, grade) - chosen
        print(
            f"capability headroom on {100 * grade:+.1f} % up to {top:.1f} m/s: min {headroom.min():.2f} m/s^2 (> 0: cap never binds)"
        )


if __name__ == "__main__":
    main()
