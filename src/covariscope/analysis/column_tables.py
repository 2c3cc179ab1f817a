"""Models that each add a few columns of their own to one model, fitted together.

The effect-modification check adds the exposure's product with each candidate
modifier to the recommended model; the residual-confounding check puts a spline
of each continuous confounder in place of its straight line. Each fits one
model per covariate, and the models share most of their columns. A logistic or
Poisson model fitted alone makes passes of its own over the rows; here the
models of a table take their Newton steps together
(:func:`~covariscope.analysis.glm_batch.newton_paths_many`, each model's walk
the one it takes alone): the design's columns the models use and every model's
own extra columns stand side by side in one matrix, and each read of the rows
serves every unfinished model. The extra columns of a group of models are held
at once, so a table is fitted in groups whose matrix stays within the design's
own width or `GROUP_BYTES`, whichever is larger. Linear and Cox models, and
rows left at their source, are fitted one at a time by
:func:`~covariscope.analysis.column_fit.fit_extra`, as before.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from covariscope.analysis.column_fit import ColumnFit, RowsBuffer, column_fit_of, fit_extra
from covariscope.analysis.design import Design
from covariscope.analysis.families import Fitter, family_of
from covariscope.analysis.linear import LinearSummary

__all__ = ["GROUP_BYTES", "GROUP_WIDTH", "ExtraModel", "Prepared", "fit_extra_many", "fit_model"]

#: A model's extra columns and start, or why they cannot be made.
Prepared = tuple[Sequence[np.ndarray], np.ndarray | None] | str

#: Fewest extra columns a group of models may hold at once, whatever the
#: design's width (a narrow design would otherwise fit its models one by one).
GROUP_WIDTH = 16

#: Bytes of extra columns a group may hold whatever the design's width: a
#: table of short data is fitted in one group (common practice for a work
#: buffer; no published figure).
GROUP_BYTES = 64 << 20


@dataclass(frozen=True)
class ExtraModel:
    """One model of a table: the design's columns ``cols`` (exposure first),
    then the columns ``prepare()`` returns, with the parameters to start from
    (see `~covariscope.analysis.column_fit.start_from`; None for a cold start).

    ``names`` name every column, ``cols``' first.  ``prepare`` is called when
    the model is about to be fitted, so a table holds the extra columns of
    the models it is fitting only; it returns instead the reason the model
    cannot be fitted when its columns cannot be made (the model's result is
    then that reason).
    """

    cols: tuple[int, ...]
    names: tuple[str, ...]
    prepare: Callable[[], Prepared]

    @property
    def width(self) -> int:
        """How many extra columns the model adds."""
        return len(self.names) - len(self.cols)


def fit_extra_many(
    design: Design,
    models: Sequence[ExtraModel],
    *,
    summary: LinearSummary | None = None,
    announce: Callable[[int], None] | None = None,
    consume: bool = False,
) -> list[ColumnFit | str]:
    """Each model fitted as :func:`~covariscope.analysis.column_fit.fit_extra`
    fits it, logistic and Poisson models in lockstep.

    ``announce(k)`` is called with a model's position when its fit starts
    (models fitted together: as the group's models finish); whatever it
    raises stops the table (the window's cancel).  ``summary`` and
    ``consume`` are `fit_extra`'s, for the models fitted one at a time.
    """
    if len(models) < 2 or not _together(design):
        return _one_by_one(design, models, summary, announce, consume)
    out: list[ColumnFit | str] = []
    limit = max(GROUP_WIDTH, design.values.shape[1], GROUP_BYTES // (8 * max(design.n, 1)))
    for group in _groups(models, limit):
        if announce is not None:
            announce(group.start)
        out.extend(_fit_group(design, [models[k] for k in group], group.start, announce))
    return out


def _together(design: Design) -> bool:
    return family_of(design.family).fitter is Fitter.GLM and design.rows_in_memory


def _one_by_one(
    design: Design,
    models: Sequence[ExtraModel],
    summary: LinearSummary | None,
    announce: Callable[[int], None] | None,
    consume: bool,
) -> list[ColumnFit | str]:
    rows = RowsBuffer()
    out: list[ColumnFit | str] = []
    for k, model in enumerate(models):
        if announce is not None:
            announce(k)
        out.append(fit_model(design, model, summary=summary, rows=rows, consume=consume))
    return out


def fit_model(
    design: Design,
    model: ExtraModel,
    *,
    summary: LinearSummary | None = None,
    rows: RowsBuffer | None = None,
    consume: bool = False,
) -> ColumnFit | str:
    """One model of a table fitted alone (:func:`~covariscope.analysis.column_fit.fit_extra`)."""
    prepared = model.prepare()
    if isinstance(prepared, str):
        return prepared
    extra, start = prepared
    names = list(model.names)
    return fit_extra(
        design, model.cols, extra, names, start=start, summary=summary, rows=rows, consume=consume
    )


def _groups(models: Sequence[ExtraModel], limit: int) -> list[range]:
    """Consecutive runs of models whose extra columns add up to at most ``limit``
    (a wider model makes a group of its own)."""
    groups: list[range] = []
    start, width = 0, 0
    for k, model in enumerate(models):
        if k > start and width + model.width > limit:
            groups.append(range(start, k))
            start, width = k, 0
        width += model.width
    groups.append(range(start, len(models)))
    return groups


def _fit_group(
    design: Design,
    models: Sequence[ExtraModel],
    first: int,
    announce: Callable[[int], None] | None,
) -> list[ColumnFit | str]:
    """The models of one group: one matrix [1 | shared columns | each model's
    extra columns], the rows' facts read once, the Newton walks in lockstep."""
    from covariscope.analysis.column_fit import fit_columns
    from covariscope.analysis.glm_batch import BatchModel, fits_many
    from covariscope.analysis.glm_newton import walk_inputs

    assert design.y is not None  # a GLM design has an outcome column
    y = design.y
    X, idx, starts, refused = _side_by_side(design, models)
    every = np.arange(X.shape[1], dtype=np.intp)
    _, scale, reach = walk_inputs(X, y, design.family, every, design.offset, None, None, None)
    out: list[ColumnFit | str] = _problems(design, X, models, idx, refused)
    todo = [k for k, problem in enumerate(out) if not problem]

    def progress(served: Sequence[int]) -> None:
        if announce is not None:
            announce(first + min(len(todo) - len(served), len(models) - 1))

    batch = [
        BatchModel.of(
            X,
            y,
            design.family,
            idx[k],
            offset=design.offset,
            start=starts[k],
            scale=scale[idx[k]],
            reach=reach[idx[k]],
        )
        for k in todo
    ]
    names = [["(intercept)", *models[k].names] for k in todo]
    fitted = fits_many(X, y, design.family, batch, names, offset=design.offset, on_round=progress)
    for k, done in zip(todo, fitted, strict=True):
        own = list(models[k].names)
        if done is None:  # fitted alone, which says what went wrong
            alone = np.asfortranarray(X[:, idx[k]])
            out[k] = fit_columns(design, alone, own, start=starts[k], ones_first=True)
        else:
            fit, kept = done
            out[k] = column_fit_of(fit, None if kept is None else kept.params, own)
    return out


def _problems(
    design: Design,
    X: np.ndarray,
    models: Sequence[ExtraModel],
    idx: Sequence[np.ndarray],
    refused: Sequence[str],
) -> list[ColumnFit | str]:
    """Why each model of a group cannot be fitted ("" when it can), as a model
    fitted alone would say: its columns refused, the outcome, missing values or
    a constant column (each column's range read once for all), too few rows."""
    from covariscope.analysis.fitting_common import spread_problem, too_few_rows
    from covariscope.analysis.glm import outcome_problem

    assert design.y is not None
    n = X.shape[0]
    with np.errstate(invalid="ignore"):  # inf − inf is NaN, as wanted
        spread = np.ptp(X, axis=0) if n else np.zeros(X.shape[1])
    said = outcome_problem(design.y, design.family)
    out: list[ColumnFit | str] = []
    for model, cols, reason in zip(models, idx, refused, strict=True):
        names = ["(intercept)", *model.names]
        if reason or said:
            out.append(reason or said)
        elif not n:
            out.append("The analytic sample has no rows.")
        else:
            problem = spread_problem(spread[cols], X[0, cols], names, skip=1)
            out.append(problem or (too_few_rows(n, len(cols)) if n <= len(cols) else ""))
    return out


def _side_by_side(
    design: Design, models: Sequence[ExtraModel]
) -> tuple[np.ndarray, list[np.ndarray], list[np.ndarray | None], list[str]]:
    """[1 | the design's columns any model uses | each model's extra columns]
    (Fortran order, one allocation), each model's columns of it (intercept
    first), its start, and why its columns could not be made ("" when they
    were; the model's own columns are then zero)."""
    n = design.n
    shared = sorted({c for model in models for c in model.cols})
    at = {c: 1 + i for i, c in enumerate(shared)}
    X = np.empty((n, 1 + len(shared) + sum(m.width for m in models)), order="F")
    X[:, 0] = 1.0
    for c, i in at.items():
        X[:, i] = design.values[:, c]
    j = 1 + len(shared)
    idx: list[np.ndarray] = []
    starts: list[np.ndarray | None] = []
    refused: list[str] = []
    for model in models:
        prepared = model.prepare()
        refused.append(prepared if isinstance(prepared, str) else "")
        if isinstance(prepared, str):
            prepared = ([np.zeros((n, model.width))], None)
        extra, start = prepared
        own: list[int] = []
        for e in extra:
            w = 1 if e.ndim == 1 else e.shape[1]
            X[:, j : j + w] = e.reshape(n, w)
            own.extend(range(j, j + w))
            j += w
        del extra
        idx.append(np.array([0, *(at[c] for c in model.cols), *own], dtype=np.intp))
        starts.append(start)
    return X, idx, starts, refused
