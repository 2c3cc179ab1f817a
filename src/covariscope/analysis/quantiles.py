"""Sample quantiles of a long column, found by selection within brackets.

:func:`quantiles` returns exactly what ``numpy.quantile(x, q)`` returns
(its default "linear" method, definition 7 of Hyndman & Fan 1996), to the
last bit, for less work on a long column: numpy copies the whole column and
partitions the copy around every order statistic it needs; here a sorted
strided sample of the column brackets each such order statistic, the values
inside the bracket are gathered (a few per cent of the column) and
partitioned alone, and the values below it are counted (the selection
scheme of Floyd & Rivest 1975).  A bracket that misses its order statistic,
which a sample can do on unusual orderings, is widened to the whole column,
so the answer never depends on the sample.  The interpolation between the
two order statistics around each quantile is numpy's own, step for step.

References
----------
Floyd, R. W. & Rivest, R. L. (1975). Expected time bounds for selection.
*Communications of the ACM* 18, 165–172.

Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical packages.
*The American Statistician* 50, 361–365.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

__all__ = ["quantiles"]

#: Columns shorter than this go to numpy.quantile as they are.
SELECTION_ROWS = 1 << 15
#: Values in the strided sample that sets the brackets.
_SAMPLE = 1 << 14
#: Half-width of a bracket, in sample positions (four standard deviations
#: of a sample quantile's position at the median, a 3 % slice of the column).
_MARGIN = 256


def quantiles(x: np.ndarray, q: Sequence[float]) -> np.ndarray:
    """``numpy.quantile(x, q)`` of a 1-d float column, bit for bit.

    Parameters
    ----------
    x : 1-d float array (not changed)
    q : probabilities in [0, 1]

    Examples
    --------
    >>> x = np.random.default_rng(0).normal(size=100_000)
    >>> probs = [0.25, 0.5, 0.75]
    >>> bool(np.array_equal(quantiles(x, probs), np.quantile(x, probs)))
    True
    """
    probs = np.asarray(q, dtype=float)
    n = x.size
    if n < SELECTION_ROWS or x.ndim != 1 or x.dtype != np.float64 or np.isnan(x).any():
        return np.asarray(np.quantile(x, probs), dtype=float)
    x = np.ascontiguousarray(x)  # a column of a row-major design: read once, not per pass
    # numpy's "linear" virtual index and the ranks on either side of it
    # (numpy.lib._function_base_impl._get_indexes: past the end, the last value)
    virtual = (n - 1) * probs
    previous = np.floor(virtual).astype(np.intp)
    last = virtual >= n - 1
    previous[last] = -1
    sample = np.sort(x[:: max(n // _SAMPLE, 1)])
    pairs = [_neighbours(x, n - 1 if p < 0 else int(p), sample) for p in previous]
    a = np.array([pair[0] for pair in pairs])
    b = np.array([pair[0] if p < 0 else pair[1] for pair, p in zip(pairs, previous, strict=True)])
    if np.any(a == 0) or np.any(b == 0):
        # which zero, -0.0 or 0.0, numpy's partition leaves at a rank is its own affair
        return np.asarray(np.quantile(x, probs), dtype=float)
    gamma = np.asarray(virtual - previous, dtype=virtual.dtype)
    return _lerp(a, b, gamma)


def _neighbours(x: np.ndarray, rank: int, sample: np.ndarray) -> tuple[float, float]:
    """The values at 0-based ``rank`` and ``rank + 1`` (or ``rank`` again at
    the end) of sorted ``x``, from the values in a bracket around the
    sample's estimate of them (all of ``x`` when the bracket misses them)."""
    n, s = x.size, sample.size
    upper = min(rank + 1, n - 1)
    at = rank * (s - 1) // max(n - 1, 1)
    lo = sample[max(at - _MARGIN, 0)]
    hi = sample[min(at + 1 + _MARGIN, s - 1)]
    under = x < lo
    fewer = int(np.count_nonzero(under))
    inside = x[(x <= hi) & ~under]
    if fewer <= rank and upper < fewer + inside.size:
        part = np.partition(inside, [rank - fewer, upper - fewer])
        return float(part[rank - fewer]), float(part[upper - fewer])
    part = np.partition(x, [rank, upper])
    return float(part[rank]), float(part[upper])


def _lerp(a: np.ndarray, b: np.ndarray, t: np.ndarray) -> np.ndarray:
    """numpy's interpolation between neighbouring order statistics
    (``numpy.lib._function_base_impl._lerp``), operation for operation."""
    diff_b_a = b - a
    out: np.ndarray = np.add(a, diff_b_a * t)
    np.subtract(b, diff_b_a * (1 - t), out=out, where=t >= 0.5)
    return out
