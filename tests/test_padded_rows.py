"""Row-wise interpolation and gradient on padded rows against numpy.interp and numpy.gradient, row by row."""

from __future__ import annotations

import numpy as np

from mergecheck.padded_rows import gradient_rows, interp_rows


def _rows(seed: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Rows of 1 to 30 samples, with a repeated station inside, padded by repeating the last sample."""
    rng = np.random.default_rng(seed)
    x = np.sort(rng.random((60, 30)) * 500.0, axis=1)
    x[:, 7] = x[:, 6]
    f = rng.normal(size=x.shape)
    f[:, 7] = f[:, 6]
    length = rng.integers(1, 31, x.shape[0])
    for i, n in enumerate(length):
        x[i, n:], f[i, n:] = x[i, n - 1], f[i, n - 1]
    return x, f, length


def test_interp_rows_is_numpy_interp_on_each_row() -> None:
    x, f, _ = _rows(1)
    q = np.random.default_rng(2).uniform(-50.0, 550.0, (x.shape[0], 45))
    ours = interp_rows(q, x, f, left=-1.0)
    for i in range(x.shape[0]):
        # atol: the rows are laid end to end in one call, which costs about 1e-16 of their total span
        np.testing.assert_allclose(ours[i], np.interp(q[i], x[i], f[i], left=-1.0), rtol=0, atol=1e-9)


def test_gradient_rows_is_numpy_gradient_over_each_rows_distinct_stations() -> None:
    x, f, length = _rows(3)
    ours = gradient_rows(f, x)
    for i, n in enumerate(length):
        xs, first = np.unique(x[i, :n], return_index=True)
        expected = np.gradient(f[i, :n][first], xs) if xs.size > 1 else np.zeros(1)
        np.testing.assert_allclose(ours[i], expected[np.searchsorted(xs, x[i])], rtol=1e-12, atol=1e-12)
