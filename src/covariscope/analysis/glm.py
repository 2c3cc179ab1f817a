"""Logistic and log-link Poisson fits for the comparison models.

Pure numpy/scipy: a lean Newton (IRLS) loop with step halving that can start
from the parameters of a neighbouring model, so that the evidence engine's
dozens of nested models each take two or three iterations.  Data problems are
never raised: they come back as a failed `Fit` (or a `Fit` with warnings)
whose message says, in plain words, what is wrong and what to do.

Conventions
-----------
* ``X`` is n × p, float64, with the intercept in column 0 and the exposure in
  column ``exposure_index``.
* ``offset`` (Poisson only) is the *log* of each row's person-time (pass
  ``numpy.log(person_years)``), added to the linear predictor with a fixed
  coefficient of 1; the exposure coefficient is then a log rate ratio.
* Convergence is judged on the reported quantities: the loop stops when the
  Newton step left moves no coefficient by more than a millionth of its
  standard error and no row's linear predictor by more than 1e-9, so that
  estimates and standard errors are settled far below the printed digits
  (`covariscope.analysis.fitting_common.newton_done`).
* ``cols`` (optional) picks the model's columns of a wider X, which is then
  read in place, never copied per model.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import FAMILIES, Fitter, GlmLink, family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.fitting_common import (
    LEFT_BLANK,
    SINGULAR_INFORMATION,
    aliased_columns,
    design_problem,
    fit_from_params,
    glm_cautions,
    rank_message,
    too_few_rows,
)
from covariscope.analysis.glm_newton import GlmPath, information_and_score, newton_glm

__all__ = [
    "GLM_FAMILY_CODES",
    "GlmPath",
    "OutcomeFacts",
    "Separation",
    "detect_separation",
    "fit_glm",
    "fit_glm_path",
    "glm_fit_from_path",
    "information_and_score",
    "newton_glm",
    "outcome_problem",
]

Array = npt.NDArray[np.float64]

#: The families `fit_glm` fits (:attr:`Fitter.GLM`).
GLM_FAMILY_CODES: tuple[str, ...] = tuple(f.code.value for f in FAMILIES if f.fitter is Fitter.GLM)


@dataclass(frozen=True)
class Separation:
    """Result of `detect_separation`.

    ``kind`` is "none", "quasi-complete" or "complete"; ``columns`` are the
    indices of the columns in the separating direction; ``rows`` is how many
    rows the direction predicts perfectly.
    """

    kind: str
    columns: tuple[int, ...] = ()
    rows: int = 0

    @property
    def found(self) -> bool:
        return self.kind != "none"


# ------------------------------------------------------------------ separation


def _screen_binary(X: Array, y: Array, link: GlmLink, *, first: int = 1) -> Separation:
    """Cheap check: a two-valued column with no events (or only events) at one value."""
    both = link.two_sided_separation
    lo, hi = X.min(axis=0), X.max(axis=0)
    is_hi = hi == X
    two_valued = np.all(is_hi | (lo == X), axis=0) & (hi > lo)
    event = y > 0
    for j in np.flatnonzero(two_valued):
        if j < first:
            continue
        at_hi = is_hi[:, j]
        for level in (at_hi, ~at_hi):
            ev = int(np.count_nonzero(event[level]))
            size = int(np.count_nonzero(level))
            if ev == 0 or (both and ev == size):
                other = ~level
                ev_o = int(np.count_nonzero(event[other]))
                complete = both and ev_o in (0, int(np.count_nonzero(other)))
                complete = complete and (ev_o == 0) != (ev == 0)
                kind = "complete" if complete else "quasi-complete"
                return Separation(kind, (int(j),), len(y) if complete else size)
    return Separation("none")


def detect_separation(X: Array, y: Array, *, family: str = "logistic") -> Separation:
    """Whether a direction of the coefficients predicts some outcomes perfectly.

    For a logistic model this is (quasi-)complete separation, when the maximum
    likelihood estimate does not exist (Albert & Anderson 1984, Biometrika
    71:1); it is found by the linear program of Konis (2007, "Linear
    programming algorithms for detecting separated data in binary logistic
    regression models", DPhil thesis, Oxford): maximise Σ sᵢ xᵢ'b subject to
    sᵢ xᵢ'b ≥ 0 and |b| ≤ 1, with sᵢ = ±1 for events and non-events.  For a
    Poisson model the analogue is a direction with xᵢ'b = 0 where yᵢ > 0 and
    xᵢ'b ≤ 0 elsewhere, which drives some fitted rates to zero.  A cheap screen
    of two-valued columns runs first.

    >>> import numpy as np
    >>> X = np.column_stack([np.ones(6), [0, 0, 0, 1, 1, 1.0], [1, 3, 2, 5, 4, 4.0]])
    >>> detect_separation(X, np.array([0, 0, 0, 1, 1, 1.0]))
    Separation(kind='complete', columns=(1,), rows=6)
    """
    from scipy import optimize  # on demand: seconds to import

    link = family_of(family).glm
    quick = _screen_binary(X, y, link)
    if quick.found:
        return quick
    n, p = X.shape
    Xs = X / np.maximum(np.abs(X).max(axis=0), 1e-300)
    opts = {"presolve": True}
    if link.two_sided_separation:
        s = np.where(y > 0, 1.0, -1.0)
        A = s[:, None] * Xs
        A_eq = None
        res = optimize.linprog(
            -A.sum(axis=0), A_ub=-A, b_ub=np.zeros(n), bounds=(-1, 1), method="highs", options=opts
        )
    else:
        pos = y > 0
        A = -Xs[~pos]
        A_eq = Xs[pos] if pos.any() else None
        res = optimize.linprog(
            -A.sum(axis=0),
            A_ub=-A,
            b_ub=np.zeros(len(A)),
            A_eq=A_eq,
            b_eq=None if A_eq is None else np.zeros(len(A_eq)),
            bounds=(-1, 1),
            method="highs",
            options=opts,
        )
    if res.status != 0:
        return Separation("none")
    direction = np.asarray(res.x)
    margins = A @ direction
    thresh = 1e-6 * max(1.0, float(np.abs(direction).sum()))
    separated = int(np.count_nonzero(margins > thresh))
    if separated == 0:
        return Separation("none")
    in_s = margins > thresh
    kind = "quasi-complete"
    if link.two_sided_separation:
        # Complete separation needs every margin positive at once: maximise the smallest.
        c = np.zeros(p + 1)
        c[-1] = -1.0
        A2 = np.hstack([-A, np.ones((n, 1))])
        bounds = [(-1.0, 1.0)] * p + [(None, 1.0)]
        res2 = optimize.linprog(
            c, A_ub=A2, b_ub=np.zeros(n), bounds=bounds, method="highs", options=opts
        )
        if res2.status == 0 and -float(res2.fun) > thresh:
            kind, separated = "complete", n
            in_s = np.ones(n, dtype=bool)
    cols = _sparse_direction(A, in_s, Xs, A_eq) or tuple(
        int(j) for j in np.flatnonzero(np.abs(direction) > 1e-6)
    )
    return Separation(kind, cols, separated)


def _sparse_direction(
    A: Array, in_s: npt.NDArray[np.bool_], Xs: Array, A_eq: Array | None
) -> tuple[int, ...]:
    """Columns of the sparsest separating direction (least L1 norm), so that the
    message names the columns responsible rather than every column."""
    from scipy import optimize  # on demand: seconds to import

    m, p = A.shape
    free = np.ptp(Xs, axis=0) == 0.0  # the intercept costs nothing
    eye = np.eye(p)
    # Margins ≥ 0 everywhere and, on average over the separated rows, ≥ 1.
    total = -(in_s.astype(float) @ A)
    A_ub = np.vstack(
        [
            np.hstack([-A, np.zeros((m, p))]),
            np.concatenate([total, np.zeros(p)])[None, :],
            np.hstack([eye, -eye]),
            np.hstack([-eye, -eye]),
        ]
    )
    b_ub = np.concatenate([np.zeros(m), [-float(np.count_nonzero(in_s))], np.zeros(2 * p)])
    c = np.concatenate([np.zeros(p), np.where(free, 0.0, 1.0)])
    eq = None if A_eq is None else np.hstack([A_eq, np.zeros((len(A_eq), p))])
    res = optimize.linprog(
        c,
        A_ub=A_ub,
        b_ub=b_ub,
        A_eq=eq,
        b_eq=None if eq is None else np.zeros(len(eq)),
        bounds=[(None, None)] * p + [(0, None)] * p,
        method="highs",
    )
    if res.status != 0:
        return ()
    b = np.asarray(res.x[:p])
    big = float(np.max(np.abs(b)))
    return tuple(int(j) for j in np.flatnonzero(np.abs(b) > 1e-6 * big)) if big > 0 else ()


def _separation_words(sep: Separation, names: list[str], link: GlmLink, *, counts: bool) -> str:
    cols = [names[j] for j in sep.columns if j != 0] or [names[j] for j in sep.columns]
    what = link.ratio_words(counts=counts)
    who = ", ".join(cols)
    if sep.kind == "complete":
        return (
            f"Complete separation: {who} predict the outcome perfectly in every row, so the "
            f"{what} are infinite and the model cannot be fitted. Remove or merge {who}, "
            "or use penalised (Firth) regression."
        )
    detail = "no events or only events" if link.two_sided_separation else "no events"
    return (
        f"Quasi-complete separation: {who} predict the outcome perfectly in {sep.rows} rows "
        f"(for example {detail} at one value), so their {what} run off to infinity. "
        f"Merge sparse categories of {who}, remove {'it' if len(cols) == 1 else 'them'}, "
        "or use penalised (Firth) regression."
    )


# ------------------------------------------------------------------- the API


def outcome_problem(y: Array, family: str) -> str:
    """A plain message when ``y`` cannot be the outcome of a ``family`` model, or ""."""
    return _outcome_problem(y, family_of(family).glm)


def _outcome_problem(y: Array, link: GlmLink) -> str:
    if not np.all(np.isfinite(y)):
        return "The outcome has missing or infinite values: fit on complete cases only."
    return link.outcome_problem(y)


def fit_glm(
    X: Array,
    y: Array,
    family: str,
    *,
    column_names: list[str] | tuple[str, ...],
    terms: tuple[str, ...],
    exposure_index: int = 1,
    offset: Array | None = None,
    start: Array | None = None,
    max_iter: int = 50,
    checked: bool = False,
    scale: Array | None = None,
) -> tuple[Fit, Array | None]:
    """Fit a logistic model (odds ratio) or a robust Poisson model (risk or rate ratio).

    Parameters
    ----------
    X : n × p float array, intercept in column 0, exposure in ``exposure_index``.
    y : outcome; 0/1 for "logistic", 0/1 or counts for "risk_ratio".
    family : "logistic" (binomial, logit link, model-based SE from the observed
        information) or "risk_ratio" (Poisson, log link, robust HC0 sandwich
        SE: Zou 2004, "A modified Poisson regression approach to prospective
        studies with binary data", Am J Epidemiol 159:702).
    column_names : one name per column of X, used in messages and ``term_coefs``.
    terms : node ids of the covariates in the model (stored on the Fit).
    offset : log person-time per row (already logged), Poisson only.
    start : parameters to start from (length p), e.g. a neighbouring model's.
    checked : True when the caller has already made sure that X and y are
        finite, no column after the intercept is constant, the outcome suits
        the family and has events, and n > p (as
        `covariscope.analysis.design.make_design` and the evidence engine do);
        those scans over the rows are then skipped.  Rank deficiency is still
        found, and named, by the fit itself.
    scale : standard deviation of each column of X, if already known (saves a
        pass over the rows); see `newton_glm`.

    Returns
    -------
    (Fit, params) : the exposure's log-scale estimate with Wald 95% CI and every
        other non-intercept column in ``term_coefs``; the parameter vector for
        warm starts, or None when the fit failed.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(1)
    >>> x = rng.integers(0, 2, 200).astype(float)
    >>> y = (rng.random(200) < 0.2 + 0.2 * x).astype(float)
    >>> X = np.column_stack([np.ones(200), x])
    >>> fit, params = fit_glm(X, y, "logistic", column_names=["const", "x"], terms=())
    >>> fit.ok, round(fit.coef, 3) == round(float(params[1]), 3)
    (True, True)
    """
    fit, path = fit_glm_path(
        X,
        y,
        family,
        column_names=column_names,
        terms=terms,
        exposure_index=exposure_index,
        offset=offset,
        start=start,
        max_iter=max_iter,
        checked=checked,
        scale=scale,
    )
    return fit, None if path is None else path.params


def fit_glm_path(
    X: Array,
    y: Array,
    family: str,
    *,
    column_names: list[str] | tuple[str, ...],
    terms: tuple[str, ...],
    exposure_index: int = 1,
    offset: Array | None = None,
    start: Array | None = None,
    max_iter: int = 50,
    checked: bool = False,
    scale: Array | None = None,
    cols: npt.NDArray[np.intp] | None = None,
    reach: Array | None = None,
    on_pass: Callable[[], None] | None = None,
) -> tuple[Fit, GlmPath | None]:
    """`fit_glm`, returning the whole Newton result (parameters and covariance)
    instead of the parameters alone; the path is None when the fit failed.

    The covariance lets a caller warm-start a nested model by a one-step
    update (see `covariscope.analysis.evidence`).  ``cols`` picks the model's
    columns of a wider X (read in place; ``column_names``, ``scale`` and
    ``reach`` then follow ``cols``); ``reach`` is each column's largest
    absolute value (see `newton_glm`); ``on_pass`` is called after every pass
    over the rows.

    >>> import numpy as np
    >>> X = np.column_stack([np.ones(6), [0, 0, 1, 1, 0, 1.0]])
    >>> fit, path = fit_glm_path(X, np.array([0, 1, 1, 1, 0, 0.0]), "logistic",
    ...                          column_names=["const", "x"], terms=())
    >>> path.cov.shape
    (2, 2)
    """
    names = list(column_names)
    if X.dtype != np.float64 or not (X.flags.c_contiguous or X.flags.f_contiguous):
        X = np.ascontiguousarray(X, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    if cols is not None and not checked:
        X, cols = np.ascontiguousarray(X[:, cols]), None
    n = X.shape[0]
    p = X.shape[1] if cols is None else len(cols)
    if family not in GLM_FAMILY_CODES:
        return Fit.failed(family, terms, n, f"Unknown model family {family!r}."), None
    fam = family_of(family)
    link = fam.glm
    off = None
    if offset is not None:
        if not fam.takes_offset:
            return Fit.failed(
                family, terms, n, "An offset is only used with the Poisson (rate ratio) model."
            ), None
        off = np.asarray(offset, dtype=np.float64)
        if off.shape != (n,) or not np.all(np.isfinite(off)):
            return Fit.failed(
                family,
                terms,
                n,
                "The offset must be a finite log person-time for every row (did you take the log of a zero time?).",
            ), None
    if not checked:
        problem = _outcome_problem(y, link) or design_problem(X, names, skip=1)
        if not problem and n <= p:
            problem = too_few_rows(n, p)
        if problem:
            return Fit.failed(family, terms, n, problem), None
    if start is not None and np.shape(start) != (p,):
        start = None  # a mismatched start is ignored rather than trusted
    path = newton_glm(
        X,
        y,
        family,
        offset=off,
        start=start,
        max_iter=max_iter,
        scale=scale,
        cols=cols,
        reach=reach,
        meat=link.robust,
        on_pass=on_pass,
    )
    return glm_fit_from_path(
        X,
        y,
        family,
        path,
        column_names=names,
        terms=terms,
        exposure_index=exposure_index,
        cols=cols,
    )


@dataclass(frozen=True)
class OutcomeFacts:
    """What a fit's cautions read of the outcome: its mean, total and whether it is 0/1."""

    mean: float
    total: float
    binary: bool

    @classmethod
    def of(cls, y: Array) -> OutcomeFacts:
        """The facts of the outcome column ``y`` (one read)."""
        total = float(np.sum(y))
        return cls(total / max(len(y), 1), total, bool(np.all((y == 0) | (y == 1))))


def glm_fit_from_path(
    X: Array,
    y: Array,
    family: str,
    path: GlmPath,
    *,
    column_names: list[str],
    terms: tuple[str, ...],
    exposure_index: int,
    cols: npt.NDArray[np.intp] | None = None,
    outcome: OutcomeFacts | None = None,
) -> tuple[Fit, GlmPath | None]:
    """The :class:`Fit` a Newton path of :func:`fit_glm_path` ends in: an
    aliased design named, separation found and worded, the sandwich formed
    for a robust family, the cautions added.  Shared by the models fitted
    one at a time and the models fitted in lockstep
    (:mod:`covariscope.analysis.glm_batch`), which read the ``outcome``'s
    facts once for all."""
    names = column_names
    facts = OutcomeFacts.of(y) if outcome is None else outcome
    n = X.shape[0]
    p = X.shape[1] if cols is None else len(cols)
    link = family_of(family).glm
    if path.stop == "aliased":
        assert path.info is not None
        clauses = aliased_columns(path.info, names) or ["the columns are nearly collinear"]
        return Fit.failed(family, terms, n, rank_message(clauses)), None
    extreme = path.mu_low < link.extreme_floor(facts.mean)
    blank: frozenset[int] = frozenset()
    warns: list[str] = []
    if not path.converged or extreme:
        Xm = X if cols is None else X[:, cols]
        sep = detect_separation(Xm, y, family=family)
        if sep.found:
            words = _separation_words(sep, names, link, counts=not facts.binary)
            if sep.kind == "complete" or exposure_index in sep.columns or path.cov is None:
                return Fit.failed(family, terms, n, words), None
            blank = frozenset(sep.columns) - {0}
            warns.append(words + LEFT_BLANK)
        elif path.cov is None:
            return Fit.failed(family, terms, n, SINGULAR_INFORMATION), None
        elif extreme and path.converged:
            warns.append(
                "Some fitted probabilities are numerically 0 or 1: check for sparse categories."
            )
    assert path.cov is not None
    cov = path.cov
    if link.robust and path.meat is not None:
        # HC0 sandwich H⁻¹ (Σ rᵢ² xᵢxᵢ') H⁻¹, both parts from the last Newton
        # pass (the step left moves no linear predictor by more than ETA_TOL).
        cov = cov @ path.meat @ cov
    binary = facts.binary
    events = float(link.events(facts.total, float(n)))
    warns.extend(glm_cautions(family, events, p, binary=binary, mu_high=path.mu_high))
    fit = fit_from_params(
        family,
        terms,
        names,
        path.params,
        cov,
        n,
        exposure_index,
        {0},
        converged=path.converged,
        iterations=path.iterations,
        warnings=warns,
        blank=blank,
    )
    return fit, path
