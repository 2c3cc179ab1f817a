"""Cox proportional hazards fits for the comparison models.

Pure numpy: the partial likelihood, its score and information are built from
reverse cumulative sums over the rows sorted by time, so one Newton iteration
costs a few passes over the rows and one weighted cross product (no loop over
the rows, no n × p × p array).  Tied event times are handled by Efron's
method (Efron 1977, "The efficiency of Cox's likelihood function for
censored data", JASA 72:557) unless Breslow's is asked for (Breslow 1974,
Biometrics 30:89).  Data problems come back as a failed `Fit` or as warnings,
never as an exception.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy.linalg.lapack import dpotrs

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
    rank_message,
    too_few_rows,
    upper_cholesky,
    weighted_crossprod,
)
from covariscope.analysis.glm import _screen_binary

__all__ = ["TIES", "CoxPath", "cox_partial_likelihood", "fit_cox", "newton_cox"]

Array = npt.NDArray[np.float64]

#: How tied event times are handled, in the words the report uses.
TIES: dict[str, str] = {
    "efron": "tied event times handled by Efron's method (Efron 1977)",
    "breslow": "tied event times handled by Breslow's method (Breslow 1974)",
}


@dataclass(frozen=True)
class CoxPath:
    """Where a Newton run on the partial likelihood ended."""

    params: Array
    cov: Array | None
    iterations: int
    converged: bool
    loglik: float
    stop: str = ""


class _RiskSets:
    """The data sorted by time, with the index arithmetic that does not depend on β."""

    def __init__(self, X: Array, time: Array, event: Array, ties: str) -> None:
        order = np.argsort(time, kind="stable")
        self.X = np.ascontiguousarray(X[order] - X.mean(axis=0))  # centring leaves β unchanged
        t = time[order]
        e = event[order] > 0
        self.ev_rows = np.flatnonzero(e)
        ev_t, first = np.unique(t[self.ev_rows], return_index=True)
        self.first = first  # start of each tied group within the event rows
        self.group = np.searchsorted(ev_t, t[self.ev_rows])  # event row → its event time
        self.d = np.bincount(self.group, minlength=len(ev_t)).astype(np.float64)
        self.risk_start = np.searchsorted(t, ev_t, side="left")
        within = np.arange(len(self.ev_rows)) - first[self.group]
        self.phi = within / self.d[self.group] if ties == "efron" else np.zeros(len(within))
        self.last_event = np.searchsorted(ev_t, t, side="right") - 1  # row → last event time ≤ t
        self.is_event = e
        self.n_tied = int(np.count_nonzero(self.d > 1))
        self.X_ev_sum = self.X[self.ev_rows].sum(axis=0)

    def evaluate(self, beta: Array, *, info: bool = True) -> tuple[float, Array, Array | None]:
        """Log partial likelihood, score and (optionally) information at β."""
        X, g, phi = self.X, self.group, self.phi
        eta = X @ beta
        eta -= eta.max()  # the shift cancels between numerator and denominators
        w = np.exp(eta)
        wX = w[:, None] * X
        s0 = np.cumsum(w[::-1])[::-1][self.risk_start]
        s1 = np.cumsum(wX[::-1], axis=0)[::-1][self.risk_start]
        s0d = np.add.reduceat(w[self.ev_rows], self.first)
        s1d = np.add.reduceat(wX[self.ev_rows], self.first, axis=0)
        den = s0[g] - phi * s0d[g]
        M = (s1[g] - phi[:, None] * s1d[g]) / den[:, None]
        loglik = float(np.sum(eta[self.ev_rows]) - np.sum(np.log(den)))
        score = self.X_ev_sum - M.sum(axis=0)
        if not info:
            return loglik, score, None
        a = np.bincount(g, weights=1.0 / den, minlength=len(self.d))
        b = np.bincount(g, weights=phi / den, minlength=len(self.d))
        cum_a = np.concatenate([[0.0], np.cumsum(a)])[self.last_event + 1]
        c = w * cum_a
        c[self.ev_rows] -= w[self.ev_rows] * b[g]
        H = weighted_crossprod(X, np.clip(c, 0.0, None)) - M.T @ M
        return loglik, score, H


def cox_partial_likelihood(
    X: Array, time: Array, event: Array, beta: Array, *, ties: str = "efron"
) -> float:
    """Log partial likelihood of a Cox model at ``beta``.

    >>> import numpy as np
    >>> X = np.array([[0.0], [1.0], [0.0], [1.0]])
    >>> round(cox_partial_likelihood(X, np.array([1, 2, 3, 4.0]), np.ones(4), np.zeros(1)), 4)
    -3.1781
    """
    return _RiskSets(X, time, event, ties).evaluate(beta, info=False)[0]


def newton_cox(
    X: Array,
    time: Array,
    event: Array,
    *,
    ties: str = "efron",
    start: Array | None = None,
    max_iter: int = 50,
    tol: float = 1e-13,
    _risk: _RiskSets | None = None,
) -> CoxPath:
    """Maximise the Cox partial likelihood by Newton–Raphson with step halving.

    Stops when the Newton decrement (the increase in twice the log partial
    likelihood that the next full step would bring) falls below
    ``tol × (|2 loglik| + 0.1)``.

    >>> import numpy as np
    >>> X = np.array([[0.0], [1.0], [0.0], [1.0], [1.0], [0.0]])
    >>> path = newton_cox(X, np.array([1, 2, 3, 4, 5, 6.0]), np.array([1, 1, 0, 1, 0, 1.0]))
    >>> bool(path.converged)
    True
    """
    risk = _risk if _risk is not None else _RiskSets(X, time, event, ties)
    p = X.shape[1]
    beta = np.zeros(p) if start is None else np.array(start, dtype=np.float64)
    scale = np.std(X, axis=0)
    ll, score, H = risk.evaluate(beta)
    cov: Array | None = None
    for it in range(1, max_iter + 1):
        assert H is not None
        c = upper_cholesky(H)
        if it == 1 and (c is None or np.min(np.diag(c) ** 2 / np.diag(H)) < ALIAS_TOL):
            return CoxPath(beta, None, it, False, ll, "aliased")
        if c is None:
            return CoxPath(beta, None, it, False, ll, "singular")
        step, _ = dpotrs(c, score[:, None], lower=0)
        delta = step[:, 0]
        decrement = float(score @ delta)
        cov = inverse_from_cholesky(c)
        if decrement <= tol * (2.0 * abs(ll) + 0.1):
            return CoxPath(beta + delta, cov, it, True, ll)
        t = 1.0
        for _ in range(40):
            new = beta + t * delta
            ll_new, _, _ = risk.evaluate(new, info=False)
            if math.isfinite(ll_new) and ll_new >= ll - 1e-12 * abs(ll):
                break
            t *= 0.5
        else:
            return CoxPath(beta, cov, it, False, ll, "no_progress")
        beta = new
        ll, score, H = risk.evaluate(beta)
        if np.any(np.abs(beta) * scale > DIVERGE_SD):
            return CoxPath(beta, cov, it, False, ll, "diverging")
    return CoxPath(beta, cov, max_iter, False, ll)


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
    tol: float = 1e-13,
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

    risk = _RiskSets(X, time, event, ties)
    path = newton_cox(
        X, time, event, ties=ties, start=start, max_iter=max_iter, tol=tol, _risk=risk
    )
    if path.stop == "aliased":
        clauses = aliased_columns(risk.X.T @ risk.X, names)
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
    scale = np.std(X, axis=0)
    huge = np.abs(path.params) * scale > DIVERGE_SD / 2
    if path.cov is not None:
        huge |= np.sqrt(np.clip(np.diag(path.cov), 0.0, None)) * scale > 5 * DIVERGE_SD
    sep = _screen_binary(X, event, "risk_ratio", first=0)
    if sep.found or huge.any() or not path.converged:
        cols = sep.columns if sep.found else tuple(int(j) for j in np.flatnonzero(huge))
        if cols:
            who = ", ".join(names[j] for j in cols)
            words = (
                f"Monotone likelihood: the hazard ratio of {who} runs off to infinity (for "
                "example, no events in one group), so it cannot be estimated. Merge sparse "
                "categories, remove the column, or use penalised (Firth) Cox regression."
            )
            if exposure_index in cols or path.cov is None:
                return Fit.failed(family, terms, n, words), None
            blank = frozenset(cols)
            warns.append(words + LEFT_BLANK)
        elif path.cov is None:
            return Fit.failed(family, terms, n, SINGULAR_INFORMATION), None
    assert path.cov is not None
    if risk.n_tied:
        warns.append(f"{risk.n_tied} event times are tied; {TIES[ties]}.")
    events = int(np.count_nonzero(event))
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
    return fit, path.params
