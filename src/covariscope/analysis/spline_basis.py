"""Natural cubic spline bases for continuous covariates.

The basis is patsy's natural cubic regression spline ``cr()`` (linear
beyond the boundary knots, centred so that it carries no intercept; the
basis of mgcv's "cr" smooth, Wood 2017, *Generalized Additive Models*, 2nd
ed., §5.3.1), with ``k`` knots at the quantiles Harrell recommends
(Harrell 2015, *Regression Modeling Strategies*, 2nd ed., Table 2.3, from
memory): the basis has ``k − 1`` columns, which VIF and GVIF treat as one term.
"""

from __future__ import annotations

import numpy as np

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


def knot_positions(x: np.ndarray, knots: int) -> np.ndarray:
    """The ``knots`` knot positions of ``x`` at :data:`KNOT_QUANTILES`.

    >>> knot_positions(np.arange(101.0), 3).tolist()
    [10.0, 50.0, 90.0]
    """
    if knots not in KNOT_QUANTILES:
        raise ValueError(f"a spline takes 3 to 7 knots, not {knots}")
    return np.asarray(np.quantile(x, KNOT_QUANTILES[knots]), dtype=float)


def spline_basis(x: np.ndarray, knots: int) -> np.ndarray:
    """The natural cubic spline basis of ``x`` (n × (knots − 1)), built by patsy's ``cr()``.

    >>> x = np.linspace(0, 1, 50)
    >>> spline_basis(x, 4).shape
    (50, 3)
    """
    where = knot_positions(x, knots)
    if len(np.unique(where)) < knots:
        raise ValueError("too few distinct values for the spline's knots")
    import patsy  # on demand: a second to import, paid only when a spline is built

    # patsy's cr() called as a function: the same basis as the formula
    # "cr(x, ...) - 1" in dmatrix, without the formula machinery (a third of the time;
    # benchmarks/bench_spline_basis.py)
    basis = patsy.cr(
        np.asarray(x, dtype=float),
        knots=where[1:-1],
        lower_bound=where[0],
        upper_bound=where[-1],
        constraints="center",
    )
    return np.ascontiguousarray(np.asarray(basis, dtype=float))
