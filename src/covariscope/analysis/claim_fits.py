"""The regressions behind one independence claim, one direction at a time.

A claim ``a ⫫ b | S`` is tested by regressing one variable (the response)
on the other (the predictor) and ``S``, with the family that fits the
response's type, and asking whether the predictor's coefficients are zero:

- continuous response: least squares, solved from the study's cross-product
  matrix (:class:`~covariscope.analysis.linear.LinearSummary`) without a
  pass over the rows; exact t (one column) or F (several) test;
- binary response: logistic regression, likelihood-ratio test;
- count response: Poisson regression, likelihood-ratio test, the statistic
  divided by the Pearson dispersion when that exceeds 1 (quasi-likelihood;
  McCullagh & Nelder 1989, §6.2.4) so over-dispersed counts do not flag
  claims by themselves;
- categorical response: multinomial logistic regression, likelihood-ratio
  test with (levels − 1) × (predictor columns) degrees of freedom.

The non-linear fits are statsmodels' maximum-likelihood models.

References
----------
McCullagh, P. & Nelder, J. A. (1989). *Generalized Linear Models*, 2nd ed.
Chapman & Hall.
Wilks, S. S. (1938). The large-sample distribution of the likelihood ratio
for testing composite hypotheses. *Ann. Math. Statist.* 9(1), 60–62.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from covariscope.analysis.distributions import chi2_sf, f_sf, t_sf
from covariscope.analysis.linear import LinearSummary, OLSResult, solve_ols

__all__ = [
    "Coefficients",
    "DirectionTest",
    "GlmFit",
    "fit_glm_direction",
    "fit_null",
    "linear_direction",
    "lr_test",
]


@dataclass(frozen=True)
class Coefficients:
    """The predictor's coefficients in one direction's model, with SEs.

    For a multinomial response ``coef`` and ``se`` are (predictor columns ×
    (levels − 1)); otherwise one row per predictor column.
    """

    coef: np.ndarray
    se: np.ndarray
    df_resid: int


@dataclass(frozen=True)
class DirectionTest:
    """The test of the predictor in one direction.

    ``df`` counts the constraints (for a t test: the residual degrees of
    freedom, the usual way to quote it); ``df_denominator`` is the F test's
    residual degrees of freedom, else None.
    """

    test: str
    statistic: float
    df: int
    p: float
    coefficients: Coefficients
    df_denominator: int | None = None


@dataclass(frozen=True)
class GlmFit:
    """A fitted maximum-likelihood model: log-likelihood, parameters, SEs."""

    llf: float
    params: np.ndarray
    bse: np.ndarray
    dispersion: float


def linear_direction(
    summary: LinearSummary, response: int, predictor: Sequence[int], given: Sequence[int]
) -> DirectionTest | None:
    """Test ``predictor`` columns in the least-squares regression of ``response``.

    Solved from the cross-product matrix alone.  One column gives a t test
    (statistic t, df the residual degrees of freedom); several give the F
    test of all of them (df the number of columns).  None when the
    regressors are collinear or no degrees of freedom remain.

    Examples
    --------
    >>> from covariscope.analysis.linear import linear_summary
    >>> rng = np.random.default_rng(3)
    >>> s = rng.normal(size=400); a = s + rng.normal(size=400); b = s + rng.normal(size=400)
    >>> t = linear_direction(linear_summary(np.column_stack([a, b, s])), 0, [1], [2])
    >>> t.test, t.df, bool(t.p > 0.01)
    ('linear t', 397, True)
    """
    fit1 = solve_ols(summary, [*given, *predictor], response)
    if fit1 is None or fit1.df_resid <= 0:
        return None
    k = len(predictor)
    coefs = Coefficients(fit1.coef[len(given) :], fit1.se[len(given) :], fit1.df_resid)
    if k == 1:
        t = float(coefs.coef[0] / coefs.se[0]) if coefs.se[0] > 0 else float("inf")
        p = float(2.0 * t_sf(abs(t), fit1.df_resid))
        return DirectionTest("linear t", t, fit1.df_resid, p, coefs)
    fit0 = solve_ols(summary, list(given), response)
    if fit0 is None:
        return None
    return _f_test(fit0, fit1, k, coefs)


def _f_test(fit0: OLSResult, fit1: OLSResult, k: int, coefs: Coefficients) -> DirectionTest:
    gain = max(fit0.rss - fit1.rss, 0.0)
    f = (gain / k) / (fit1.rss / fit1.df_resid) if fit1.rss > 0 else float("inf")
    p = float(f_sf(f, k, fit1.df_resid))
    return DirectionTest("linear F", float(f), k, p, coefs, df_denominator=fit1.df_resid)


def fit_glm_direction(
    kind: str,
    y: np.ndarray,
    predictor: np.ndarray,
    given: np.ndarray,
    *,
    null: Callable[[], GlmFit | None] | None = None,
) -> DirectionTest | None:
    """Likelihood-ratio test of ``predictor`` in a model of ``y`` given ``given``.

    Parameters
    ----------
    kind : {"binary", "count", "categorical"}
        The response's type: logistic, Poisson or multinomial regression.
    y : ndarray
        0/1, counts, or level codes 0..L−1 (0 the reference).
    predictor, given : ndarray
        n × k and n × m design columns (an intercept is added).
    null : callable, optional
        Gives the fit of ``y`` on ``given`` alone (claims that share a
        response and a separating set share it); fitted here when omitted.

    Returns
    -------
    DirectionTest or None
        None when either model cannot be fitted (separation, no
        convergence, singular information).

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> s = rng.normal(size=(500, 1)); x = rng.normal(size=(500, 1))
    >>> y = (rng.random(500) < 1 / (1 + np.exp(-s[:, 0]))).astype(float)
    >>> t = fit_glm_direction("binary", y, x, s)
    >>> t.test, t.df, bool(t.p > 0.01)
    ('logistic LR', 1, True)
    """
    x0 = np.hstack([np.ones((len(y), 1)), given])
    fit0 = null() if null is not None else fit_null(kind, y, given)
    if fit0 is None:
        return None
    start = None if kind == "categorical" else np.r_[fit0.params, np.zeros(predictor.shape[1])]
    alt = _fit(kind, y, np.hstack([x0, predictor]), start)
    if alt is None:
        return None
    return lr_test(kind, fit0, alt, x0.shape[1], predictor.shape[1])


def fit_null(kind: str, y: np.ndarray, given: np.ndarray) -> GlmFit | None:
    """The model of ``y`` on an intercept and ``given`` (the LR test's null model)."""
    return _fit(kind, y, np.hstack([np.ones((len(y), 1)), given]), None)


def lr_test(kind: str, null: GlmFit, alt: GlmFit, m: int, k: int) -> DirectionTest:
    """Wilks' likelihood-ratio test of the last ``k`` columns (of ``m + k``)."""
    levels = alt.params.shape[1] if alt.params.ndim == 2 else 1
    df = k * levels
    lr = max(2.0 * (alt.llf - null.llf), 0.0)
    if kind == "count":
        lr /= max(alt.dispersion, 1.0)
    p = float(chi2_sf(lr, df))
    name = {"binary": "logistic LR", "count": "Poisson LR", "categorical": "multinomial LR"}[kind]
    coefs = Coefficients(alt.params[m:], alt.bse[m:], 0)
    return DirectionTest(name, float(lr), df, p, coefs)


def _fit(kind: str, y: np.ndarray, X: np.ndarray, start: np.ndarray | None) -> GlmFit | None:
    # statsmodels takes seconds to import: only a study with a non-numeric claim pays it
    from statsmodels.discrete.discrete_model import Logit, MNLogit, Poisson
    from statsmodels.tools.sm_exceptions import (
        ConvergenceWarning,
        HessianInversionWarning,
        PerfectSeparationError,
        PerfectSeparationWarning,
    )

    trouble = (ConvergenceWarning, HessianInversionWarning, PerfectSeparationWarning)
    model = {"binary": Logit, "count": Poisson, "categorical": MNLogit}[kind](y, X, hasconst=True)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", trouble)
            warnings.simplefilter("ignore", RuntimeWarning)
            res = model.fit(start_params=start, method="newton", maxiter=100, disp=0)
    except (*trouble, PerfectSeparationError, np.linalg.LinAlgError, ValueError):
        return None
    params = np.asarray(res.params, dtype=np.float64)
    bse = np.asarray(res.bse, dtype=np.float64)
    if not res.mle_retvals.get("converged", True) or not np.all(np.isfinite(bse)):
        return None
    dispersion = 1.0
    if kind == "count":
        mu = np.exp(np.dot(X, params))  # np.dot, not @: fitting_common's docstring
        dof = max(len(y) - X.shape[1], 1)
        dispersion = float(np.sum((y - mu) ** 2 / mu) / dof)
    return GlmFit(float(res.llf), params, bse, dispersion)
