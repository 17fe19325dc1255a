"""Critical gaps from field observations: maximum likelihood and Raff's method.

Each observation is one driver: the gap they accepted and the largest gap
they rejected before it (none if they took the first gap offered). The
critical gap lies between the two for that driver.

Estimators (registry ``ESTIMATORS``):

``mle``
    Maximum likelihood with log-normal critical gaps (Troutbeck 1992):

    .. math:: \\ln L = \\sum_i \\ln\\left[F(a_i) - F(r_i)\\right]              (1)

    with F the log-normal distribution function, a_i the accepted and r_i
    the largest rejected gap (F(r_i) = 0 when none was rejected). Mean and
    standard deviation follow from the log parameters,
    E = exp(mu + sigma^2/2), sd = E sqrt(exp(sigma^2) - 1); the 95 %
    confidence interval of the mean is from the observed information (the
    numerical Hessian of Eq. 1) by the delta method.
``raff``
    Raff's method (Raff and Hart 1950): the critical gap is the gap t at
    which the number of accepted gaps shorter than t equals the number of
    rejected gaps longer than t (here the largest rejected gap of each
    driver). A point estimate only; its confidence interval is a seeded
    bootstrap over drivers.

References
----------
Troutbeck, R. J. (1992). Estimating the critical acceptance gap from traffic
movements. Research Report 92-5, Queensland University of Technology.
Tian, Z., et al. (1999). "Implementing the maximum likelihood methodology to
measure a driver's critical gap." Transportation Research Part A 33, 187-197.
Raff, M. S., and Hart, J. W. (1950). A Volume Warrant for Urban Stop Signs.
Eno Foundation.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .errors import InputError
from .inputs import csv_rows, read_text

FloatArray = NDArray[np.float64]
ACCEPTED, REJECTED = "accepted_gap_s", "largest_rejected_gap_s"


@dataclass(frozen=True, slots=True)
class GapObservations:
    """Accepted and largest rejected gap per driver (0 where none was rejected). [s]"""

    accepted: FloatArray
    rejected: FloatArray
    source: str


@dataclass(frozen=True, slots=True, kw_only=True)
class CriticalGapEstimate:
    method: str
    drivers: int
    mean: float
    """[s]"""
    sd: float | None
    """[s]; None where the method gives none."""
    ci_low: float
    ci_high: float
    """95 % confidence interval of the mean (MLE) or of the critical gap (Raff). [s]"""
    log_mean: float | None = None
    log_sd: float | None = None
    log_likelihood: float | None = None
    note: str = ""


def read_observations(path: str) -> GapObservations:
    """Read a CSV of gap observations; rows that cannot be used raise InputError naming the row.

    Format: a header with ``accepted_gap_s`` and ``largest_rejected_gap_s``
    (seconds; other columns, such as a driver id, are ignored), then one row
    per driver. Leave the rejected cell empty for a driver who accepted the
    first gap offered. Lines starting with ``#`` are comments. Rows are named
    by their line number in the file.
    """
    rows = csv_rows(read_text(path, "the observations"), path)
    if not rows:
        raise InputError(path, "", "no header and no rows")
    header_line, header_cells = rows[0]
    header = [cell.strip() for cell in header_cells]
    for column in (ACCEPTED, REJECTED):
        if column not in header:
            raise InputError(
                path,
                f"row {header_line}",
                f"the header needs a column named {column!r} (found: {', '.join(header)})",
            )
    ia, ir = header.index(ACCEPTED), header.index(REJECTED)
    accepted, rejected = [], []
    for line, cells in rows[1:]:
        a = _seconds(cells[ia] if ia < len(cells) else None, path, line, ACCEPTED, required=True)
        r = _seconds(cells[ir] if ir < len(cells) else None, path, line, REJECTED, required=False)
        if r >= a:
            raise InputError(
                path,
                f"row {line}",
                f"the accepted gap ({a:g} s) must be longer than the largest rejected gap ({r:g} s)",
            )
        accepted.append(a)
        rejected.append(r)
    if len(accepted) < 5:
        raise InputError(path, "", f"needs at least 5 drivers, found {len(accepted)}")
    if max(rejected) < min(accepted):
        # every driver's critical gap lies in (rejected, accepted]; when all these intervals share a point, the
        # likelihood grows without bound as the spread shrinks to zero there: no estimate exists
        raise InputError(
            path,
            ACCEPTED,
            f"every observation agrees with one critical gap for all drivers, between {max(rejected):g} and"
            f" {min(accepted):g} s, so the spread cannot be estimated; the estimate needs drivers who rejected a gap"
            " longer than another driver accepted",
        )
    return GapObservations(np.array(accepted), np.array(rejected), path)


def _seconds(text: str | None, path: str, line: int, column: str, *, required: bool) -> float:
    if text is None or not text.strip():
        if required:
            raise InputError(path, f"row {line}", f"{column} is missing")
        return 0.0
    try:
        value = float(text)
    except ValueError:
        raise InputError(path, f"row {line}", f"{column} {text!r} is not a number of seconds") from None
    if not math.isfinite(value) or value < 0 or value > 120:
        raise InputError(path, f"row {line}", f"{column} {text!r} must be a finite number of seconds between 0 and 120")
    if required and value == 0:
        raise InputError(path, f"row {line}", f"{column} must be positive")
    return value


def _log_likelihood(params: FloatArray, accepted: FloatArray, rejected: FloatArray) -> float:
    from scipy.special import ndtr  # scipy is imported by this command alone, not by every start

    mu, log_sigma = params
    sigma = math.exp(log_sigma)
    upper = ndtr((np.log(accepted) - mu) / sigma)
    lower = np.where(rejected > 0, ndtr((np.log(np.maximum(rejected, 1e-300)) - mu) / sigma), 0.0)
    return float(np.sum(np.log(np.maximum(upper - lower, 1e-300))))  # Eq. (1)


def maximum_likelihood(observations: GapObservations) -> CriticalGapEstimate:
    """Log-normal critical gaps by maximum likelihood, Eq. (1)."""
    from scipy import optimize

    a, r = observations.accepted, observations.rejected
    start = np.array([math.log(float(np.mean(np.sqrt(a * np.maximum(r, a / 2))))), math.log(0.3)])
    fit = optimize.minimize(
        lambda p: -_log_likelihood(p, a, r),
        start,
        method="Nelder-Mead",
        options={"xatol": 1e-9, "fatol": 1e-10, "maxiter": 4000},
    )
    mu, log_sigma = (float(v) for v in fit.x)
    sigma = math.exp(log_sigma)
    mean = math.exp(mu + sigma**2 / 2)
    sd = mean * math.sqrt(math.expm1(sigma**2))
    # observed information by central differences, then the delta method for the mean
    hessian = _hessian(lambda p: -_log_likelihood(p, a, r), fit.x)
    covariance = np.linalg.inv(hessian)
    gradient = np.array([mean, mean * sigma**2])  # d mean / d mu, d mean / d log sigma
    se = math.sqrt(max(float(gradient @ covariance @ gradient), 0.0))
    return CriticalGapEstimate(
        method="mle",
        drivers=int(a.size),
        mean=mean,
        sd=sd,
        ci_low=mean - 1.959964 * se,
        ci_high=mean + 1.959964 * se,
        log_mean=mu,
        log_sd=sigma,
        log_likelihood=-float(fit.fun),
        note="log-normal critical gaps, maximum likelihood (Troutbeck 1992); 95 % interval by the delta method",
    )


def _hessian(f: Callable[[FloatArray], float], x: FloatArray, step: float = 1e-4) -> FloatArray:
    """Hessian of f at x by central differences."""
    n = x.size
    h = np.zeros((n, n))
    unit = np.eye(n) * step
    for i in range(n):
        for j in range(n):
            h[i, j] = (
                f(x + unit[i] + unit[j])
                - f(x + unit[i] - unit[j])
                - f(x - unit[i] + unit[j])
                + f(x - unit[i] - unit[j])
            ) / (4 * step * step)
    return h


def raff_point(accepted: FloatArray, rejected: FloatArray) -> float:
    """Gap at which accepted gaps shorter than it equal rejected gaps longer than it. [s]

    Both counts are step functions; where they are equal over an interval the
    midpoint of that interval is taken, otherwise the crossing is
    interpolated linearly between the steps on either side.
    """
    rejected = rejected[rejected > 0]
    grid = np.unique(np.concatenate([accepted, rejected, [0.0, max(accepted.max(), rejected.max(initial=0.0)) + 1.0]]))
    shorter_accepted = np.searchsorted(np.sort(accepted), grid, side="right")
    longer_rejected = rejected.size - np.searchsorted(np.sort(rejected), grid, side="right")
    difference = shorter_accepted - longer_rejected  # rises from negative to positive
    i = int(np.argmax(difference >= 0))
    if difference[i] == 0:  # equal from grid[i] up to the next step
        return float(0.5 * (grid[i] + grid[min(i + 1, grid.size - 1)]))
    if i == 0:
        return float(grid[0])
    d0, d1 = float(difference[i - 1]), float(difference[i])
    return float(grid[i - 1] + (grid[i] - grid[i - 1]) * (-d0) / (d1 - d0))


def raff(observations: GapObservations, *, resamples: int = 2000, seed: int = 1950) -> CriticalGapEstimate:
    """Raff's critical gap with a seeded bootstrap interval."""
    a, r = observations.accepted, observations.rejected
    point = raff_point(a, r)
    rng = np.random.default_rng(seed)
    picks = rng.integers(0, a.size, size=(resamples, a.size))
    boot = np.array([raff_point(a[p], r[p]) for p in picks])
    low, high = np.percentile(boot, [2.5, 97.5])
    return CriticalGapEstimate(
        method="raff",
        drivers=int(a.size),
        mean=point,
        sd=None,
        ci_low=float(low),
        ci_high=float(high),
        note="Raff's method on each driver's accepted and largest rejected gap; 95 % interval by bootstrap over drivers",
    )


ESTIMATORS = {"mle": maximum_likelihood, "raff": raff}
