"""Several logistic or Poisson models fitted in lockstep, their passes sharing each read of the rows.

The evidence table fits families of nearly equal models: every "crude + C"
model, every "full − C" model.  Fitted one after another, each Newton step of
each model is a pass of its own over the rows, and the information
X'diag(w)X of a model of twenty-odd columns is a product whose narrow shape
keeps the processor far below its speed.  Here each model's Newton walk
(:func:`~covariscope.analysis.glm_newton.newton_walk`: the same start, steps,
step halving and stopping rule as when it is fitted alone) asks for its next
pass, and one read of the rows answers every model's request:

* the linear predictors of all models are one product X B (B: one column of
  coefficients per model, zero for the columns a model lacks);
* their scores are one product X'R (R: one column of residuals per model);
* their informations are one product K'W, where row i of K holds the
  products x_ij x_ik (j ≤ k) of the column pairs the models use and W holds
  each model's weights; the sandwich's middle terms are the same product
  with the squared residuals.  K is formed block by block, once for all
  models, and never kept.

The sums equal :func:`~covariscope.analysis.passes.glm_pass`'s up to the order
of the additions, so each model ends where it ends when fitted alone.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import GlmLink, Scratch, family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.glm import OutcomeFacts, glm_fit_from_path
from covariscope.analysis.glm_newton import GlmPath, PassRequest, Walk, newton_walk, walk_inputs
from covariscope.analysis.passes import GlmPass
from covariscope.analysis.row_threads import in_ranges

__all__ = ["BatchModel", "batch_pass", "fits_many", "newton_paths_many"]

Array = npt.NDArray[np.float64]
Index = npt.NDArray[np.intp]

#: Cells of the block of column-pair products (pairs × rows) formed at a time:
#: large enough that its product with the weights runs at the processor's
#: speed, small enough to stay near the cache (measured best between 2^19
#: and 2^20 on the benchmark of benchmarks/bench_iterative.py).
PAIR_CELLS = 1 << 20

#: Rows per block when no information is asked for (scores only).
SCORE_ROWS = 16384


@dataclass(frozen=True)
class BatchModel:
    """One model of a lockstep fit: its columns of X (in its parameters'
    order) and what its Newton walk starts from."""

    cols: Index
    start: Array
    scale: Array
    reach: Array

    @classmethod
    def of(
        cls,
        X: Array,
        y: Array,
        family: str,
        cols: Index,
        *,
        offset: Array | None,
        start: Array | None,
        scale: Array,
        reach: Array,
    ) -> BatchModel:
        """The model of columns ``cols`` of X (each column's ``scale`` and
        ``reach`` given), starting at ``start``; a start of the wrong length
        is ignored rather than trusted (the walk then starts cold)."""
        if start is not None and start.shape != (len(cols),):
            start = None
        b, sd, far = walk_inputs(X, y, family, cols, offset, start, scale, reach)
        return cls(cols, b, sd, far)


def _pairs_of(cols: Index) -> tuple[Index, Index]:
    """The column pairs (j ≤ k) of a model's p × p matrix, entry by entry of
    its upper triangle (row-major): the lower and the higher column of each."""
    c = np.asarray(cols, dtype=np.intp)
    a, b = np.triu_indices(len(c))
    return np.minimum(c[a], c[b]), np.maximum(c[a], c[b])


@dataclass(frozen=True)
class _Pairs:
    """The column pairs (j ≤ k) some model's information needs, grouped by j.

    ``position[j, k]`` is the pair's row among the pair products, −1 for a
    pair not among them.
    """

    groups: tuple[tuple[int, slice | Index, int], ...]
    position: npt.NDArray[np.intp]
    size: int

    @classmethod
    def of(cls, lo: Index, hi: Index, q: int) -> _Pairs:
        """The pairs (lo[i], hi[i]) (each once, sorted) of columns 0 .. q − 1."""
        keys = np.unique(lo * q + hi)
        position = np.full((q, q), -1, dtype=np.intp)
        position[keys // q, keys % q] = np.arange(len(keys))
        groups: list[tuple[int, slice | Index, int]] = []
        firsts, starts = np.unique(keys // q, return_index=True)
        ends = [*starts[1:].tolist(), len(keys)][: len(starts)]
        for j, a, b in zip(firsts.tolist(), starts.tolist(), ends, strict=True):
            ks = keys[a:b] % q
            contiguous = int(ks[-1]) - int(ks[0]) + 1 == len(ks)
            picks: slice | Index = slice(int(ks[0]), int(ks[-1]) + 1) if contiguous else ks
            groups.append((int(j), picks, a))
        return cls(tuple(groups), position, len(keys))

    def fill(self, rows_t: Array, out: Array) -> None:
        """Row p of ``out`` = column j times column k of the block (``rows_t`` = block transposed)."""
        for j, picks, offset in self.groups:
            k = rows_t[picks]
            np.multiply(rows_t[j], k, out=out[offset : offset + len(k)])


@dataclass
class _Sums:
    """What a round sums over a range of rows, for every model asked."""

    dev: Array
    score: Array
    low: Array
    high: Array
    sums: Array
    own: dict[tuple[int, bool], Array]

    def add(self, other: _Sums) -> None:
        """Add another range's sums to these."""
        self.dev += other.dev
        self.score += other.score
        np.minimum(self.low, other.low, out=self.low)
        np.maximum(self.high, other.high, out=self.high)
        self.sums += other.sums
        for a, value in other.own.items():
            self.own[a] += value


@dataclass(frozen=True)
class _Round:
    """One round's requests, summed over any range of rows."""

    X: Array
    y: Array
    link: GlmLink
    B: Array
    offset: Array | None
    pairs: _Pairs
    asked: list[tuple[int, bool]]
    own_work: list[tuple[int, tuple[int, bool], Index]]
    cols: list[Index]

    def rows(self, start: int, stop: int) -> _Sums:
        """The sums over rows start .. stop − 1, block by block, in work arrays of its own."""
        X, B, pairs, asked = self.X, self.B, self.pairs, self.asked
        q, m = B.shape
        out = _Sums(
            np.zeros(m),
            np.zeros((q, m)),
            np.full(m, np.inf),
            np.full(m, -np.inf),
            np.zeros((pairs.size, len(asked))),
            {a: np.zeros((q, len(picks))) for _, a, picks in self.own_work},
        )
        own_work = [
            (j, a, _runs(picks), _runs(self.cols[a[0]]))
            for j, a, picks in self.own_work
            if len(picks)
        ]
        rows = SCORE_ROWS if not pairs.size else max(256, min(SCORE_ROWS, PAIR_CELLS // pairs.size))
        rows = max(1, min(rows, stop - start))
        scratch = Scratch()
        products = np.empty((pairs.size, rows))
        weights = np.empty((rows, len(asked)))
        eta_rows = np.empty((rows, m))
        for s in range(start, stop, rows):
            e = min(s + rows, stop)
            block = X[s:e]
            eta = eta_rows[: e - s]
            np.dot(block, B, out=eta)
            if self.offset is not None:
                eta += self.offset[s:e, None]
            d, resid, w, lo, hi = self.link.columns_sums(self.y[s:e], eta, scratch)
            out.dev += d
            np.minimum(out.low, lo, out=out.low)
            np.maximum(out.high, hi, out=out.high)
            out.score += np.dot(block.T, resid)
            wk = weights[: e - s]
            for j, (r, is_meat) in enumerate(asked):
                if is_meat:
                    np.square(resid[:, r], out=wk[:, j])
                else:
                    wk[:, j] = w[:, r]
            if pairs.size:
                k = products[:, : e - s]
                pairs.fill(block.T, k)
                out.sums += np.dot(k, wk)
            for j, a, picks, cols in own_work:
                weighted = _columns(block, picks) * wk[:, j, None]
                # only the model's own columns' rows of X'(X_O ⊙ w), a run of
                # adjacent columns at a time (views of the block, no copy)
                for run in cols:
                    out.own[a][run] += np.dot(block[:, run].T, weighted)
        return out


def _runs(cols: Index) -> list[slice]:
    """Sorted ``cols`` as runs of adjacent columns.

    >>> _runs(np.array([4, 0, 1, 2, 7]))
    [slice(0, 3, None), slice(4, 5, None), slice(7, 8, None)]
    """
    c = np.sort(np.asarray(cols))
    breaks = np.flatnonzero(np.diff(c) != 1) + 1
    return [slice(int(r[0]), int(r[-1]) + 1) for r in np.split(c, breaks) if len(r)]


def _columns(block: Array, runs: list[slice]) -> Array:
    """The block's columns in ``runs`` (a view when there is one run)."""
    if len(runs) == 1:
        return block[:, runs[0]]
    return np.concatenate([block[:, run] for run in runs], axis=1)


def batch_pass(
    X: Array,
    y: Array,
    link: GlmLink,
    requests: Sequence[tuple[Index, PassRequest]],
    *,
    offset: Array | None = None,
    ylogy: float = 0.0,
) -> list[GlmPass]:
    """The sums of :func:`~covariscope.analysis.passes.glm_pass` for several
    models (their columns of X and requests) in one read of the rows.

    >>> import numpy as np
    >>> from covariscope.analysis.families import family_of
    >>> from covariscope.analysis.glm_newton import PassRequest
    >>> X = np.column_stack([np.ones(4), [0, 1, 0, 1.0]])
    >>> y = np.array([0, 1, 1, 1.0])
    >>> ask = PassRequest(np.zeros(2), True, False)
    >>> one, = batch_pass(X, y, family_of("logistic").glm, [(np.array([0, 1]), ask)])
    >>> one.info.tolist(), one.score.tolist()
    ([[1.0, 0.5], [0.5, 0.5]], [1.0, 1.0])
    """
    n, q = X.shape
    m = len(requests)
    B = np.zeros((q, m))
    for r, (cols, req) in enumerate(requests):
        B[cols, r] = req.beta
    info_at = [r for r, (_, req) in enumerate(requests) if req.info]
    meat_at = [r for r, (_, req) in enumerate(requests) if req.meat]
    asked = [(r, False) for r in info_at] + [(r, True) for r in meat_at]
    plan = _MatrixPlan.of([requests[r][0] for r in sorted({*info_at, *meat_at})], q)
    own_work = [(j, a, plan.own_columns(requests[a[0]][0])) for j, a in enumerate(asked)]
    models = [cols for cols, _ in requests]
    round_ = _Round(X, y, link, B, offset, plan.shared, asked, own_work, models)
    parts = in_ranges(n, round_.rows)
    total = parts[0]
    for part in parts[1:]:
        total.add(part)
    out: list[GlmPass] = []
    column = {a: j for j, a in enumerate(asked)}

    def formed(r: int, is_meat: bool) -> Array:
        return plan.matrix(
            requests[r][0], total.sums[:, column[(r, is_meat)]], total.own[(r, is_meat)]
        )

    for r, (cols, req) in enumerate(requests):
        info = formed(r, False) if req.info else None
        meat = formed(r, True) if req.meat else None
        deviance = float(total.dev[r]) + (2.0 * ylogy if ylogy else 0.0)
        out.append(
            GlmPass(
                deviance,
                total.score[cols, r],
                info,
                meat,
                float(total.low[r]),
                float(total.high[r]),
            )
        )
    return out


#: Fewest models sharing a column pair for the pair products to pay: their
#: matrix product then beats forming the pair for each model (measured with
#: benchmarks/bench_iterative.py; a guide, not a published figure).
SHARED_BY = 3


@dataclass(frozen=True)
class _MatrixPlan:
    """How a round forms its models' informations (and sandwich meats).

    Column pairs that at least `SHARED_BY` models use are summed once for
    all as pair products (:class:`_Pairs`); each model's other pairs come from
    a product of the block with its own few columns weighted, X'(X_O ⊙ w),
    which holds every pair (j, k) with k among those columns.
    """

    shared: _Pairs
    own: dict[tuple[int, ...], Index]

    @classmethod
    def of(cls, models: Sequence[Index], q: int) -> _MatrixPlan:
        """The plan for ``models`` (their columns of an X of ``q`` columns)."""
        each = [_pairs_of(cols) for cols in models]
        if not each:
            return cls(_Pairs.of(np.zeros(0, np.intp), np.zeros(0, np.intp), q), {})
        # each model's pairs once (a model may not list a column twice)
        keys = np.concatenate([np.unique(lo * q + hi) for lo, hi in each])
        found, uses = np.unique(keys, return_counts=True)
        shared = found[uses >= SHARED_BY]
        own: dict[tuple[int, ...], Index] = {}
        for cols, (lo, hi) in zip(models, each, strict=True):
            alone = ~np.isin(lo * q + hi, shared)
            own[tuple(int(v) for v in cols)] = np.unique(hi[alone])
        return cls(_Pairs.of(shared // q, shared % q, q), own)

    def own_columns(self, cols: Index) -> Index:
        """The columns whose weighted products the model forms itself."""
        return self.own[tuple(int(v) for v in cols)]

    def matrix(self, cols: Index, sums: Array, own: Array) -> Array:
        """The model's p × p matrix from the shared pair sums and its own products."""
        c = np.asarray(cols, dtype=np.intp)
        lo = np.minimum.outer(c, c)
        hi = np.maximum.outer(c, c)
        at = self.shared.position[lo, hi]
        picks = np.full(self.shared.position.shape[0], -1, dtype=np.intp)
        mine = self.own_columns(cols)
        picks[mine] = np.arange(len(mine))
        kept = at >= 0
        out = np.empty(at.shape)
        out[kept] = sums[at[kept]]
        out[~kept] = own[lo[~kept], picks[hi[~kept]]]
        return out


def newton_paths_many(
    X: Array,
    y: Array,
    family: str,
    models: Sequence[BatchModel],
    *,
    offset: Array | None = None,
    meat: bool = False,
    max_iter: int = 50,
    on_pass: Callable[[int], None] | None = None,
    on_round: Callable[[Sequence[int]], None] | None = None,
) -> list[GlmPath | None]:
    """Each model's :func:`~covariscope.analysis.glm_newton.newton_walk`, the
    passes of all unfinished models made together, round by round.

    A model whose walk raises an arithmetic or linear-algebra error gets
    None (its caller fits it alone, which reports the problem); the others
    go on unchanged.  ``on_pass`` is called after every round with each model
    (its position in ``models``) that the round served; an exception it
    raises (cancellation) stops every walk.  ``on_round`` is called after
    every round with the models it served, all at once.
    """
    link = family_of(family).glm
    ylogy = link.saturated(y)
    walks: dict[int, Walk] = {}
    pending: dict[int, PassRequest] = {}
    paths: list[GlmPath | None] = [None] * len(models)
    for k, model in enumerate(models):
        walks[k] = newton_walk(model.start, model.scale, model.reach, meat=meat, max_iter=max_iter)
        pending[k] = next(walks[k])
    while pending:
        keys = list(pending)
        answers = batch_pass(
            X,
            y,
            link,
            [(models[k].cols, pending[k]) for k in keys],
            offset=offset,
            ylogy=ylogy,
        )
        if on_pass is not None:
            for k in keys:
                on_pass(k)
        if on_round is not None:
            on_round(keys)
        for k, answer in zip(keys, answers, strict=True):
            try:
                pending[k] = walks[k].send(answer)
            except StopIteration as stop:
                paths[k] = stop.value
                del pending[k]
            except (ArithmeticError, ValueError, np.linalg.LinAlgError):
                del pending[k]
    return paths


def fits_many(
    X: Array,
    y: Array,
    family: str,
    models: Sequence[BatchModel],
    names: Sequence[list[str]],
    *,
    terms: Sequence[tuple[str, ...]] | None = None,
    offset: Array | None = None,
    on_pass: Callable[[int], None] | None = None,
    on_round: Callable[[Sequence[int]], None] | None = None,
) -> list[tuple[Fit, GlmPath | None] | None]:
    """The :class:`Fit` (and Newton path) each model ends in, its walk made by
    :func:`newton_paths_many` and its fit formed by
    :func:`~covariscope.analysis.glm.glm_fit_from_path`, as a model fitted
    alone (``names``: each model's column names, intercept first; ``terms``:
    the covariates each Fit names, none when not given).  None for a model
    whose walk or fit raised: its caller fits it alone, which says what went
    wrong; the others are unchanged."""
    paths = newton_paths_many(
        X,
        y,
        family,
        models,
        offset=offset,
        meat=family_of(family).glm.robust,
        on_pass=on_pass,
        on_round=on_round,
    )
    facts = OutcomeFacts.of(y)
    out: list[tuple[Fit, GlmPath | None] | None] = []
    for k, (model, path) in enumerate(zip(models, paths, strict=True)):
        if path is None:
            out.append(None)
            continue
        try:
            out.append(
                glm_fit_from_path(
                    X,
                    y,
                    family,
                    path,
                    column_names=names[k],
                    terms=() if terms is None else terms[k],
                    exposure_index=1,
                    cols=model.cols,
                    outcome=facts,
                )
            )
        except (ArithmeticError, ValueError, np.linalg.LinAlgError):
            out.append(None)
    return out
