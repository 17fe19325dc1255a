"""Headway models of the adjacent through lane, and the wait for an acceptable gap.

Two published models, chosen by registry name:

``exponential``
    Random arrivals: headways are negative-exponential, P(h > t) = exp(-q t).
``m3``
    Cowan's M3 (Cowan 1975): a share 1 - alpha of vehicles travel bunched at
    the minimum headway Delta; the rest (free) have exponential headways
    beyond Delta:

    .. math::

        P(h > t) = \\alpha e^{-\\lambda (t - \\Delta)} \\;(t \\ge \\Delta), \\quad 1 \\;(t < \\Delta),
        \\qquad \\lambda = \\frac{\\alpha q}{1 - \\Delta q}                     (1)

    Tanner's relation alpha = 1 - Delta q is the default for the share of free
    vehicles (Tanner 1962).

References
----------
Cowan, R. J. (1975). "Useful headway models." Transportation Research 9(6), 371-375.
Tanner, J. C. (1962). "A theoretical analysis of delays at an uncontrolled intersection."
Biometrika 49(1/2), 163-170.
Adams, W. F. (1936). "Road traffic considered as a random series." J. Instn Civil Engrs 4, 121-130.
"""

from __future__ import annotations

import math
from collections.abc import Hashable
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]


class HeadwayModel(Hashable, Protocol):
    """What the gap-acceptance code needs from a headway distribution (immutable and hashable)."""

    @property
    def flow(self) -> float:
        """Flow q. [veh/s]"""
        ...

    def survival(self, t: ArrayLike) -> FloatArray:
        """P(h > t) for headways t. [-]"""
        ...

    def mean(self) -> float:
        """Mean headway. [s]"""
        ...

    def survival_integral(self, t: ArrayLike) -> FloatArray:
        """Integral of the survival function from 0 to t. [s]"""
        ...

    def survival_moment(self, t: ArrayLike) -> FloatArray:
        """Integral of r S(r) from 0 to t. [s^2]"""
        ...

    def sample(self, rng: np.random.Generator, size: int | tuple[int, ...]) -> FloatArray:
        """Random headways. [s]"""
        ...

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """Headways where the survival function is not smooth. [s]"""
        ...


def m3_survival(t: ArrayLike, alpha: ArrayLike, decay: ArrayLike, shift: ArrayLike) -> FloatArray:
    """P(h > t) of the M3 family, Eq. (1): alpha e^(-lambda (t - Delta)) from Delta on, 1 below; the parameters
    (alpha, lambda [1/s], Delta [s]) broadcast against t, so that many streams are evaluated at once (the negative
    exponential is alpha = 1, Delta = 0). [-]"""
    x, a, lam, d = (np.asarray(v, dtype=np.float64) for v in (t, alpha, decay, shift))
    return np.asarray(np.where(x < d, 1.0, a * np.exp(-lam * np.maximum(x - d, 0.0))), dtype=np.float64)


def m3_survival_integral(t: ArrayLike, alpha: ArrayLike, decay: ArrayLike, shift: ArrayLike) -> FloatArray:
    """Integral of :func:`m3_survival` from 0 to t: min(t, Delta) + alpha (1 - e^(-lambda (t - Delta))) / lambda
    beyond Delta. [s]"""
    x, a, lam, d = (np.asarray(v, dtype=np.float64) for v in (t, alpha, decay, shift))
    x = np.maximum(x, 0.0)
    return np.asarray(np.minimum(x, d) - np.expm1(-lam * np.maximum(x - d, 0.0)) * a / lam, dtype=np.float64)


@dataclass(frozen=True, slots=True)
class Exponential:
    """Negative-exponential headways (random arrivals) at flow q [veh/s].

    Examples
    --------
    At 1200 veh/h, one headway in e^{-4/3} = 26.4 % exceeds 4 s:

    >>> round(float(Exponential(1200 / 3600).survival(4.0)), 4)
    0.2636
    """

    flow: float

    def __post_init__(self) -> None:
        if not self.flow > 0:
            raise ValueError("flow must be positive")

    def survival(self, t: ArrayLike) -> FloatArray:
        x = np.asarray(t, dtype=np.float64)
        return np.asarray(np.where(x < 0, 1.0, np.exp(-self.flow * np.maximum(x, 0.0))), dtype=np.float64)

    def mean(self) -> float:
        return 1.0 / self.flow

    @property
    def m3_form(self) -> tuple[float, float, float]:
        """(alpha, lambda, Delta) = (1, q, 0): the negative exponential as a member of the M3 family."""
        return 1.0, self.flow, 0.0

    def survival_integral(self, t: ArrayLike) -> FloatArray:
        """(1 - e^{-q t}) / q."""
        x = np.maximum(np.asarray(t, dtype=np.float64), 0.0)
        return np.asarray(-np.expm1(-self.flow * x) / self.flow, dtype=np.float64)

    def survival_moment(self, t: ArrayLike) -> FloatArray:
        """(1 - e^{-q t} (1 + q t)) / q^2."""
        x = np.maximum(np.asarray(t, dtype=np.float64), 0.0)
        q = self.flow
        return np.asarray((1.0 - np.exp(-q * x) * (1.0 + q * x)) / q**2, dtype=np.float64)

    def sample(self, rng: np.random.Generator, size: int | tuple[int, ...]) -> FloatArray:
        return rng.exponential(1.0 / self.flow, size)

    @property
    def breakpoints(self) -> tuple[float, ...]:
        return (0.0,)


@dataclass(frozen=True, slots=True)
class CowanM3:
    """Cowan's M3 headways, Eq. (1).

    Attributes
    ----------
    flow : float
        q. [veh/s]
    min_headway : float
        Delta; requires Delta q < 1. [s]
    free_fraction : float
        alpha, share of free (unbunched) vehicles, 0 < alpha <= 1. [-]

    Examples
    --------
    Tanner's alpha = 1 - Delta q at 1400 veh/h and Delta = 1 s:

    >>> m3 = CowanM3.tanner(1400 / 3600, 1.0)
    >>> round(m3.free_fraction, 4), round(m3.mean(), 4)  # mean headway is 1/q = 2.5714 s
    (0.6111, 2.5714)
    """

    flow: float
    min_headway: float
    free_fraction: float

    def __post_init__(self) -> None:
        if not self.flow > 0:
            raise ValueError("flow must be positive")
        if not 0 <= self.min_headway * self.flow < 1:
            raise ValueError("the minimum headway times the flow must be below 1")
        if not 0 < self.free_fraction <= 1:
            raise ValueError("the free fraction must lie in (0, 1]")

    @classmethod
    def tanner(cls, flow: float, min_headway: float) -> CowanM3:
        """M3 with Tanner's free fraction alpha = 1 - Delta q."""
        return cls(flow, min_headway, 1.0 - min_headway * flow)

    @property
    def decay(self) -> float:
        """lambda of Eq. (1). [1/s]"""
        return self.free_fraction * self.flow / (1.0 - self.min_headway * self.flow)

    @property
    def m3_form(self) -> tuple[float, float, float]:
        """(alpha, lambda, Delta) of Eq. (1), as :func:`m3_survival` takes them."""
        return self.free_fraction, self.decay, self.min_headway

    def survival(self, t: ArrayLike) -> FloatArray:
        return m3_survival(t, *self.m3_form)  # Eq. (1)

    def mean(self) -> float:
        return self.min_headway + self.free_fraction / self.decay

    def survival_integral(self, t: ArrayLike) -> FloatArray:
        """t below Delta; Delta + alpha (1 - e^{-lambda (t - Delta)}) / lambda above."""
        return m3_survival_integral(t, *self.m3_form)

    def survival_moment(self, t: ArrayLike) -> FloatArray:
        """min(t, Delta)^2 / 2 + alpha [(Delta/lambda + 1/lambda^2) - e^{-lambda (t - Delta)} (t/lambda + 1/lambda^2)] beyond Delta."""
        x = np.maximum(np.asarray(t, dtype=np.float64), 0.0)
        d, lam = self.min_headway, self.decay
        beyond = self.free_fraction * (
            (d / lam + 1 / lam**2) - np.exp(-lam * np.maximum(x - d, 0.0)) * (np.maximum(x, d) / lam + 1 / lam**2)
        )
        return np.asarray(np.minimum(x, d) ** 2 / 2 + np.where(x > d, beyond, 0.0), dtype=np.float64)

    def sample(self, rng: np.random.Generator, size: int | tuple[int, ...]) -> FloatArray:
        free = rng.random(size) < self.free_fraction
        return np.asarray(self.min_headway + free * rng.exponential(1.0 / self.decay, size), dtype=float)

    @property
    def breakpoints(self) -> tuple[float, ...]:
        return (0.0, self.min_headway)


@dataclass(frozen=True, slots=True)
class HeadwayEntry:
    summary: str
    reference: str


HEADWAY_MODELS: dict[str, HeadwayEntry] = {
    "exponential": HeadwayEntry("negative exponential (random arrivals)", "Adams (1936); any traffic-flow text"),
    "m3": HeadwayEntry(
        "Cowan's M3: bunched at a minimum headway, free vehicles exponential beyond it",
        "Cowan (1975), Transportation Research 9(6); Tanner (1962) for alpha = 1 - Delta q",
    ),
}


def headway_model(
    name: str, flow: float, *, min_headway: float = 1.0, free_fraction: float | None = None
) -> Exponential | CowanM3:
    """Build a headway model by registry name; an unknown name lists the valid ones."""
    if name not in HEADWAY_MODELS:
        raise KeyError(f"unknown headway model {name!r}; valid models: {', '.join(sorted(HEADWAY_MODELS))}")
    if name == "exponential":
        return Exponential(flow)
    if free_fraction is None:
        return CowanM3.tanner(flow, min_headway)
    return CowanM3(flow, min_headway, free_fraction)


def adams_wait(flow: float, critical_gap: float) -> float:
    """Mean wait of a stopped driver for a gap of at least T in random traffic. [s]

    .. math:: \\bar w = \\frac{e^{qT} - 1}{q} - T

    Adams (1936). The driver may take the lag (the rest of the headway in
    progress when they arrive).

    Examples
    --------
    >>> round(adams_wait(0.2, 6.0), 3)  # (e^1.2 - 1)/0.2 - 6
    5.601
    """
    return math.expm1(flow * critical_gap) / flow - critical_gap


def mean_wait(model: HeadwayModel, critical_gap: ArrayLike) -> FloatArray:
    """Mean wait of a randomly arriving stopped driver for a headway of at least T. [s]

    For any renewal stream of headways with survival S and mean mu, the lag r
    in progress at a random arrival has density S(r)/mu; if it is shorter than
    T the driver waits it out, then rejects each headway shorter than T (on
    average (1 - p)/p of them, p = S(T)) and merges at the start of the first
    longer one:

    .. math::

        \\bar w = \\frac{1}{\\mu}\\int_0^T r S(r)\\, dr
                 + \\frac{1}{\\mu}\\int_0^T S(r)\\, dr \\cdot \\frac{E[h;\\, h < T]}{S(T)},
        \\qquad E[h;\\, h < T] = \\int_0^T S(h)\\, dh - T S(T)

    evaluated in closed form from the model's survival integrals (vectorised
    over T). For exponential headways this is Adams' formula exactly; for M3
    it is the renewal-theory equivalent (derivation as in Drew, Traffic Flow
    Theory and Control, 1968, ch. 9 (from memory)).

    Examples
    --------
    >>> round(float(mean_wait(Exponential(0.2), 6.0)), 3)  # Adams: (e^1.2 - 1)/0.2 - 6
    5.601
    """
    t = np.asarray(critical_gap, dtype=np.float64)
    mu = model.mean()
    p = model.survival(t)
    area = model.survival_integral(t)
    moment = model.survival_moment(t)
    with np.errstate(divide="ignore", invalid="ignore"):
        wait = moment / mu + (area / mu) * (area - t * p) / p
    return np.asarray(np.where(p > 0, wait, np.inf), dtype=np.float64)
