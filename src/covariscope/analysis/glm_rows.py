"""Logistic and log-link Poisson fits from row sums, for data not held in memory.

The same Newton–Raphson iteration as :func:`~covariscope.analysis.glm.newton_glm`
(the same start, step halving, convergence test and standard errors), but
each iteration reads the rows once, through a
:class:`~covariscope.analysis.rows.RowReducer`, for the information X'WX, the
score X'(y − μ) and the deviance at the current coefficients.  A proposed
step is accepted when the deviance at the new point does not rise; the sums
taken there then serve the next step, so an accepted step costs one pass.

Logistic standard errors are model-based (the inverse information at the
last Newton point); risk-ratio standard errors are the robust HC0 sandwich
of Zou (2004), "A modified Poisson regression approach to prospective
studies with binary data", Am J Epidemiol 159:702, its middle term taken at
the last Newton point in one more pass.

What needs the rows themselves is not done here: when a fit does not
converge, or its fitted probabilities reach 0 or 1, the search for the
separating direction (:func:`~covariscope.analysis.glm.detect_separation`)
is not run; the fit says so instead.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import GlmLink, family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.fitting_common import (
    ALIAS_TOL,
    DIVERGE_SD,
    SINGULAR_INFORMATION,
    aliased_columns,
    fit_from_params,
    glm_cautions,
    inverse_from_cholesky,
    newton_done,
    rank_message,
    upper_cholesky,
)
from covariscope.analysis.rows import (
    GlmSums,
    RowReducer,
    glm_pass,
    glm_pass_many,
    sandwich_pass,
)

__all__ = ["RowModel", "RowOutcome", "fit_glm_rows", "fit_glm_rows_many"]

Array = npt.NDArray[np.float64]

#: Said when a fit from row sums meets what only the rows could explain.
NEEDS_ROWS = (
    " The search for the covariate pattern that separates the outcome needs the rows in "
    "memory; look for a covariate level with no events (or only events) in the data."
)


@dataclass(frozen=True)
class RowOutcome:
    """What the fit needs to know of the outcome: its mean, Σ exp(offset), n."""

    mean: float
    offset_exp_sum: float
    n: int
    binary: bool


@dataclass(frozen=True, eq=False)
class _Path:
    params: Array
    cov: Array | None
    iterations: int
    converged: bool
    sums: GlmSums
    stop: str = ""
    #: the last Newton point (where ``cov`` and ``sums`` were taken)
    last: Array | None = None


def _start(outcome: RowOutcome, link: GlmLink, p: int) -> Array:
    b = np.zeros(p)
    denom = outcome.offset_exp_sum if outcome.offset_exp_sum > 0 else float(outcome.n)
    b[0] = link.start_intercept(outcome.mean, outcome.mean * outcome.n, denom)
    return b


def _newton(
    reducer: RowReducer,
    columns: tuple[int, ...],
    family: str,
    b: Array,
    scale: Array,
    reach: Array,
    max_iter: int,
) -> _Path:
    s = glm_pass(reducer, columns, b, family)
    cov: Array | None = None
    for it in range(1, max_iter + 1):
        H = s.information
        c = upper_cholesky(H)
        if it == 1 and (c is None or np.min(np.diag(c) ** 2 / np.diag(H)) < ALIAS_TOL):
            return _Path(b, None, it, False, s, "aliased")
        if c is None:
            return _Path(b, None, it, False, s, "singular")
        cov = inverse_from_cholesky(c)
        delta = cov @ s.score
        if newton_done(delta, cov, reach):
            return _Path(b + delta, cov, it, True, s, last=b)
        t = 1.0
        for _ in range(40):
            new = glm_pass(reducer, columns, b + t * delta, family)
            if math.isfinite(new.deviance) and new.deviance <= s.deviance + 1e-12 * abs(s.deviance):
                break
            t *= 0.5
        else:
            return _Path(b, cov, it, False, s, "no_progress")
        b, s = b + t * delta, new
        if np.any(np.abs(b[1:]) * scale[1:] > DIVERGE_SD):
            return _Path(b, cov, it, False, s, "diverging")
    return _Path(b, cov, max_iter, False, s)


def fit_glm_rows(
    reducer: RowReducer,
    columns: tuple[int, ...],
    family: str,
    *,
    outcome: RowOutcome,
    column_names: list[str],
    terms: tuple[str, ...],
    scale: Array,
    reach: Array,
    start: Array | None = None,
    max_iter: int = 50,
) -> tuple[Fit, Array | None, Array | None]:
    """Fit exposure + ``columns`` by Newton–Raphson on row sums.

    Parameters
    ----------
    reducer : RowReducer
        The rows of the design (outcome last).
    columns : tuple of int
        Design columns of the model (the exposure first); an intercept is added.
    family : str
        The code of a GLM family (:class:`~covariscope.analysis.families.Fitter` ``GLM``).
    outcome : RowOutcome
        Mean of the outcome and Σ exp(offset), for the start.
    column_names : names of [intercept, columns...].
    scale : standard deviation of [intercept, columns...] (0 for the intercept).
    reach : largest absolute value of [intercept, columns...] (the stopping rule's scale,
        see :func:`~covariscope.analysis.fitting_common.newton_done`).
    start : coefficients to start from (length 1 + len(columns)), optional.

    Returns
    -------
    (Fit, params, cov) : params and cov are None when the fit failed.

    Examples
    --------
    >>> from covariscope.analysis.rows import RowBatch
    >>> class Whole:
    ...     def __init__(self, v): self.v = v
    ...     def reduce(self, fn, merge): return fn(RowBatch(self.v))
    >>> v = np.column_stack([[0, 0, 1, 1, 0, 1.0], [0, 1, 1, 1, 0, 0.0]])
    >>> fit, params, cov = fit_glm_rows(Whole(v), (0,), "logistic",
    ...     outcome=RowOutcome(0.5, 0.0, 6, True), column_names=["const", "x"], terms=(),
    ...     scale=np.array([0.0, 0.5]), reach=np.ones(2))
    >>> round(fit.coef, 4)  # log(4): odds 1/2 → 2, as the in-memory fit
    1.3863
    """
    p = len(columns) + 1
    link = family_of(family).glm
    b = _start(outcome, link, p) if start is None or np.shape(start) != (p,) else start
    path = _newton(reducer, columns, family, np.array(b, dtype=np.float64), scale, reach, max_iter)
    return _finish(
        reducer, RowModel(columns, column_names, terms, scale, reach), family, outcome, path
    )


def _finish(
    reducer: RowReducer, model: RowModel, family: str, outcome: RowOutcome, path: _Path
) -> tuple[Fit, Array | None, Array | None]:
    """The fit a Newton path ends in: its failure, cautions and standard errors."""
    link = family_of(family).glm
    columns, column_names, terms = model.columns, model.column_names, model.terms
    p = len(columns) + 1
    n = outcome.n
    if path.stop == "aliased":
        clauses = aliased_columns(path.sums.information, column_names) or [
            "the columns are nearly collinear"
        ]
        return Fit.failed(family, terms, n, rank_message(clauses)), None, None
    if path.cov is None:
        return Fit.failed(family, terms, n, SINGULAR_INFORMATION), None, None
    s = path.sums
    extreme = s.mu_low < link.extreme_floor(outcome.mean)
    warns: list[str] = []
    if not path.converged:
        message = (
            f"The fit did not converge after {path.iterations} iterations (the coefficients "
            "may run off to infinity: separation)." + NEEDS_ROWS
        )
        return Fit.failed(family, terms, n, message), None, None
    if extreme:
        warns.append(
            "Some fitted probabilities are numerically 0 or 1: check for sparse categories."
            + NEEDS_ROWS
        )
    cov = path.cov
    if link.robust:
        # HC0 sandwich, both parts at the last Newton point (as the in-memory fit).
        assert path.last is not None
        cov = _sandwich(reducer, columns, path.last, cov)
    total = outcome.mean * n
    events = float(round(link.events(total, n), 6))
    warns.extend(glm_cautions(family, events, p, binary=outcome.binary, mu_high=s.mu_high))
    fit = fit_from_params(
        family,
        terms,
        column_names,
        path.params,
        cov,
        n,
        1,
        {0},
        converged=True,
        iterations=path.iterations,
        warnings=warns,
    )
    return fit, path.params, path.cov


@dataclass(frozen=True, eq=False)
class RowModel:
    """One model of a batch: its design columns (exposure first), the names of
    [intercept, columns...], its terms, and the scales of `fit_glm_rows`."""

    columns: tuple[int, ...]
    column_names: list[str]
    terms: tuple[str, ...]
    scale: Array
    reach: Array
    start: Array | None = None


class _Walk:
    """One model's Newton–Raphson walk, advanced a pass at a time: the same
    steps, step halving and stopping rule as `_newton`, so that a batch of
    walks ends where the models fitted one by one would."""

    def __init__(self, model: RowModel, b: Array, max_iter: int) -> None:
        self.model, self.b, self.max_iter = model, b, max_iter
        self.s: GlmSums | None = None
        self.cov: Array | None = None
        self.delta = np.zeros_like(b)
        self.it, self.t, self.tries = 0, 1.0, 0
        self.path: _Path | None = None

    def point(self) -> Array:
        """Where the next pass is wanted: the start, or the proposed step."""
        return self.b if self.s is None else self.b + self.t * self.delta

    def take(self, new: GlmSums) -> None:
        """The sums at :meth:`point`."""
        s = self.s
        if s is None:
            self.s = new
            self._step()
            return
        if math.isfinite(new.deviance) and new.deviance <= s.deviance + 1e-12 * abs(s.deviance):
            self.b, self.s = self.b + self.t * self.delta, new
            if np.any(np.abs(self.b[1:]) * self.model.scale[1:] > DIVERGE_SD):
                self.path = _Path(self.b, self.cov, self.it, False, new, "diverging")
            elif self.it == self.max_iter:
                self.path = _Path(self.b, self.cov, self.max_iter, False, new)
            else:
                self._step()
            return
        self.tries += 1
        self.t *= 0.5
        if self.tries == 40:
            self.path = _Path(self.b, self.cov, self.it, False, s, "no_progress")

    def _step(self) -> None:
        s = self.s
        assert s is not None
        self.it += 1
        H = s.information
        c = upper_cholesky(H)
        if self.it == 1 and (c is None or np.min(np.diag(c) ** 2 / np.diag(H)) < ALIAS_TOL):
            self.path = _Path(self.b, None, self.it, False, s, "aliased")
            return
        if c is None:
            self.path = _Path(self.b, None, self.it, False, s, "singular")
            return
        self.cov = inverse_from_cholesky(c)
        self.delta = self.cov @ s.score
        if newton_done(self.delta, self.cov, self.model.reach):
            self.path = _Path(self.b + self.delta, self.cov, self.it, True, s, last=self.b)
        self.t, self.tries = 1.0, 0


def fit_glm_rows_many(
    reducer: RowReducer,
    models: list[RowModel],
    family: str,
    *,
    outcome: RowOutcome,
    max_iter: int = 50,
    on_pass: Callable[[], None] | None = None,
) -> list[tuple[Fit, Array | None, Array | None]]:
    """`fit_glm_rows` of several models, their Newton steps sharing each read of the rows.

    Each round reads the rows once (:func:`~covariscope.analysis.rows.glm_pass_many`)
    for the sums every unfinished model needs next; a model's walk is the one
    it takes alone, so each result is the one `fit_glm_rows` gives, to the
    rounding of the sums.  ``on_pass`` is called after every round (what it
    raises stops the fits).
    """
    link = family_of(family).glm
    walks = []
    for m in models:
        p = len(m.columns) + 1
        start = m.start if m.start is not None and np.shape(m.start) == (p,) else None
        b = _start(outcome, link, p) if start is None else start
        walks.append(_Walk(m, np.array(b, dtype=np.float64), max_iter))
    while True:
        going = [w for w in walks if w.path is None]
        if not going:
            break
        sums = glm_pass_many(reducer, [(w.model.columns, w.point()) for w in going], family)
        for w, s in zip(going, sums, strict=True):
            w.take(s)
        if on_pass is not None:
            on_pass()
    out = []
    for w in walks:
        assert w.path is not None
        out.append(_finish(reducer, w.model, family, outcome, w.path))
    return out


def _sandwich(reducer: RowReducer, columns: tuple[int, ...], params: Array, cov: Array) -> Array:
    return cov @ sandwich_pass(reducer, columns, params).meat @ cov
