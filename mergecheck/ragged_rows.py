"""Many ascending rows of different lengths held one after another, searched all at once.

A profile's knots or a trajectory's steps differ in number from one design vehicle to the next. Held end to
end in one array (row r in ``values[first[r]:first[r + 1]]``, no padding), every row is searched in one
:func:`numpy.searchsorted` call: each row is moved clear of the one before on one ascending axis. The move
rounds, so the count is then settled against the row's own values: the result is exact.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]
IndexArray = NDArray[np.intp]


@dataclass(frozen=True, slots=True)
class RaggedRows:
    """Ascending rows of values held end to end, with the axis on which they are searched together."""

    values: FloatArray
    """(K,) every row's values in turn, ascending within a row."""
    first: IndexArray
    """(n + 1,) offset of each row's values in ``values``."""
    _key: FloatArray
    """(K,) the values on one ascending axis, row r moved by r times ``_span``."""
    _low: float
    _span: float

    @classmethod
    def of(cls, values: ArrayLike, first: ArrayLike) -> RaggedRows:
        x = np.asarray(values, dtype=np.float64)
        offsets = np.asarray(first, dtype=np.intp)
        low = float(min(x.min(initial=0.0), 0.0)) - 1.0
        span = float(max(x.max(initial=0.0), 0.0)) - low + 2.0
        rows = np.repeat(np.arange(offsets.size - 1), np.diff(offsets))
        return cls(x, offsets, (x - low) + rows * span, low, span)

    def count(self, x: FloatArray, rows: IndexArray) -> IndexArray:
        """How many of row ``rows[i]``'s values are at or before ``x[i]``, for every i (exact)."""
        start, stop = self.first[rows], self.first[rows + 1]
        if not self.values.size:
            return np.zeros(x.shape, dtype=np.intp)
        shifted = (np.clip(x, self._low, self._low + self._span - 1.0) - self._low) + rows * self._span
        count = np.clip(np.searchsorted(self._key, shifted, side="right") - start, 0, stop - start)
        while True:  # settle the last ulp of the move against the values themselves
            back = (count > 0) & (self.values[np.maximum(start + count - 1, 0)] > x)
            ahead = (start + count < stop) & (self.values[np.minimum(start + count, self.values.size - 1)] <= x)
            if not (back.any() or ahead.any()):
                return np.asarray(count, dtype=np.intp)
            count = count - back + ahead
