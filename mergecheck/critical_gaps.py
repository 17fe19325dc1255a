"""Critical gaps across drivers: the log-normal distribution, its quadrature nodes, and the defaults by
design-vehicle category (``mergecheck/data/critical-gaps.yaml``, stated assumptions with their sources).

A merging driver accepts a gap (time headway of the adjacent stream) not shorter than their critical gap
t_c, which varies across drivers; it is taken as log-normal with a given mean and standard deviation, and
expectations over drivers use Gauss-Hermite quadrature in ln t_c.
"""

from __future__ import annotations

import functools
import importlib.resources
import math
from dataclasses import dataclass

import numpy as np
import yaml
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

_NODES = 8  # Gauss-Hermite nodes over the log-normal critical gap (within 3e-5 of 24 nodes)
ACTIVE_NODES = 5
"""Gauss-Hermite nodes over the critical gap in the active model (lengths within about 1 % of 8 nodes)."""


@dataclass(frozen=True, slots=True)
class CriticalGap:
    """Critical gap across drivers: log-normal with this mean and standard deviation. [s]"""

    mean: float
    sd: float
    source: str = ""

    def __post_init__(self) -> None:
        if not (self.mean > 0 and self.sd >= 0):
            raise ValueError("critical gap mean must be positive and its standard deviation not negative")

    @property
    def log_parameters(self) -> tuple[float, float]:
        """(mu, sigma) of ln t_c: sigma^2 = ln(1 + (sd/mean)^2), mu = ln(mean) - sigma^2/2."""
        sigma2 = math.log1p((self.sd / self.mean) ** 2)
        return math.log(self.mean) - sigma2 / 2, math.sqrt(sigma2)

    def nodes(self, count: int = _NODES) -> tuple[FloatArray, FloatArray]:
        """Quadrature nodes and weights over the distribution (Gauss-Hermite in ln t_c)."""
        mu, sigma = self.log_parameters
        if sigma == 0:
            return np.array([self.mean]), np.array([1.0])
        x, w = _hermite_nodes(count)
        return np.exp(mu + sigma * x), w

    def sample(self, rng: np.random.Generator, size: int) -> FloatArray:
        mu, sigma = self.log_parameters
        return rng.lognormal(mu, sigma, size)


@functools.cache
def _hermite_nodes(count: int) -> tuple[FloatArray, FloatArray]:
    """Gauss-Hermite (probabilists') nodes and weights normalised to sum 1 (numpy.polynomial.hermite_e)."""
    x, w = np.polynomial.hermite_e.hermegauss(count)
    x.flags.writeable = False
    w = w / w.sum()
    w.flags.writeable = False
    return x, w


@dataclass(frozen=True, slots=True)
class CriticalGapDefaults:
    at_speed: CriticalGap
    from_stop: CriticalGap


@functools.cache
def _critical_gap_data() -> dict[str, dict[str, dict[str, str]]]:
    text = (importlib.resources.files("mergecheck.data") / "critical-gaps.yaml").read_text(encoding="utf-8")
    data: dict[str, dict[str, dict[str, str]]] = yaml.safe_load(text)
    return data


def default_critical_gaps(category: str) -> CriticalGapDefaults:
    """Default critical gaps for a design-vehicle category (``mergecheck/data/critical-gaps.yaml``)."""
    data = _critical_gap_data()

    def gap(entry: dict[str, str]) -> CriticalGap:
        return CriticalGap(float(entry["mean"].split()[0]), float(entry["sd"].split()[0]), entry["source"])

    return CriticalGapDefaults(gap(data["at_speed"][category]), gap(data["from_stop"][category]))
