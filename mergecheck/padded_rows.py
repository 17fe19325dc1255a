"""Many design vehicles' paths at once: rows of a (V, S) array, each padded past its own end by repeating its
last sample (segments of zero length), and the row-wise forms of numpy's interpolation and gradient on them."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


def interp_rows(x: FloatArray, xp: FloatArray, fp: FloatArray, left: float | None = None) -> FloatArray:
    """``numpy.interp(x[i], xp[i], fp[i], left)`` for every row i, in one call. (V, Q)

    Each row's xp is nondecreasing (repeats allowed, as numpy.interp reads them). The rows are laid end
    to end, each moved clear of the one before, and each x kept within its own row's range first; the
    shift costs about 1e-16 of the rows' total span in the interpolated position.
    """
    low, high = xp[:, :1], xp[:, -1:]
    shift = np.arange(xp.shape[0])[:, None] * (float(np.max(high - low, initial=0.0)) + 1.0) - low
    out = np.interp((np.clip(x, low, high) + shift).ravel(), (xp + shift).ravel(), fp.ravel()).reshape(x.shape)
    return out if left is None else np.where(x < low, left, out)


def gradient_rows(f: FloatArray, x: FloatArray) -> FloatArray:
    """``numpy.gradient(f[i], x[i])`` along every row over its distinct x (second order inside, first order at
    the ends); a repeated x takes the value at its first occurrence, a row of one distinct x gradient 0. (V, S)

    With h1, h2 the spacings either side of an inner sample (numpy's nonuniform formula):

    .. math:: f' = \\frac{-h_2}{h_1 (h_1 + h_2)} f_{-1} + \\frac{h_2 - h_1}{h_1 h_2} f_0 + \\frac{h_1}{h_2 (h_1 + h_2)} f_{+1}
    """
    rows, width = x.shape
    fresh = np.ones_like(x, dtype=bool)
    fresh[:, 1:] = x[:, 1:] != x[:, :-1]
    distinct = fresh.sum(axis=1)
    last = (distinct - 1)[:, None]
    j = np.minimum(np.arange(width)[None, :], last)  # past its distinct samples a row repeats its last
    if np.array_equal(fresh, np.arange(width)[None, :] <= last):  # repeats only in the padding: rows as they are
        xs, fs = x, f
    else:
        order = np.argsort(~fresh, axis=1, kind="stable")  # distinct samples first, in their order
        xs = np.take_along_axis(x, np.take_along_axis(order, j, axis=1), axis=1)
        fs = np.take_along_axis(f, np.take_along_axis(order, j, axis=1), axis=1)
    out = np.zeros_like(x)
    if width > 1:
        h = np.diff(xs, axis=1)
        step = np.where(h > 0, h, 1.0)
        ends = np.diff(fs, axis=1) / step  # first-order differences, 0 across a repeat
        out[:, :-1] = ends  # forward at the first sample (the inner ones are replaced below)
        h1, h2 = step[:, :-1], step[:, 1:]
        inner = (-h2 / (h1 * (h1 + h2))) * fs[:, :-2] + ((h2 - h1) / (h1 * h2)) * fs[:, 1:-1]
        inner += (h1 / (h2 * (h1 + h2))) * fs[:, 2:]
        inside = (np.arange(1, width - 1)[None, :] < last) & (h[:, :-1] > 0) & (h[:, 1:] > 0)
        out[:, 1:-1] = np.where(inside, inner, out[:, 1:-1])
        rows_ = np.arange(rows)
        back = ends[rows_, np.maximum(last[:, 0] - 1, 0)]  # backward at the last sample
        out[rows_, last[:, 0]] = np.where(distinct > 1, back, 0.0)
        out = np.take_along_axis(out, np.minimum(np.arange(width)[None, :], last), axis=1)
    index = np.cumsum(fresh, axis=1) - 1  # each sample's distinct sample
    return np.asarray(np.take_along_axis(out, index, axis=1), dtype=float)
