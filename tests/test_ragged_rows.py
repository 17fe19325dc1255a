"""The search of many ragged rows at once against numpy.searchsorted, row by row (general-purpose reference)."""

from __future__ import annotations

import numpy as np

from mergecheck.ragged_rows import RaggedRows


def test_count_is_searchsorted_on_each_row_to_the_last_ulp() -> None:
    """Rows of 0 to 40 values (some repeated), far from 0 so that moving a row rounds; queries on the values,
    one ulp either side of them, and outside every row."""
    rng = np.random.default_rng(5)
    rows = [np.sort(rng.uniform(-3e4, 9e5, rng.integers(0, 41))) for _ in range(80)]
    rows[3] = np.array([10.0, 10.0, 10.0])
    first = np.concatenate([[0], np.cumsum([r.size for r in rows])])
    ragged = RaggedRows.of(np.concatenate(rows), first)
    for r, values in enumerate(rows):
        exact = np.concatenate([values, np.nextafter(values, np.inf), np.nextafter(values, -np.inf)])
        queries = np.concatenate([exact, rng.uniform(-1e5, 1e6, 50), [-np.inf, np.inf]])
        got = ragged.count(queries, np.full(queries.size, r, dtype=np.intp))
        np.testing.assert_array_equal(got, np.searchsorted(values, queries, side="right"))


def test_no_values_at_all() -> None:
    ragged = RaggedRows.of(np.zeros(0), np.zeros(3, dtype=np.intp))
    assert ragged.count(np.array([1.0, -1.0]), np.array([0, 1])).tolist() == [0, 0]
