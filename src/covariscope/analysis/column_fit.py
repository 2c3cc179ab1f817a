"""One model on arbitrary columns of a design: exposure first, any extra
columns (product terms, a spline basis) after it, fitted in the design's
family through the public fitting functions."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from covariscope.analysis.design import Design

__all__ = ["ColumnFit", "fit_columns"]


@dataclass(frozen=True)
class ColumnFit:
    """Coefficients (exposure first) and their covariance; residual df for a linear model."""

    coef: np.ndarray
    cov: np.ndarray
    df_resid: int | None


def fit_columns(design: Design, X: np.ndarray, names: list[str]) -> ColumnFit | str:
    """Fit exposure-first columns ``X`` (no intercept) in the design's family.

    Returns the coefficients and their covariance (exposure first, the
    intercept left out), or the reason the model could not be fitted.
    """
    family = design.family
    if family == "linear":
        from covariscope.analysis.linear import linear_summary, solve_ols

        assert design.y is not None
        values = np.column_stack([X, design.y])
        res = solve_ols(linear_summary(values), list(range(X.shape[1])), X.shape[1])
        if res is None or res.cov is None:
            return "the model's columns are exactly collinear"
        return ColumnFit(res.coef, res.cov, res.df_resid)
    if family == "cox":
        from covariscope.analysis.survival import fit_cox

        assert design.time is not None
        assert design.event is not None
        fit, _ = fit_cox(X, design.time, design.event, column_names=names, terms=())
    else:
        from covariscope.analysis.glm import fit_glm

        assert design.y is not None
        Xi = np.column_stack([np.ones(len(X)), X])
        fit, _ = fit_glm(
            Xi,
            design.y,
            family,
            column_names=["(intercept)", *names],
            terms=(),
            offset=design.offset,
        )
    if not fit.ok or fit.cov is None:
        return fit.message or "the model could not be fitted"
    coef = np.array([fit.coefficient(n) for n in names], dtype=float)
    return ColumnFit(coef, fit.cov, None)
