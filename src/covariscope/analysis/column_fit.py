"""One model on arbitrary columns of a design: exposure first, any extra
columns (product terms, a spline basis) after it, fitted in the design's
family through the public fitting functions.

The iterative families start from a neighbouring fit when the caller names
one (`start_from`): the effect-modification and residual-confounding checks
fit many models that differ from the recommended one by a few columns, and a
Newton loop that starts at the neighbour's optimum needs two or three passes
over the rows instead of five or six."""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from covariscope.analysis.design import Design
from covariscope.analysis.families import Fitter, family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.linear import LinearSummary

__all__ = [
    "ColumnFit",
    "RowsBuffer",
    "base_fit",
    "column_fit_of",
    "fit_columns",
    "fit_extra",
    "model_matrix",
    "near_or_base",
    "reordered",
    "start_from",
    "takes_start",
]


@dataclass(frozen=True)
class ColumnFit:
    """Coefficients (exposure first) and their covariance; residual df for a linear model.

    ``names`` are the fitted columns' names and ``params`` every fitted
    parameter (the intercept first for logistic and Poisson models), kept
    for warm starts (`start_from`); both are empty for a linear model.
    """

    coef: np.ndarray
    cov: np.ndarray
    df_resid: int | None
    names: tuple[str, ...] = ()
    params: np.ndarray | None = None


def start_from(
    near: ColumnFit,
    names: Sequence[str],
    *,
    given: Mapping[str, float] | None = None,
) -> np.ndarray | None:
    """Starting parameters for columns ``names`` from a neighbouring fit.

    A column the neighbour has keeps its coefficient; one it lacks starts at
    zero unless ``given`` names a value (so the linear predictor starts at the
    neighbour's); an intercept, when the neighbour has one, is kept (and
    shifted by ``given["(intercept)"]``).  None when the neighbour kept no
    parameters (a linear model).

    >>> near = ColumnFit(np.zeros(2), np.eye(2), None, ("x", "z"), np.array([-1.0, 0.5, 0.2]))
    >>> start_from(near, ["x", "w"]).tolist()
    [-1.0, 0.5, 0.0]
    """
    if near.params is None:
        return None
    extra = len(near.params) - len(near.names)
    known = dict(zip(near.names, near.params[extra:], strict=True))
    given = dict(given or {})
    head = [float(near.params[0]) + given.pop("(intercept)", 0.0)] if extra else []
    return np.array([*head, *(known.get(n, given.get(n, 0.0)) for n in names)], dtype=float)


def reordered(near: ColumnFit, names: Sequence[str]) -> ColumnFit | None:
    """``near`` itself when ``names`` are its columns in another order (the same
    model: its coefficients and covariance permuted, no fit), else None.

    Only an iterative fit (one that kept its parameters) is given back: a
    linear model is solved from sums and costs nothing to solve again.

    >>> near = ColumnFit(np.array([1.0, 2.0]), np.diag([0.1, 0.2]), None, ("x", "z"),
    ...                  np.array([-1.0, 1.0, 2.0]))
    >>> again = reordered(near, ["z", "x"])
    >>> again.coef.tolist(), again.params.tolist(), np.diag(again.cov).tolist()
    ([2.0, 1.0], [-1.0, 2.0, 1.0], [0.2, 0.1])
    """
    if near.params is None or sorted(near.names) != sorted(names) or len(set(names)) < len(names):
        return None
    idx = [near.names.index(name) for name in names]
    head = len(near.params) - len(near.names)
    params = np.concatenate([near.params[:head], near.params[head:][idx]])
    return ColumnFit(near.coef[idx], near.cov[np.ix_(idx, idx)], None, tuple(names), params)


class RowsBuffer:
    """Memory that the models of one table fill in turn (`model_matrix`).

    Each model's matrix of the rows is written over the one before, which
    its fit has let go of, instead of into new pages from the system for
    every model (at 300,000 rows × 20 columns, 50 MB faulted in afresh per
    model).  The table that fits the models owns it; it is not shared
    between threads.

    >>> rows = RowsBuffer()
    >>> a = rows.matrix(4, 3); b = rows.matrix(4, 2)
    >>> np.shares_memory(a, b), b.flags.f_contiguous
    (True, True)
    """

    def __init__(self) -> None:
        self._memory: np.ndarray | None = None

    def matrix(self, n: int, width: int) -> np.ndarray:
        """An uninitialised n × width Fortran-ordered array in the buffer's memory."""
        size = n * width
        if self._memory is None or self._memory.size < size:
            self._memory = None  # let the smaller one go before the larger is made
            self._memory = np.empty(size)
        return self._memory[:size].reshape((n, width), order="F")


def model_matrix(
    design: Design, cols: Sequence[int], *extra: np.ndarray, into: RowsBuffer | None = None
) -> np.ndarray:
    """[1 | the design's columns ``cols`` | ``extra`` columns], Fortran-ordered,
    in one allocation (no intermediate copies of the rows), for `fit_columns`
    with ``ones_first=True``; in ``into``'s memory when given (the matrix is
    then valid until the buffer's next matrix).

    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> d = make_design(pd.DataFrame({"x": [0, 1, 2, 3.0], "z": [1, 0, 1, 1.0], "y": [0, 1, 1, 2.0]}),
    ...                 exposure=TermSpec("x", "continuous"),
    ...                 covariates={"z": TermSpec("z", "binary")}, outcome="y", family="linear")
    >>> model_matrix(d, [0, 1], np.arange(4.0))[1].tolist()
    [1.0, 1.0, 0.0, 1.0]
    """
    n = design.n
    widths = [1 if e.ndim == 1 else e.shape[1] for e in extra]
    width = 1 + len(cols) + sum(widths)
    out = np.empty((n, width), order="F") if into is None else into.matrix(n, width)
    out[:, 0] = 1.0
    for i, c in enumerate(cols):
        out[:, 1 + i] = design.values[:, c]
    j = 1 + len(cols)
    for e, w in zip(extra, widths, strict=True):
        out[:, j : j + w] = e.reshape(n, w)
        j += w
    return out


def fit_columns(
    design: Design,
    X: np.ndarray,
    names: list[str],
    *,
    start: np.ndarray | None = None,
    ones_first: bool = False,
) -> ColumnFit | str:
    """Fit exposure-first columns ``X`` (no intercept) in the design's family.

    Returns the coefficients and their covariance (exposure first, the
    intercept left out), or the reason the model could not be fitted.
    ``start`` (see `start_from`) is where an iterative fit starts; it changes
    the number of passes over the rows, not the result.  With ``ones_first``
    X's first column is the intercept's column of ones (`model_matrix`), and
    logistic and Poisson fits read X as it is.
    """
    if ones_first:
        Xi, X = X, X[:, 1:]
    family = design.family
    fitter = family_of(family).fitter
    if fitter is Fitter.LEAST_SQUARES:
        from covariscope.analysis.linear import linear_summary, solve_ols

        assert design.y is not None
        values = np.column_stack([X, design.y])
        res = solve_ols(linear_summary(values), list(range(X.shape[1])), X.shape[1])
        if res is None or res.cov is None:
            return "the model's columns are exactly collinear"
        return ColumnFit(res.coef, res.cov, res.df_resid)
    if fitter is Fitter.COX:
        from covariscope.analysis.survival import fit_cox

        assert design.time is not None
        assert design.event is not None
        fit, params = fit_cox(
            X, design.time, design.event, column_names=names, terms=(), start=start
        )
    else:
        from covariscope.analysis.glm import fit_glm

        assert design.y is not None
        if not ones_first:
            Xi = np.column_stack([np.ones(len(X)), X])
        fit, params = fit_glm(
            Xi,
            design.y,
            family,
            column_names=["(intercept)", *names],
            terms=(),
            offset=design.offset,
            start=start,
        )
    return column_fit_of(fit, params, names)


def column_fit_of(fit: Fit, params: np.ndarray | None, names: Sequence[str]) -> ColumnFit | str:
    """The :class:`ColumnFit` of an iterative model's :class:`Fit` (columns
    ``names``, exposure first; ``params`` every fitted parameter), or the
    reason it could not be fitted."""
    if not fit.ok or fit.cov is None:
        return fit.message or "the model could not be fitted"
    coef = np.array([fit.coefficient(n) for n in names], dtype=float)
    # A fit whose runaway coefficients were left blank is no place to start from.
    kept = None if not np.all(np.isfinite(coef)) else params
    return ColumnFit(coef, fit.cov, None, tuple(names), kept)


def fit_extra(
    design: Design,
    cols: Sequence[int],
    extra: Sequence[np.ndarray],
    names: list[str],
    *,
    start: np.ndarray | None = None,
    summary: LinearSummary | None = None,
    rows: RowsBuffer | None = None,
    consume: bool = False,
) -> ColumnFit | str:
    """Fit [the design's columns ``cols`` | ``extra`` columns] (exposure first), as `fit_columns`.

    For a linear model, ``summary`` — the means and co-moments of the
    design's values, outcome last (the evidence engine's one-pass summary) —
    lends every cross-product of the design's columns, so only the extra
    columns are read: one pass that crosses them with the model's columns
    and the outcome, no copy of the model's rows.  The least-squares
    solution is the same (Golub & Van Loan 2013, §6.1: the normal equations
    need only these sums), to rounding.  Other families, or no summary,
    build the model's matrix (`model_matrix`, in ``rows`` when given) and
    fit it.  With ``consume`` the caller is done with ``extra``: a linear
    model may centre those columns where they lie instead of in a copy.
    """
    if summary is not None and not takes_start(design, summary):
        return _linear_extra(design, list(cols), extra, summary, consume=consume)
    return fit_columns(
        design, model_matrix(design, cols, *extra, into=rows), names, start=start, ones_first=True
    )


def takes_start(design: Design, summary: LinearSummary | None) -> bool:
    """Whether `fit_extra` on this design reads its ``start``: not for a linear
    model with the design's summary, solved from sums in one step."""
    return not (family_of(design.family).fitter is Fitter.LEAST_SQUARES and summary is not None)


def _linear_extra(
    design: Design,
    cols: list[int],
    extra: Sequence[np.ndarray],
    summary: LinearSummary,
    *,
    consume: bool = False,
) -> ColumnFit | str:
    from covariscope.analysis.linear import centred_products, solve_ols

    n = design.n
    E, own = _side_by_side(extra, n)
    y = design.outcome_index
    keep = [*cols, y]
    p, k = len(cols), E.shape[1]
    mean_e = E.mean(axis=0) if n else np.zeros(k)
    if own or consume:  # centred where they lie: the same numbers, no second copy
        E -= mean_e
    else:  # the caller's own columns, kept (no caller of the analysis does so)
        E = E - mean_e
    square = np.dot(E.T, E)  # np.dot, not @: fitting_common's docstring
    # one product with the design's columns as they lie (see centred_products)
    sd = np.sqrt(np.diag(summary.comoment)[keep] / max(n, 1))
    cross = (
        centred_products(design.values, summary.mean[keep], sd, E, keep)
        if k
        else np.zeros((p + 1, 0))
    )
    q = p + k + 1
    mean = np.concatenate([summary.mean[cols], mean_e, summary.mean[[y]]])
    comoment = np.empty((q, q))
    at = [*range(p), q - 1]
    comoment[np.ix_(at, at)] = summary.comoment[np.ix_(keep, keep)]
    comoment[np.ix_(at, range(p, p + k))] = cross
    comoment[np.ix_(range(p, p + k), at)] = cross.T
    comoment[p : p + k, p : p + k] = square
    res = solve_ols(LinearSummary(n, mean, comoment), list(range(p + k)), q - 1)
    if res is None or res.cov is None:
        return "the model's columns are exactly collinear"
    return ColumnFit(res.coef, res.cov, res.df_resid)


def _side_by_side(extra: Sequence[np.ndarray], n: int) -> tuple[np.ndarray, bool]:
    """The extra columns as one row-major n × k array, and whether it is a
    copy of this call's own; a single one that is already so (a spline basis)
    is used as it is, not copied."""
    if len(extra) == 1 and extra[0].ndim == 2 and extra[0].flags.c_contiguous:
        return extra[0], False
    if not extra:
        return np.empty((n, 0)), True
    return np.column_stack([e.reshape(n, -1) for e in extra]), True


def base_fit(
    design: Design, terms: Sequence[str], *, summary: LinearSummary | None = None
) -> ColumnFit | None:
    """The model exposure + ``terms`` fitted once, for the checks that extend
    it to start from (None when it cannot be fitted: they then start cold).
    A linear model with the design's ``summary`` reads no row (`fit_extra`)."""
    model_terms = [t for t in design.blocks if t in set(terms)]
    cols = [*design.exposure_index, *(j for t in model_terms for j in design.blocks[t].index)]
    names = [design.column_names[j] for j in cols]
    fitted = fit_extra(design, cols, [], names, summary=summary)
    return None if isinstance(fitted, str) else fitted


def near_or_base(
    design: Design,
    terms: Sequence[str],
    near: ColumnFit | None,
    count: int,
    on_fit: Callable[[int, int], None] | None,
    *,
    summary: LinearSummary | None = None,
) -> tuple[ColumnFit | None, Callable[[int], None], int]:
    """The fit a table of ``count`` models starts from, and how it numbers its fits.

    ``near`` when given; otherwise the base fit (`base_fit`), fitted here as
    fit 1 of the table when there is anything to fit.  Returns the start, a
    call ``announce(k)`` that passes ``(k, total)`` to ``on_fit``, and the
    number of the table's first own fit.
    """
    fitted_here = near is None and count > 0
    total = count + fitted_here

    def announce(k: int) -> None:
        if on_fit is not None:
            on_fit(k, total)

    if fitted_here:
        announce(1)
        near = base_fit(design, terms, summary=summary)
    return near, announce, 1 + fitted_here
