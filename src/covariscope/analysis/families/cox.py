"""The Cox family: proportional hazards, the effect a hazard ratio.

Its numerical work (risk sets sorted once per sample, Efron's ties) lives in
:mod:`covariscope.analysis.risk_sets` and :mod:`covariscope.analysis.survival`.
"""

from __future__ import annotations

import numpy as np

from covariscope.analysis.families.base import (
    Array,
    CodeRecipe,
    Fitter,
    ModelFamily,
    OutcomeField,
)
from covariscope.errors import DataError
from covariscope.vocabulary import Family

__all__ = ["FAMILY"]


class _Cox(ModelFamily):
    def check_time(self, time: Array, column: str) -> None:
        """Positive follow-up times."""
        if (time <= 0).any():
            raise DataError(
                f"Survival times must be positive, but {column!r} has "
                f"{int((time <= 0).sum())} zero or negative values; correct them or drop those rows."
            )

    def check_event(self, event: Array, column: str) -> None:
        """A 0/1 event indicator with at least one event."""
        if not np.isin(event, (0.0, 1.0)).all():
            raise DataError(
                f"The event indicator {column!r} must be coded 0/1 (1 = event); recode it."
            )
        if not event.any():
            raise DataError(
                f"The event indicator {column!r} records no events; a hazard ratio cannot be estimated."
            )


#: Cox regression by partial likelihood (Cox 1972), ties by Efron's method
#: (Efron 1977); no intercept, and the rows must be in memory.
FAMILY = _Cox(
    code=Family.COX,
    fields=(
        OutcomeField("time", "Time column", "Follow-up time to the event or to censoring."),
        OutcomeField(
            "event", "Event column", "1 when the event happened, 0 when the time was censored."
        ),
    ),
    fitter=Fitter.COX,
    memory_reason="the risk sets are sums over rows sorted by time",
    recipe=CodeRecipe(
        python=(
            "smf.phreg({formula}, data=data,\n"
            '               status=data[{status}].to_numpy(), ties="efron").fit()'
        ),
        r=(
            "library(survival)",
            'fit <- coxph({formula}, data = d, ties = "efron")',
            "s <- coef(summary(fit))",
        ),
        stata=("stset {time}, failure({event})", "stcox {rhs}, efron nohr"),
    ),
    cautions=(
        "Hazard ratios are non-collapsible: the estimate can change on adjustment even "
        "without confounding. Ties are handled by Efron's method.",
    ),
)
