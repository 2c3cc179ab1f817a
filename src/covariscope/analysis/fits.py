"""The result of one fitted comparison model, shared by every model family."""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from covariscope.analysis.families import family_of
from covariscope.vocabulary import family_term

__all__ = ["Contrast", "Fit", "effect_measure"]


def effect_measure(family: str, *, count_outcome: bool = False) -> str:
    """Name of the effect measure a family estimates, in the trade's words.

    >>> effect_measure("logistic")
    'odds ratio'
    """
    term = family_term(family)
    return term.count_measure if count_outcome else term.effect_measure


@dataclass(frozen=True)
class Contrast:
    """One level of a multi-level exposure against its reference level, in one model.

    ``level`` is the level compared with the reference (``"current"``; the
    reference is the exposure's first level); ``column`` is its design column.
    """

    level: str
    column: str
    coef: float
    se: float
    ci: tuple[float, float]
    ratio: float | None = None
    ratio_ci: tuple[float, float] | None = None


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
    #: design column names of :attr:`cov` (the exposure's column first; no intercept)
    cov_columns: tuple[str, ...] = ()
    #: covariance matrix of the coefficients of :attr:`cov_columns` (robust for risk ratios)
    cov: np.ndarray | None = field(default=None, compare=False, repr=False)
    #: a multi-level exposure's contrasts against its reference level, in design
    #: order (empty for a binary or continuous exposure)
    contrasts: tuple[Contrast, ...] = ()
    #: which contrast :attr:`coef`, :attr:`se` and :attr:`ci` hold (multi-level
    #: exposures only; the first contrast unless a headline was chosen)
    contrast: str = ""

    def with_contrasts(self, columns: tuple[str, ...], labels: tuple[str, ...]) -> Fit:
        """This fit with its exposure block's contrasts (``columns`` in design
        order, the first being the one :attr:`coef` holds) named by ``labels``.

        >>> fit = Fit("linear", (), 1.0, 0.1, (0.8, 1.2), 50,
        ...           term_coefs={"x[c]": (2.0, 0.2, 1.6, 2.4)})
        >>> [c.coef for c in fit.with_contrasts(("x[b]", "x[c]"), ("b vs a", "c vs a")).contrasts]
        [1.0, 2.0]
        """
        if not self.ok or len(columns) < 2:
            return self
        found = [(self.coef, self.se, *self.ci)] + [
            self.term_coefs.get(c, (math.nan,) * 4) for c in columns[1:]
        ]
        ratio = family_of(self.family).ratio
        contrasts = tuple(
            Contrast(
                label,
                col,
                b,
                se,
                (lo, hi),
                _exp(b) if ratio else None,
                (_exp(lo), _exp(hi)) if ratio else None,
            )
            for label, col, (b, se, lo, hi) in zip(labels, columns, found, strict=True)
        )
        return replace(self, contrasts=contrasts, contrast=labels[0])

    def for_contrast(self, level: str) -> Fit:
        """This fit seen from one contrast: :attr:`coef`, :attr:`se` and
        :attr:`ci` are that contrast's (itself when it has no contrasts)."""
        for c in self.contrasts:
            if c.level == level:
                return replace(self, coef=c.coef, se=c.se, ci=c.ci, contrast=c.level)
        return self

    def covariance(self, columns: tuple[str, ...]) -> np.ndarray | None:
        """The covariance block of ``columns`` (design column names), or None
        when the fit did not keep it or lacks one of them.

        >>> fit = Fit("linear", ("z",), 1.0, 0.1, (0.8, 1.2), 50,
        ...           cov_columns=("x", "z"), cov=np.array([[0.01, 0.002], [0.002, 0.04]]))
        >>> fit.covariance(("z", "x")).tolist()
        [[0.04, 0.002], [0.002, 0.01]]
        """
        if self.cov is None or any(c not in self.cov_columns for c in columns):
            return None
        idx = [self.cov_columns.index(c) for c in columns]
        block: np.ndarray = self.cov[np.ix_(idx, idx)]
        return block

    def coefficient(self, column: str) -> float | None:
        """The coefficient of one design column (the exposure's when it is
        :attr:`cov_columns`'s first), or None when the fit does not hold it."""
        for c in self.contrasts:
            if c.column == column:
                return c.coef
        if self.cov_columns and column == self.cov_columns[0]:
            return self.coef
        hit = self.term_coefs.get(column)
        return None if hit is None else hit[0]

    @property
    def ratio(self) -> float | None:
        """exp(coef) for ratio families, else None."""
        if self.ok and family_of(self.family).ratio:
            return _exp(self.coef)
        return None

    @property
    def ratio_ci(self) -> tuple[float, float] | None:
        if self.ok and family_of(self.family).ratio:
            return (_exp(self.ci[0]), _exp(self.ci[1]))
        return None

    @classmethod
    def failed(cls, family: str, terms: tuple[str, ...], n: int, message: str) -> Fit:
        nan = float("nan")
        return cls(
            family, terms, nan, nan, (nan, nan), n, ok=False, converged=False, message=message
        )


def _exp(value: float) -> float:
    """exp() that gives infinity past the largest double instead of raising
    (a ratio limit of an all-but-separated model); renderings show it as
    not available."""
    try:
        return math.exp(value)
    except OverflowError:
        return math.inf
