"""The linear family: ordinary least squares, the effect a difference in means."""

from __future__ import annotations

from covariscope.analysis.families.base import CodeRecipe, Fitter, ModelFamily, OutcomeField
from covariscope.vocabulary import Family

__all__ = ["FAMILY"]

#: Linear regression by ordinary least squares, from the cached cross-product
#: matrix; t intervals and F tests on the residual degrees of freedom.
FAMILY = ModelFamily(
    code=Family.LINEAR,
    fields=(
        OutcomeField(
            "outcome",
            "Outcome column",
            "The measured outcome; empty: the column bound to the outcome node.",
        ),
    ),
    fitter=Fitter.LEAST_SQUARES,
    recipe=CodeRecipe(
        python="smf.ols({formula}, data=data).fit()",
        r=("fit <- lm({formula}, data = d)", "s <- coef(summary(fit))"),
        stata=("regress {y} {rhs}",),
    ),
)
