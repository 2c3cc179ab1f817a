"""Natural cubic spline bases for continuous covariates.

The basis is patsy's natural cubic regression spline ``cr()`` (linear
beyond the boundary knots, centred so that it carries no intercept; the
basis of mgcv's "cr" smooth, Wood 2017, *Generalized Additive Models*, 2nd
ed., §5.3.1), with ``k`` knots at the quantiles Harrell recommends
(Harrell 2015, *Regression Modeling Strategies*, 2nd ed., Table 2.3, from
memory): the basis has ``k − 1`` columns, which VIF and GVIF treat as one term.

:func:`spline_basis` performs patsy's arithmetic step for step, so its basis
equals ``patsy.cr(..., constraints="center")`` to the last bit (the tests
compare them), without patsy's ``n × k`` temporaries: the unconstrained basis
is built once, a block of rows at a time, into one ``n × k`` buffer while its
column means (the centring constraint) are summed, and the constrained basis
is then written over that same buffer, block after block (each block's
product is taken before its rows are overwritten, and it only ever covers
rows already read).  It needs the memory of one column more than the basis
it returns, which lives in that buffer.
"""

from __future__ import annotations

import numpy as np

from covariscope.analysis.quantiles import quantiles

__all__ = ["DEFAULT_KNOTS", "KNOT_QUANTILES", "knot_positions", "spline_basis"]
#: Knot quantiles by number of knots (Harrell 2015, Table 2.3).
KNOT_QUANTILES: dict[int, tuple[float, ...]] = {
    3: (0.10, 0.50, 0.90),
    4: (0.05, 0.35, 0.65, 0.95),
    5: (0.05, 0.275, 0.50, 0.725, 0.95),
    6: (0.05, 0.23, 0.41, 0.59, 0.77, 0.95),
    7: (0.025, 0.1833, 0.3417, 0.50, 0.6583, 0.8167, 0.975),
}

#: Knots of the spline the residual-confounding check tries when the project names none.
DEFAULT_KNOTS = 4
#: Rows of the unconstrained basis built at a time.
_BLOCK_ROWS = 1 << 16


def knot_positions(x: np.ndarray, knots: int) -> np.ndarray:
    """The ``knots`` knot positions of ``x`` at :data:`KNOT_QUANTILES`.

    >>> knot_positions(np.arange(101.0), 3).tolist()
    [10.0, 50.0, 90.0]
    """
    if knots not in KNOT_QUANTILES:
        raise ValueError(f"a spline takes 3 to 7 knots, not {knots}")
    return quantiles(np.asarray(x), KNOT_QUANTILES[knots])  # numpy.quantile's numbers


def spline_basis(x: np.ndarray, knots: int) -> np.ndarray:
    """The natural cubic spline basis of ``x`` (n × (knots − 1)): patsy's ``cr()``, centred.

    The value of patsy's ``cr(x, knots=inner, lower_bound=lo, upper_bound=hi,
    constraints="center")`` with the knots at :data:`KNOT_QUANTILES` (Wood
    2017, §5.3.1; the centring constraint absorbed by a QR decomposition, as
    patsy does).

    >>> x = np.linspace(0, 1, 50)
    >>> spline_basis(x, 4).shape
    (50, 3)
    """
    from scipy import linalg  # on demand, as patsy imports it

    values = np.asarray(x, dtype=float)
    where = np.unique(knot_positions(values, knots))
    if len(where) < knots:
        raise ValueError("too few distinct values for the spline's knots")
    free = _FreeBasis(values, where)
    # patsy's centring constraint: the mean of each unconstrained column
    constraint = free.column_means().reshape((1, knots))
    q, _ = linalg.qr(np.transpose(constraint))
    return free.times(q[:, 1:])


class _FreeBasis:
    """The unconstrained basis (n × k), built a block of rows at a time with
    the operations of patsy's ``_get_free_crs_dmatrix`` in the same order (a
    value's row depends on that value alone) into one n × k buffer, which
    the constrained basis then overwrites (`times`)."""

    def __init__(self, x: np.ndarray, knots: np.ndarray) -> None:
        self.x = x
        self.knots = knots
        # patsy reads rows j and j + 1 of the identity and of F; their column c
        # is gathered from a contiguous copy of F's column, and the identity's
        # entries (exactly 1.0 or 0.0) are j == c: the same numbers, faster
        self.second = [np.ascontiguousarray(col) for col in _natural_second_derivatives(knots).T]
        self.memory = np.empty(x.size * knots.size)
        self.built = False

    def rows(self, at: int) -> np.ndarray:
        """Rows ``at`` onwards, one block of them (row-major), built into the buffer."""
        below, above, curve_below, curve_above, j = _base_functions(
            self.x[at : at + _BLOCK_ROWS], self.knots
        )
        j1 = j + 1
        k = self.knots.size
        block = self.memory[at * k : (at + len(j)) * k].reshape((len(j), k))
        for c, second in enumerate(self.second):
            block[:, c] = (
                below * (j == c)
                + above * (j1 == c)
                + curve_below * second.take(j)
                + curve_above * second.take(j1)
            )
        return block

    def column_means(self) -> np.ndarray:
        """``free.mean(axis=0)`` to the last bit, building the basis on the way:
        numpy adds a row-major array's rows one after another down axis 0, so
        the running sum is carried into each block as its first row."""
        total = np.add.reduce(self.rows(0), axis=0)
        for at in range(_BLOCK_ROWS, self.x.size, _BLOCK_ROWS):
            total = np.add.reduce(np.vstack((total, self.rows(at))), axis=0)
        self.built = True
        return np.asarray(total / self.x.size)

    def times(self, right: np.ndarray) -> np.ndarray:
        """``free @ right`` (n × m, row-major, m ≤ k), a block of rows at a
        time, written over the buffer: block ``[a, b)``'s product fills
        entries ``[a·m, b·m)``, which hold only rows before ``b`` of the
        unconstrained basis, all of them read by then.  The buffer is
        spent: the basis is built once."""
        assert self.built, "column_means builds the basis first"
        n, k, m = self.x.size, self.knots.size, right.shape[1]
        for at in range(0, n, _BLOCK_ROWS):
            stop = min(at + _BLOCK_ROWS, n)
            block = self.memory[at * k : stop * k].reshape((stop - at, k))
            self.memory[at * m : stop * m] = np.dot(block, right).ravel()
        self.built = False
        return self.memory[: n * m].reshape((n, m))


def _base_functions(
    x: np.ndarray, knots: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Wood's base functions a⁻, a⁺, c⁻, c⁺ of each value and its knot interval
    (Wood 2017, §5.3.1; beyond the boundary knots the cubic parts vanish, as in
    mgcv's ``crspl``)."""
    j = np.searchsorted(knots, x) - 1
    j[j == -1] = 0
    j[j == knots.size - 1] = knots.size - 2
    h = knots[1:] - knots[:-1]
    hj = h[j]
    right = knots[j + 1] - x
    left = x - knots[j]
    cubic_right = right * right * right / (6.0 * hj)
    cubic_right[x > np.max(knots)] = 0.0
    cubic_left = left * left * left / (6.0 * hj)
    cubic_left[x < np.min(knots)] = 0.0
    return (
        right / hj,
        left / hj,
        cubic_right - hj * right / 6.0,
        cubic_left - hj * left / 6.0,
        j,
    )


def _natural_second_derivatives(knots: np.ndarray) -> np.ndarray:
    """The matrix mapping a natural cubic spline's values at the knots to its
    second derivatives there (zero at the boundary knots; Wood 2017, §5.3.1)."""
    from scipy import linalg

    h = knots[1:] - knots[:-1]
    diag = (h[:-1] + h[1:]) / 3.0
    off = h[1:-1] / 6.0
    banded = np.array([np.r_[0.0, off], diag, np.r_[off, 0.0]])
    d = np.zeros((knots.size - 2, knots.size))
    for i in range(knots.size - 2):
        d[i, i] = 1.0 / h[i]
        d[i, i + 2] = 1.0 / h[i + 1]
        d[i, i + 1] = -d[i, i] - d[i, i + 2]
    inner = linalg.solve_banded((1, 1), banded, d)
    return np.vstack([np.zeros(knots.size), inner, np.zeros(knots.size)])
