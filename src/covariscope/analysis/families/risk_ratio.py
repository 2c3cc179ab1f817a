"""The risk-ratio family: log-link Poisson with robust standard errors, the effect
a risk ratio (0/1 outcome) or a rate ratio (count outcome, optional offset)."""

from __future__ import annotations

import math

import numpy as np
from scipy import special

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

__all__ = ["FAMILY", "PoissonLink"]


class PoissonLink(GlmLink):
    """Poisson likelihood with the log link and the robust HC0 sandwich SE, the
    modified Poisson regression of Zou (2004, Am J Epidemiol 159:702)."""

    robust = True
    saturated_term = True

    def block_sums(self, y: Array, eta: Array) -> tuple[float, Array, Array, float, float]:
        """μ = exp(η) (η capped at 700), the weight μ, deviance 2(Σμ − y'η)."""
        mu = np.exp(np.minimum(eta, 700.0))
        dev = 2.0 * (float(np.sum(mu)) - float(np.dot(y, eta)))
        return dev, y - mu, mu, float(np.min(mu)), float(np.max(mu))

    def columns_sums(
        self, y: Array, eta: Array, scratch: Scratch
    ) -> tuple[Array, Array, Array, Array, Array]:
        """:meth:`block_sums` column by column (one column of η per model), in ``scratch``'s arrays."""
        mu = scratch.get("mu", eta.shape)
        np.minimum(eta, 700.0, out=mu)
        np.exp(mu, out=mu)
        dev = 2.0 * (mu.sum(axis=0) - np.dot(y, eta))
        resid = scratch.get("resid", eta.shape)
        np.subtract(y[:, None], mu, out=resid)
        return dev, resid, mu, mu.min(axis=0), mu.max(axis=0)

    def batch_sums(
        self, y: Array, eta: Array, saturated: bool
    ) -> tuple[float, Array, Array, float]:
        """Deviance (with Σ y log y − y when ``saturated``), μ, weight and smallest μ."""
        mu = np.exp(np.minimum(eta, 700.0))
        pos = y[y > 0]
        sat = float(np.sum(pos * np.log(pos) - pos)) if saturated else 0.0
        dev = 2.0 * (float(np.sum(mu)) - float(np.dot(y, eta)) + sat)
        low = float(np.min(mu)) if len(y) else math.inf
        return dev, mu, mu, low

    def saturated(self, y: Array) -> float:
        """Σ (y log y − y), which makes the deviance zero at μ = y."""
        return float(np.sum(special.xlogy(y, y) - y))

    def start_intercept(self, mean: float, total: float, denominator: float) -> float:
        """The log of the overall rate."""
        return math.log(max(total, 1e-10) / denominator)

    def extreme_floor(self, mean: float) -> float:
        """Fitted rates below 1e-8 of the mean."""
        return EXTREME_MU * mean

    def events(self, total: float, n: float) -> float:
        """The events (the outcome's total)."""
        return total

    def outcome_problem(self, y: Array) -> str:
        """Counts or 0/1, some events, not all equal."""
        if np.any(y < 0):
            return "The outcome has negative values: a Poisson model needs counts or 0/1 outcomes."
        if not np.any(y > 0):
            return "No events: the outcome is 0 in every row, so there is nothing to model."
        if np.ptp(y) == 0.0:
            return (
                f"All outcomes are the same ({y[0]:g} in every row), so there is nothing to model."
            )
        return ""

    def ratio_words(self, *, counts: bool) -> str:
        """Rate ratios for counts, risk ratios for a 0/1 outcome."""
        return "rate ratios" if counts else "risk ratios"

    def fitted_risk_caution(self, *, binary: bool, mu_high: float) -> str:
        """A log-link model of a 0/1 outcome can fit risks above 1."""
        if binary and mu_high > 1.0 + 1e-9:
            return (
                f"Some fitted risks exceed 1 (largest {mu_high:.3g}); the risk "
                "ratios remain usable but the fitted risks are not."
            )
        return ""

    def sql_means(self, eta_query: str, y: str, saturated: bool) -> tuple[str, list[str]]:
        """μ = w = exp(η) in SQL, as in :meth:`block_sums`."""
        inner = f"SELECT *, exp(least(eta, 700.0)) AS mu, exp(least(eta, 700.0)) AS w FROM ({eta_query})"
        sat = f"sum(CASE WHEN {y} > 0 THEN {y} * ln({y}) - {y} ELSE 0.0 END)"
        tail = [
            f"2.0 * (sum(mu) - sum({y} * eta) + {sat if saturated else '0.0'})",
            "MIN(mu)",
        ]
        return inner, tail


class _RiskRatio(ModelFamily):
    def check_outcome(self, y: Array, column: str) -> None:
        """A 0/1 or count outcome that varies."""
        if (y < 0).any():
            raise _negative(column)
        if np.all(y == y[0]):
            raise single_value_error(column, float(y[0]))

    def check_outcome_sums(self, low: float, high: float, not_binary: int, column: str) -> None:
        """A 0/1 or count outcome that varies, from its range."""
        if low < 0:
            raise _negative(column)
        if low == high:
            raise single_value_error(column, low)


def _negative(column: str) -> DataError:
    return DataError(
        f"The risk/rate-ratio model needs a 0/1 or count outcome, but {column!r} has negative "
        "values; recode the outcome or choose the linear family."
    )


#: Log-link Poisson regression with robust standard errors (Zou 2004).
FAMILY = _RiskRatio(
    code=Family.RISK_RATIO,
    fields=(
        OutcomeField(
            "outcome",
            "Binary or count outcome column",
            "A yes/no or count column; empty: the outcome node's column.",
        ),
        OutcomeField(
            "offset",
            "Offset column (optional)",
            "The log of person-time for a rate ratio; empty: no offset.",
        ),
    ),
    fitter=Fitter.GLM,
    link=PoissonLink(),
    outcome_types=("binary", "count"),
    outcome_need="a yes/no or count",
    count_outcome=True,
    recipe=CodeRecipe(
        python=(
            "smf.glm({formula}, data=data,\n"
            '              family=sm.families.Poisson(){offset}).fit(cov_type="HC0")'
        ),
        python_offset=", offset=data[{column}]",
        r=(
            'fit <- glm({formula}, family = poisson(link = "log"), data = d)',
            "# robust (HC0 sandwich) standard errors",
            's <- lmtest::coeftest(fit, vcov. = sandwich::vcovHC(fit, type = "HC0"))',
        ),
        stata=(
            "* vce(robust) scales the sandwich by n/(n-1) (from memory), so its SE is",
            "* a little larger than the HC0 one Covariscope shows",
            "poisson {y} {rhs},{offset} vce(robust) irr",
        ),
        stata_offset=" offset({column})",
    ),
    cautions=(
        "Standard errors are robust (sandwich) ones from the log-link Poisson model, "
        "as Zou (2004) proposed for risk ratios.",
    ),
)
