"""The logistic family: binomial likelihood, logit link, the effect an odds ratio."""

from __future__ import annotations

import math

import numpy as np

from covariscope.analysis.families.base import (
    EXTREME_MU,
    Array,
    CodeRecipe,
    Fitter,
    GlmLink,
    ModelFamily,
    OutcomeField,
    Scratch,
    single_value_error,
)
from covariscope.errors import DataError
from covariscope.vocabulary import Family

__all__ = ["FAMILY", "LogitLink"]


class LogitLink(GlmLink):
    """Binomial likelihood with the logit link (McCullagh & Nelder 1989, ch. 4);
    model-based standard errors from the observed information."""

    two_sided_separation = True
    events_word = "outcomes in the rarer class"

    def block_sums(self, y: Array, eta: Array) -> tuple[float, Array, Array, float, float]:
        """One e = exp(−|η|) serves all: log(1 + eᶯ) = max(η, 0) + log1p(e),
        μ = 1/(1 + e) for η ≥ 0 and e/(1 + e) otherwise, and μ(1 − μ) =
        e/(1 + e)², exact where 1 − μ rounds to zero."""
        e = np.exp(-np.abs(eta))
        dev = (
            float(np.sum(np.log1p(e))) + float(np.sum(np.maximum(eta, 0.0))) - float(np.dot(y, eta))
        )
        r = 1.0 / (1.0 + e)
        low = e * r  # min(μ, 1 − μ)
        mu = np.where(eta >= 0.0, r, low)
        w = low * r
        return 2.0 * dev, y - mu, w, float(np.min(low)), float(np.max(mu))

    def columns_sums(
        self, y: Array, eta: Array, scratch: Scratch
    ) -> tuple[Array, Array, Array, Array, Array]:
        """:meth:`block_sums` column by column (one column of η per model),
        in ``scratch``'s arrays.

        With e = exp(−|η|) and r = 1/(1 + e): min(μ, 1 − μ) = e·r, w = e·r²
        and μ = e·r where η < 0, 1 − e·r elsewhere.  The sums over rows are
        products with a vector of ones (one BLAS call each, through ``np.dot``,
        which lets go of the interpreter lock); Σ max(η, 0) =
        (Σ η + Σ |η|)/2; and as μ rises with η, the smallest min(μ, 1 − μ)
        and the largest μ come from the largest |η| and η.
        """
        shape = eta.shape
        ones = scratch.get("ones", (shape[0],))
        ones.fill(1.0)
        a = scratch.get("a", shape)
        np.abs(eta, out=a)
        dev = 0.5 * (np.dot(ones, eta) + np.dot(ones, a)) - np.dot(y, eta)
        far = a.max(axis=0)
        top = eta.max(axis=0)
        e = a  # |η| is no longer needed
        np.negative(a, out=e)
        np.exp(e, out=e)
        work = scratch.get("work", shape)
        np.log1p(e, out=work)
        dev += np.dot(ones, work)
        r = scratch.get("r", shape)
        np.add(e, 1.0, out=r)
        np.reciprocal(r, out=r)
        np.multiply(e, r, out=e)  # e·r = min(μ, 1 − μ)
        w = scratch.get("w", shape)
        np.multiply(e, r, out=w)
        # y − μ = (y − [η ≥ 0]) + sign(η)·e·r, the sign bit deciding (−0 included);
        # the bracket is −1, 0 or 1 exactly, so a small residual keeps its digits
        np.signbit(eta, out=work)  # 1.0 where η < 0
        np.add(work, y[:, None] - 1.0, out=work)
        resid = r
        np.copysign(e, eta, out=resid)
        np.add(resid, work, out=resid)
        ef, et = np.exp(-far), np.exp(-np.abs(top))
        low = ef / (1.0 + ef)
        high = np.where(top >= 0.0, 1.0 / (1.0 + et), et / (1.0 + et))
        return 2.0 * dev, resid, w, low, high

    def batch_sums(
        self, y: Array, eta: Array, saturated: bool
    ) -> tuple[float, Array, Array, float]:
        """Deviance, μ, weight and smallest min(μ, 1 − μ) of one batch of rows."""
        e = np.exp(-np.abs(eta))
        r = 1.0 / (1.0 + e)
        mu = np.where(eta >= 0.0, r, e * r)
        w = e * r * r
        dev = 2.0 * (
            float(np.sum(np.log1p(e))) + float(np.sum(np.maximum(eta, 0.0))) - float(np.dot(y, eta))
        )
        low = float(np.min(np.minimum(mu, 1.0 - mu))) if len(y) else math.inf
        return dev, mu, w, low

    def start_intercept(self, mean: float, total: float, denominator: float) -> float:
        """The log odds of the outcome's mean (kept inside (0, 1))."""
        ybar = min(max(mean, 1e-6), 1 - 1e-6)
        return math.log(ybar / (1 - ybar))

    def extreme_floor(self, mean: float) -> float:
        """Fitted probabilities within 1e-8 of 0 or 1."""
        return EXTREME_MU

    def events(self, total: float, n: float) -> float:
        """The outcomes in the rarer class."""
        return min(total, n - total)

    def outcome_problem(self, y: Array) -> str:
        """A 0/1 outcome with both classes present."""
        # Sorting for the distinct values only when some value is neither 0 nor 1.
        coded = bool(np.all((y == 0.0) | (y == 1.0)))
        odd = np.zeros(0) if coded else np.setdiff1d(np.unique(y), [0.0, 1.0])
        if odd.size:
            shown = ", ".join(f"{v:g}" for v in odd[:3])
            return f"The outcome must be coded 0/1 for a logistic model; found {shown}."
        events = int(np.count_nonzero(y))
        if events == 0:
            return "No events: the outcome is 0 in every row, so there is nothing to model."
        if events == len(y):
            return "Every row is an event (the outcome is 1 in all rows), so there is nothing to model."
        return ""

    def ratio_words(self, *, counts: bool) -> str:
        """Odds ratios."""
        return "odds ratios"

    def sql_means(self, eta_query: str, y: str, saturated: bool) -> tuple[str, list[str]]:
        """μ, w and log1p(e) in SQL, e = exp(−|η|) as in :meth:`block_sums`."""
        inner = (
            "SELECT *, CASE WHEN eta >= 0 THEN r ELSE e * r END AS mu, e * r * r AS w, "
            f"CASE WHEN e < 1e-5 THEN e - e * e / 2 + e * e * e / 3 ELSE ln(1 + e) END AS l1pe "
            f"FROM (SELECT *, exp(-abs(eta)) AS e, 1.0 / (1.0 + exp(-abs(eta))) AS r FROM ({eta_query}))"
        )
        tail = [
            f"2.0 * (sum(l1pe) + sum(greatest(eta, 0.0)) - sum({y} * eta))",
            "MIN(least(mu, 1.0 - mu))",
        ]
        return inner, tail


def _check(y: Array, column: str) -> None:
    if not np.isin(y, (0.0, 1.0)).all():
        bad = y[~np.isin(y, (0.0, 1.0))][0]
        raise DataError(
            f"Logistic regression needs an outcome coded 0/1, but {column!r} holds {bad:g}; "
            "recode the outcome or choose the linear family."
        )
    if np.all(y == y[0]):
        raise single_value_error(column, float(y[0]))


class _Logistic(ModelFamily):
    def check_outcome(self, y: Array, column: str) -> None:
        """A 0/1 outcome that takes both values."""
        _check(y, column)

    def check_outcome_sums(self, low: float, high: float, not_binary: int, column: str) -> None:
        """A 0/1 outcome that takes both values, from its range and the rows neither 0 nor 1."""
        if not_binary:
            raise DataError(
                f"Logistic regression needs an outcome coded 0/1, but {column!r} holds other "
                f"values in {not_binary:,} rows (from {low:g} to {high:g}); recode the outcome "
                "or choose the linear family."
            )
        if low == high:
            raise single_value_error(column, low)


#: Logistic regression by Newton–Raphson on the binomial likelihood.
FAMILY = _Logistic(
    code=Family.LOGISTIC,
    fields=(
        OutcomeField(
            "outcome",
            "Binary outcome column",
            "A yes/no column (0/1) the logistic model reads; empty: the outcome node's column.",
        ),
    ),
    fitter=Fitter.GLM,
    link=LogitLink(),
    outcome_types=("binary",),
    outcome_need="a yes/no (binary)",
    recipe=CodeRecipe(
        python="smf.logit({formula}, data=data).fit(disp=0)",
        r=("fit <- glm({formula}, family = binomial, data = d)", "s <- coef(summary(fit))"),
        stata=("logit {y} {rhs}",),
    ),
    cautions=(
        "Odds ratios are non-collapsible: the estimate can change on adjustment even without "
        "confounding.",
    ),
)
