"""Cox proportional hazards fits for the comparison models.

Pure numpy.  The rows are sorted once per analytic sample, latest time first,
so that every risk set is a prefix of the rows: the partial likelihood, its
score and information then come from one cumulative sum per Newton step,
taken down the columns of a column-major array that holds the risk weights
and every weighted covariate at once, and from one weighted cross product
(no loop over the rows or the event times, no n × p × p array).  Tied event
times are handled by Efron's method (Efron 1977, "The efficiency of Cox's
likelihood function for censored data", JASA 72:557) with grouped sums over
each tied set, unless Breslow's is asked for (Breslow 1974, Biometrics
30:89).  Data problems come back as a failed `Fit` or as warnings, never as
an exception.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.fits import Fit
from covariscope.analysis.fitting_common import (
    ALIAS_TOL,
    DIVERGE_SD,
    EVENTS_PER_PARAMETER,
    LEFT_BLANK,
    SINGULAR_INFORMATION,
    aliased_columns,
    design_problem,
    fit_from_params,
    inverse_from_cholesky,
    newton_done,
    rank_message,
    too_few_rows,
    upper_cholesky,
)
from covariscope.analysis.risk_sets import CoxPoint, CoxSample

__all__ = [
    "TIES",
    "CoxPath",
    "CoxSample",
    "fit_cox",
    "fit_cox_sample",
    "newton_cox",
]

Array = npt.NDArray[np.float64]
Index = npt.NDArray[np.intp]

#: How tied event times are handled, in the words the report uses.
TIES: dict[str, str] = {
    "efron": "tied event times handled by Efron's method (Efron 1977)",
    "breslow": "tied event times handled by Breslow's method (Breslow 1974)",
}


#: Relative gain in twice the log partial likelihood below which a fit whose
#: coefficients run off to infinity is taken as having reached its limit.
FLAT = 1e-13


@dataclass(frozen=True)
class CoxPath:
    """Where a Newton run on the partial likelihood ended."""

    params: Array
    cov: Array | None
    iterations: int
    converged: bool
    loglik: float
    stop: str = ""


def newton_cox(
    X: Array | None,
    time: Array | None,
    event: Array | None,
    *,
    ties: str = "efron",
    start: Array | None = None,
    max_iter: int = 50,
    sample: CoxSample | None = None,
    cols: Index | None = None,
    scale: Array | None = None,
    on_pass: Callable[[], None] | None = None,
) -> CoxPath:
    """Maximise the Cox partial likelihood by Newton–Raphson with step halving.

    Stops by the rule stated in the reported quantities
    (`covariscope.analysis.fitting_common.newton_done`).  Each accepted step
    costs one evaluation: the likelihood at the trial point first, and its
    score and information from the same weights once the step is accepted.
    ``sample`` (built once per analytic sample) and ``cols`` (the model's
    columns of it) replace X, time and event; ``scale`` is each column's SD.

    >>> import numpy as np
    >>> X = np.array([[0.0], [1.0], [0.0], [1.0], [1.0], [0.0]])
    >>> path = newton_cox(X, np.array([1, 2, 3, 4, 5, 6.0]), np.array([1, 1, 0, 1, 0, 1.0]))
    >>> bool(path.converged)
    True
    """
    if sample is None:
        if X is None or time is None or event is None:
            raise ValueError("newton_cox needs X, time and event, or a CoxSample")
        sample = CoxSample(X, time, event, ties)
    reach = sample.reach if cols is None else sample.reach[cols]
    # A model with most of the sample's columns reads them all in place, with
    # zero coefficients for the others, and takes its sub-blocks of the sums
    # (no copy of its columns); a narrow one copies its few columns once.
    q = sample.X.shape[1]
    idx = np.arange(q) if cols is None else cols
    wide = cols is not None and 2 * len(cols) >= q
    Xm = sample.X if wide else sample.columns(cols)
    p = q if cols is None else len(cols)
    beta = np.zeros(p) if start is None else np.array(start, dtype=np.float64)
    if scale is None:
        scale = sample.sd[idx] if wide else np.std(Xm, axis=0)

    def spread(b: Array) -> Array:
        if not wide:
            return b
        out = np.zeros(q)
        out[idx] = b
        return out

    def evaluate(b: Array) -> CoxPoint:
        pt = sample.point(Xm, spread(b))
        if on_pass is not None:
            on_pass()
        return pt

    def derivatives(pt: CoxPoint) -> tuple[Array, Array]:
        score, H = sample.derivatives(Xm, pt, ev_sum)
        if not wide:
            return score, H
        return score[idx], H[np.ix_(idx, idx)]

    ev_sum = sample.X_ev_sum if Xm is sample.X else Xm[sample.ev_rows].sum(axis=0)
    pt = evaluate(beta)
    score, H = derivatives(pt)
    cov: Array | None = None
    for it in range(1, max_iter + 1):
        c = upper_cholesky(H)
        if it == 1 and (c is None or np.min(np.diag(c) ** 2 / np.diag(H)) < ALIAS_TOL):
            return CoxPath(beta, None, it, False, pt.loglik, "aliased")
        if c is None:
            return CoxPath(beta, None, it, False, pt.loglik, "singular")
        cov = inverse_from_cholesky(c)
        delta = cov @ score
        # A coefficient running off to infinity (monotone likelihood) never
        # meets the rule; the loop stops once the likelihood is flat instead
        # and the fit blanks that coefficient.
        runaway = bool(np.any(np.abs(beta) * scale > DIVERGE_SD / 2))
        flat = float(score @ delta) <= FLAT * (2.0 * abs(pt.loglik) + 0.1)
        if newton_done(delta, cov, reach) or (runaway and flat):
            return CoxPath(beta + delta, cov, it, True, pt.loglik)
        t = 1.0
        for _ in range(40):
            moved = beta + t * delta
            trial = evaluate(moved)
            if math.isfinite(trial.loglik) and trial.loglik >= pt.loglik - 1e-12 * abs(pt.loglik):
                break
            t *= 0.5
        else:
            return CoxPath(beta, cov, it, False, pt.loglik, "no_progress")
        beta, pt = moved, trial
        score, H = derivatives(pt)
        if np.any(np.abs(beta) * scale > DIVERGE_SD):
            return CoxPath(beta, cov, it, False, pt.loglik, "diverging")
    return CoxPath(beta, cov, max_iter, False, pt.loglik)


def fit_cox(
    X: Array,
    time: Array,
    event: Array,
    *,
    column_names: list[str] | tuple[str, ...],
    terms: tuple[str, ...],
    exposure_index: int = 0,
    start: Array | None = None,
    ties: str = "efron",
    max_iter: int = 50,
) -> tuple[Fit, Array | None]:
    """Fit a Cox proportional hazards model (hazard ratio), model-based SE.

    Parameters
    ----------
    X : n × p float array without an intercept; exposure in ``exposure_index``.
    time : follow-up time per row; event : 1 for an event, 0 for censored.
    column_names, terms : as for `covariscope.analysis.glm.fit_glm`.
    start : parameters to start from (length p), e.g. a neighbouring model's.
    ties : "efron" (default) or "breslow"; when the data hold tied event times
        the Fit's warnings say which method handled them.

    Returns
    -------
    (Fit, params) : the exposure's log hazard ratio with Wald 95% CI, every
        other column in ``term_coefs``; the parameters, or None on failure.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(2)
    >>> x = rng.integers(0, 2, 300).astype(float)
    >>> time = rng.exponential(1 / np.exp(0.5 * x))
    >>> fit, _ = fit_cox(x[:, None], time, np.ones(300), column_names=["x"], terms=())
    >>> fit.ok and 0.2 < fit.coef < 0.8
    True
    """
    names = list(column_names)
    X = np.asarray(X, dtype=np.float64)
    if X.ndim == 1:
        X = X[:, None]
    time = np.asarray(time, dtype=np.float64)
    event = np.asarray(event, dtype=np.float64)
    n, p = X.shape
    family = "cox"
    if ties not in TIES:
        return Fit.failed(
            family, terms, n, f"Unknown method for ties {ties!r}: use 'efron' or 'breslow'."
        ), None
    problem = ""
    if not (np.all(np.isfinite(time)) and np.all(np.isfinite(event))):
        problem = "Missing or infinite follow-up times or event codes: fit on complete cases only."
    elif np.setdiff1d(np.unique(event), [0.0, 1.0]).size:
        problem = "The event column must be coded 1 (event) or 0 (censored)."
    elif not np.any(event > 0):
        problem = "No events: every row is censored, so there is nothing to model."
    problem = problem or design_problem(X, names, skip=0)
    if not problem and n <= p:
        problem = too_few_rows(n, p)
    if problem:
        return Fit.failed(family, terms, n, problem), None
    if start is not None and np.shape(start) != (p,):
        start = None
    sample = CoxSample(X, time, event, ties)
    fit, path = fit_cox_sample(
        sample,
        None,
        column_names=names,
        terms=terms,
        exposure_index=exposure_index,
        start=start,
        ties=ties,
        max_iter=max_iter,
    )
    return fit, None if path is None else path.params


def fit_cox_sample(
    sample: CoxSample,
    cols: Index | None,
    *,
    column_names: list[str] | tuple[str, ...],
    terms: tuple[str, ...],
    exposure_index: int = 0,
    start: Array | None = None,
    ties: str = "efron",
    max_iter: int = 50,
    scale: Array | None = None,
    on_pass: Callable[[], None] | None = None,
) -> tuple[Fit, CoxPath | None]:
    """`fit_cox` on the columns ``cols`` of a sample sorted once (`CoxSample`).

    The caller has checked times, events and columns (as `fit_cox` and the
    evidence engine do).  Returns the Fit and the Newton result (None on
    failure), whose covariance lets a nested model start from a one-step
    update.  ``scale`` is each model column's SD; ``on_pass`` is called
    after every pass over the rows.

    >>> import numpy as np
    >>> X = np.array([[0.0, 1], [1, 0], [0, 0], [1, 1], [1, 0], [0, 1]])
    >>> s = CoxSample(X, np.array([1, 2, 3, 4, 5, 6.0]), np.array([1, 1, 0, 1, 0, 1.0]), "efron")
    >>> fit, path = fit_cox_sample(s, np.array([0]), column_names=["x"], terms=())
    >>> fit.ok, path.cov.shape
    (True, (1, 1))
    """
    names = list(column_names)
    n, family = sample.n, "cox"
    idx = np.arange(sample.X.shape[1]) if cols is None else np.asarray(cols, dtype=np.intp)
    p = len(idx)
    path = newton_cox(
        None,
        None,
        None,
        ties=ties,
        start=start,
        max_iter=max_iter,
        sample=sample,
        cols=None if cols is None else idx,
        scale=scale,
        on_pass=on_pass,
    )
    if path.stop == "aliased":
        Xm = sample.columns(None if cols is None else idx)
        clauses = aliased_columns(Xm.T @ Xm, names)
        if not clauses:
            return Fit.failed(
                family,
                terms,
                n,
                "The columns carry no information about the order of events (for example, a column that varies only among rows censored before the first event).",
            ), None
        return Fit.failed(family, terms, n, rank_message(clauses)), None
    warns: list[str] = []
    blank: frozenset[int] = frozenset()
    # Coefficients that run off to infinity do not stop the Newton loop (the
    # likelihood still converges), so look for them whatever the loop said.
    if scale is None:
        scale = sample.sd[idx]
    huge = np.abs(path.params) * scale > DIVERGE_SD / 2
    if path.cov is not None:
        huge |= np.sqrt(np.clip(np.diag(path.cov), 0.0, None)) * scale > 5 * DIVERGE_SD
    flagged = np.flatnonzero(sample.no_events_at_one_level()[idx])
    if flagged.size or huge.any() or not path.converged:
        found = (int(flagged[0]),) if flagged.size else tuple(int(j) for j in np.flatnonzero(huge))
        if found:
            who = ", ".join(names[j] for j in found)
            words = (
                f"Monotone likelihood: the hazard ratio of {who} runs off to infinity (for "
                "example, no events in one group), so it cannot be estimated. Merge sparse "
                "categories, remove the column, or use penalised (Firth) Cox regression."
            )
            if exposure_index in found or path.cov is None:
                return Fit.failed(family, terms, n, words), None
            blank = frozenset(found)
            warns.append(words + LEFT_BLANK)
        elif path.cov is None:
            return Fit.failed(family, terms, n, SINGULAR_INFORMATION), None
    assert path.cov is not None
    if sample.n_tied:
        warns.append(f"{sample.n_tied} event times are tied; {TIES[ties]}.")
    events = len(sample.ev_rows)
    if events / p < EVENTS_PER_PARAMETER:
        warns.append(
            f"Only {events} events for {p} parameters (fewer than {EVENTS_PER_PARAMETER} per "
            "parameter, Peduzzi et al. 1995): estimates may be unstable."
        )
    fit = fit_from_params(
        family,
        terms,
        names,
        path.params,
        path.cov,
        n,
        exposure_index,
        set(),
        converged=path.converged,
        iterations=path.iterations,
        warnings=warns,
        blank=blank,
    )
    return fit, path
