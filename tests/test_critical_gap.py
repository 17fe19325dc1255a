"""Critical gaps from field observations: maximum likelihood, Raff's method, and bad rows."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest

from mergecheck.critical_gap_estimation import GapObservations, maximum_likelihood, raff, raff_point


def synthetic(drivers: int, mean: float, sd: float, flow: float, seed: int) -> GapObservations:
    """Drivers with log-normal critical gaps facing random (exponential) gaps: each takes the first gap
    at least as long as their critical gap; the largest shorter gap is recorded (invented test data)."""
    rng = np.random.default_rng(seed)
    sigma2 = np.log1p((sd / mean) ** 2)
    critical = rng.lognormal(np.log(mean) - sigma2 / 2, np.sqrt(sigma2), drivers)
    accepted = np.empty(drivers)
    rejected = np.zeros(drivers)
    for i, tc in enumerate(critical):
        while True:
            gap = rng.exponential(1 / flow)
            if gap >= tc:
                accepted[i] = gap
                break
            rejected[i] = max(rejected[i], gap)
    return GapObservations(accepted, rejected, "synthetic")


def test_mle_recovers_known_parameters() -> None:
    """2,000 synthetic drivers (mean 3.5 s, sd 1.0 s): the estimates within 4 % and 12 %."""
    estimate = maximum_likelihood(synthetic(2000, 3.5, 1.0, 0.25, seed=3))
    assert estimate.mean == pytest.approx(3.5, rel=0.04)
    assert estimate.sd == pytest.approx(1.0, rel=0.12)
    assert estimate.ci_low < estimate.mean < estimate.ci_high


@pytest.mark.parametrize("seed", [3, 11])
def test_mle_equals_the_reference_librarys_censored_fit(seed: int) -> None:
    """The interval-censored log-normal fit of scipy.stats (general-purpose reference library: each driver's
    critical gap between the largest rejected and the accepted gap, left-censored at the accepted gap where
    none was rejected) gives the same log parameters to 1e-4. The package keeps its own Eq. (1) fit: it is
    several times faster on these sizes and also gives the observed information for the interval."""
    import math
    import warnings

    from scipy import stats

    observations = synthetic(300, 3.4, 0.9, 0.3, seed=seed)
    a, r = observations.accepted, observations.rejected
    data = stats.CensoredData(left=a[r <= 0], interval=np.column_stack([r[r > 0], a[r > 0]]))
    with warnings.catch_warnings():  # scipy's own optimiser probes log(0) on the way
        warnings.simplefilter("ignore", RuntimeWarning)
        shape, _, scale = stats.lognorm.fit(data, floc=0)
    estimate = maximum_likelihood(observations)
    assert estimate.log_mean == pytest.approx(math.log(scale), abs=1e-4)
    assert estimate.log_sd == pytest.approx(shape, abs=1e-4)


def test_mle_confidence_interval_covers_truth() -> None:
    """Coverage of the 95 % interval over 40 seeded samples of 150 drivers: at least 34 of 40
    (the binomial 1st percentile for a true 95 % interval is 35; one more allowed for the delta method)."""
    covered = 0
    for seed in range(40):
        estimate = maximum_likelihood(synthetic(150, 3.2, 0.8, 0.3, seed=100 + seed))
        covered += estimate.ci_low <= 3.2 <= estimate.ci_high
    assert covered >= 34


def test_raff_by_hand() -> None:
    """Accepted 3, 4, 5, 6; largest rejected 1, 2, 3.5, 4.5 s: accepted shorter than t equals rejected
    longer than t between 3.5 and 4 s; linear interpolation of the counts gives 3.75 s (by hand)."""
    accepted = np.array([3.0, 4.0, 5.0, 6.0])
    rejected = np.array([1.0, 2.0, 3.5, 4.5])
    assert raff_point(accepted, rejected) == pytest.approx(3.75)


def test_raff_close_to_mle_on_synthetic_data() -> None:
    data = synthetic(1000, 3.5, 0.8, 0.25, seed=8)
    estimate = raff(data, resamples=200)
    assert estimate.mean == pytest.approx(3.5, rel=0.12)
    assert estimate.ci_low <= estimate.mean <= estimate.ci_high and estimate.sd is None


def test_critical_gap_command(cli: Any, repo: Path) -> None:
    run = cli("critical-gap", repo / "examples" / "critical-gaps-field.csv", "--json")
    assert run.code == 0, run.stderr
    doc = run.json()
    assert doc["drivers"] == 120 and doc["method"] == "mle"
    assert doc["ci95_low_s"] < doc["critical_gap_mean_s"] < doc["ci95_high_s"]
    raff_run = cli("critical-gap", repo / "examples" / "critical-gaps-field.csv", "--method", "raff")
    assert raff_run.code == 0 and "Critical gap" in raff_run.stdout


@pytest.mark.parametrize(
    ("row", "rule"),
    [
        ("D9,2.0,3.0", "must be longer than the largest rejected gap"),
        ("D9,,1.5", "accepted_gap_s is missing"),
        ("D9,four,1.5", "not a number"),
        ("D9,-3,", "between 0 and 120"),
        ("D9,nan,", "finite"),
        ('D9,"4.0\n",1.5', "a quoted cell is not closed on its line"),
        ("D9,4.0," + "1" * 140_000, "longer than 100,000 characters"),
    ],
)
def test_bad_rows_are_named(cli: Any, tmp_path: Path, row: str, rule: str) -> None:
    good = ["D1,4.1,2.0", "D2,3.5,", "D3,5.2,3.1", "D4,3.9,1.1", "D5,4.4,2.2"]
    path = tmp_path / "gaps.csv"
    path.write_text("# comment line\ndriver,accepted_gap_s,largest_rejected_gap_s\n" + "\n".join([*good, row]) + "\n")
    run = cli("critical-gap", path)
    assert run.code == 2
    assert "row 8" in run.stderr and rule in run.stderr and str(path) in run.stderr


@pytest.mark.parametrize(
    "rows",
    [
        ["D1,4.1,", "D2,3.5,", "D3,5.2,", "D4,3.9,", "D5,4.4,"],  # all took the first gap: bounded above only
        ["D1,4.0,", "D2,3.5,2.0", "D3,5.2,", "D4,3.9,3.0", "D5,4.4,"],  # three first-gap; all agree on 3.0-3.5 s
    ],
)
def test_observations_that_cannot_give_a_spread_are_refused(cli: Any, tmp_path: Path, rows: list[str]) -> None:
    """When every driver's interval (largest rejected, accepted] shares one point, the interval-censored
    log-normal likelihood (Troutbeck 1992, Eq. 1) has no maximum: it grows as the spread shrinks to zero there.
    Both estimators refuse such data with a message instead of a singular-matrix error."""
    path = tmp_path / "gaps.csv"
    path.write_text("driver,accepted_gap_s,largest_rejected_gap_s\n" + "\n".join(rows) + "\n")
    for method in ("mle", "raff"):
        run = cli("critical-gap", path, "--method", method)
        assert run.code == 2 and "the spread cannot be estimated" in run.stderr, run.stderr


def test_missing_column(cli: Any, tmp_path: Path) -> None:
    path = tmp_path / "gaps.csv"
    path.write_text("driver,accepted\nD1,4\n")
    run = cli("critical-gap", path)
    assert run.code == 2 and "accepted_gap_s" in run.stderr and "row 1" in run.stderr


def test_gaps_command_figures(cli: Any) -> None:
    """1200 veh/h random arrivals, T = 4 s: P = e^{-4/3} = 0.26360, 316.3 such gaps per hour,
    Adams' wait (e^{4/3} - 1)/q - T = 4.381 s (by hand)."""
    run = cli("gaps", "--flow", "1200 veh/h", "--critical-gap", "4 s", "--model", "exponential", "--json")
    assert run.code == 0
    doc = run.json()
    assert doc["p_headway_at_least"] == pytest.approx(np.exp(-4 / 3), rel=1e-6)
    assert doc["acceptable_gaps_per_h"] == pytest.approx(1200 * np.exp(-4 / 3), rel=1e-6)
    assert doc["mean_wait_s"] == pytest.approx((np.exp(4 / 3) - 1) * 3 - 4, rel=1e-4)
    m3 = cli("gaps", "--flow", "1200 veh/h", "--critical-gap", "4 s", "--json").json()  # the default, as in a site
    assert m3["model"] == "m3" and m3["p_headway_at_least"] == pytest.approx(2 / 3 * np.exp(-1), rel=1e-6)  # Tanner
    unused = cli(
        "gaps", "--flow", "1200 veh/h", "--critical-gap", "4 s", "--model", "exponential", "--free-fraction", "1.2"
    )
    assert unused.code == 2 and "--free-fraction: only the m3 model takes it" in unused.stderr


@pytest.mark.parametrize(
    ("args", "field"),
    [
        (["--flow", "1200", "--critical-gap", "4 s"], "--flow"),
        (["--flow", "1200 veh/h", "--critical-gap", "4 m"], "--critical-gap"),
        (["--flow", "1200 veh/h", "--critical-gap", "4 s", "--model", "m3", "--min-headway", "4 s"], "--min-headway"),
    ],
)
def test_gaps_bad_input(cli: Any, args: list[str], field: str) -> None:
    run = cli("gaps", *args)
    assert run.code == 2 and field in run.stderr
