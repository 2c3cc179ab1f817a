"""The result of one fitted comparison model, shared by every model family."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from covariscope.vocabulary import RATIO_FAMILIES, Family, family_term

__all__ = ["FAMILIES", "Fit", "effect_measure"]

#: Model families, by the name used in project files and in ``check --json``.
FAMILIES: tuple[str, ...] = tuple(Family)


def effect_measure(family: str, *, count_outcome: bool = False) -> str:
    """Name of the effect measure a family estimates, in the trade's words.

    >>> effect_measure("logistic")
    'odds ratio'
    """
    term = family_term(family)
    return term.count_measure if count_outcome else term.effect_measure


@dataclass(frozen=True)
class Fit:
    """One fitted model, seen from the exposure's coefficient.

    ``ok`` is False when the model could not be fitted; ``message`` then says
    why in plain words and the numbers are NaN.  ``terms`` are the node ids
    of the covariates in the model (the exposure and intercept are implied).
    """

    family: str
    terms: tuple[str, ...]
    coef: float
    se: float
    ci: tuple[float, float]
    n: int
    ok: bool = True
    converged: bool = True
    message: str = ""
    warnings: tuple[str, ...] = ()
    resid_sd: float | None = None  # linear models only
    df_resid: int | None = None  # linear models only
    n_params: int = 0
    #: coefficient, SE and CI of every covariate term's columns, by design column name
    term_coefs: dict[str, tuple[float, float, float, float]] = field(default_factory=dict)

    @property
    def ratio(self) -> float | None:
        """exp(coef) for ratio families, else None."""
        if self.family in RATIO_FAMILIES and self.ok:
            return math.exp(self.coef)
        return None

    @property
    def ratio_ci(self) -> tuple[float, float] | None:
        if self.family in RATIO_FAMILIES and self.ok:
            return (math.exp(self.ci[0]), math.exp(self.ci[1]))
        return None

    @classmethod
    def failed(cls, family: str, terms: tuple[str, ...], n: int, message: str) -> Fit:
        nan = float("nan")
        return cls(
            family, terms, nan, nan, (nan, nan), n, ok=False, converged=False, message=message
        )
