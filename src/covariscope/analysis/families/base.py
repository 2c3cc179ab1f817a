"""What a model family is: one object naming everything the program branches on.

A family names its words (the vocabulary's :class:`~covariscope.vocabulary.FamilyTerm`),
the outcome columns it reads, the checks on them, the fitter that estimates it,
the cautions its evidence carries and how other programs write the same model.
The rest of the program asks the family object and never compares family codes:
adding a family is its words in :mod:`covariscope.vocabulary` and its own module
in this package, named by its code and exporting ``FAMILY``
(:mod:`covariscope.analysis.families.registry` reads it).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import Enum
from typing import Any

import numpy as np
import numpy.typing as npt

from covariscope.errors import DataError
from covariscope.vocabulary import FAMILY_TERMS, Family, FamilyTerm

__all__ = [
    "EXTREME_MU",
    "CodeRecipe",
    "Fitter",
    "GlmLink",
    "ModelFamily",
    "OutcomeField",
    "Scratch",
    "single_value_error",
]

Array = npt.NDArray[np.float64]

#: Fitted probabilities (or rates relative to the mean) closer than this to
#: 0 or 1 hint at separation and trigger the separation check.
EXTREME_MU = 1e-8


class Fitter(Enum):
    """The estimation routine a family's models go through."""

    #: ordinary least squares from the cached cross-product matrix (t and F intervals)
    LEAST_SQUARES = "least squares"
    #: Newton–Raphson on a GLM likelihood (:mod:`covariscope.analysis.glm`), the
    #: link's own :class:`GlmLink` giving its means, weights and deviance
    GLM = "glm"
    #: Cox partial likelihood over risk sets (:mod:`covariscope.analysis.survival`)
    COX = "cox"


@dataclass(frozen=True)
class OutcomeField:
    """One outcome setting a family reads: ``key`` in the project's
    ``family_columns`` ("outcome", "time", "event" or "offset"), the dialog's
    label and its one-sentence explanation."""

    key: str
    label: str
    explanation: str


@dataclass(frozen=True)
class CodeRecipe:
    """How statsmodels, R and Stata fit the family's model.

    Templates for :mod:`covariscope.views.model_code`, filled with
    ``str.format``: ``{formula}`` (the model formula, quoted for Python),
    ``{offset}`` (the offset clause, ``python_offset`` / ``stata_offset``
    filled with ``{column}``, empty without an offset), ``{status}`` (the
    event column, quoted), ``{y}``, ``{rhs}``, ``{time}``, ``{event}``
    (Stata names).
    """

    python: str
    r: tuple[str, ...]
    stata: tuple[str, ...]
    python_offset: str = ""
    stata_offset: str = ""


class Scratch:
    """Work arrays reused from block to block of a pass.

    A fresh array of a few megabytes is mapped from the system on every
    allocation and its pages faulted in on first touch, which costs more than
    the arithmetic done in it; a pass asks for its arrays by name and gets the
    same memory each block.
    """

    def __init__(self) -> None:
        self._arrays: dict[str, npt.NDArray[Any]] = {}

    def get(self, name: str, shape: tuple[int, ...], dtype: type = np.float64) -> npt.NDArray[Any]:
        """An uninitialised array of ``shape`` (a view of the memory kept under ``name``)."""
        size = math.prod(shape)
        kept = self._arrays.get(name)
        if kept is None or kept.size < size or kept.dtype != dtype:
            kept = np.empty(max(size, 1), dtype=dtype)
            self._arrays[name] = kept
        return kept[:size].reshape(shape)


class GlmLink:
    """The parts of a generalised linear model that depend on its likelihood.

    Used by the shared Newton loop (:func:`covariscope.analysis.glm_newton.newton_glm`),
    the fused weighted pass (:mod:`covariscope.analysis.passes`) and the
    row-sum fits (:mod:`covariscope.analysis.rows`, the DuckDB queries).
    """

    #: True: the standard error is the robust HC0 sandwich (the pass also sums its meat)
    robust: bool = False
    #: True: the binary outcome's both classes can be predicted perfectly
    #: (separation is symmetric, as in a logistic model)
    two_sided_separation: bool = False
    #: True: the deviance has an outcome-only part (:meth:`saturated`) that the
    #: row-sum fits add batch by batch
    saturated_term: bool = False
    #: what the events-per-parameter caution counts
    events_word: str = "events"

    def block_sums(self, y: Array, eta: Array) -> tuple[float, Array, Array, float, float]:
        """Deviance part, residual y − μ, Newton weight, smallest and largest μ of one block."""
        raise NotImplementedError

    def columns_sums(
        self, y: Array, eta: Array, scratch: Scratch
    ) -> tuple[Array, Array, Array, Array, Array]:
        """:meth:`block_sums` of several models at once: ``eta`` holds one
        column per model; the deviance parts, smallest and largest μ come
        one per column.  The residuals and weights are arrays of ``scratch``,
        valid until its next use."""
        raise NotImplementedError

    def batch_sums(
        self, y: Array, eta: Array, saturated: bool
    ) -> tuple[float, Array, Array, float]:
        """Deviance (with :meth:`saturated`'s part when ``saturated``), μ,
        weight and smallest μ of one batch of rows left in their source."""
        raise NotImplementedError

    def saturated(self, y: Array) -> float:
        """The part of the deviance that depends on the outcome only (added once per pass)."""
        return 0.0

    def start_intercept(self, mean: float, total: float, denominator: float) -> float:
        """The intercept of the null model: ``mean`` of the outcome, its ``total``
        and the sum of exp(offset) (the row count without an offset)."""
        raise NotImplementedError

    def extreme_floor(self, mean: float) -> float:
        """Fitted means below this hint at separation (``mean``: the outcome's mean)."""
        raise NotImplementedError

    def events(self, total: float, n: float) -> float:
        """The events the events-per-parameter caution counts."""
        raise NotImplementedError

    def outcome_problem(self, y: Array) -> str:
        """Why an in-memory outcome cannot be modelled ("" when it can)."""
        raise NotImplementedError

    def ratio_words(self, *, counts: bool) -> str:
        """The estimates' name in the separation message ("odds ratios")."""
        raise NotImplementedError

    def fitted_risk_caution(self, *, binary: bool, mu_high: float) -> str:
        """A caution about fitted means out of range ("" when none)."""
        return ""

    def sql_means(self, eta_query: str, y: str, saturated: bool) -> tuple[str, list[str]]:
        """The DuckDB query adding ``mu`` and ``w`` columns to ``eta_query``, and
        the deviance and smallest-μ aggregates (``y`` names the outcome column)."""
        raise NotImplementedError


@dataclass(frozen=True)
class ModelFamily:
    """One model family: its words, outcome columns, checks, fitter and cautions.

    ``fields`` are the outcome settings it reads (a survival family reads
    time and event, the others an outcome and maybe an offset);
    ``outcome_types`` the column types its outcome may have (empty: any);
    ``outcome_need`` the words for that requirement; ``count_outcome`` True
    when a whole-number outcome is a count (rate ratio); ``cautions`` the
    sentences every evidence table of the family carries; ``memory_reason``
    why its fitter needs the rows in memory (empty: sums over rows left in
    their source suffice).
    """

    code: Family
    fields: tuple[OutcomeField, ...]
    fitter: Fitter
    recipe: CodeRecipe
    outcome_types: tuple[str, ...] = ()
    outcome_need: str = ""
    count_outcome: bool = False
    cautions: tuple[str, ...] = ()
    link: GlmLink | None = None
    memory_reason: str = ""

    # -- words ------------------------------------------------------------------

    @property
    def term(self) -> FamilyTerm:
        """The family's words in the vocabulary."""
        return FAMILY_TERMS[self.code]

    @property
    def ratio(self) -> bool:
        """True when the exposure coefficient is a log ratio (shown on the ratio scale)."""
        return self.term.ratio

    @property
    def noncollapsible(self) -> bool:
        """True when the measure can change on adjustment without confounding."""
        return self.term.noncollapsible

    @property
    def measure_word(self) -> str:
        """The ratio's first word ("odds" for an odds ratio)."""
        return self.term.effect_measure.removesuffix(" ratio")

    # -- outcome columns --------------------------------------------------------

    @property
    def keys(self) -> tuple[str, ...]:
        """The outcome settings it reads, in the dialog's order."""
        return tuple(f.key for f in self.fields)

    @property
    def survival(self) -> bool:
        """True when the outcome is a time and an event (no outcome column)."""
        return "time" in self.keys

    @property
    def takes_offset(self) -> bool:
        """True when the family can read an offset (log person-time)."""
        return "offset" in self.keys

    @property
    def outcome_key(self) -> str:
        """The setting that plays the outcome (the event for a survival family)."""
        return "event" if self.survival else "outcome"

    # -- fitting ----------------------------------------------------------------

    @property
    def intercept(self) -> bool:
        """True when its models hold an intercept (a Cox model's baseline hazard absorbs it)."""
        return self.fitter is not Fitter.COX

    @property
    def least_squares(self) -> bool:
        """True for least squares: fits from cross-products, t and F intervals."""
        return self.fitter is Fitter.LEAST_SQUARES

    @property
    def row_sums(self) -> bool:
        """True when its models can be fitted from sums over rows left in their source."""
        return not self.memory_reason

    @property
    def glm(self) -> GlmLink:
        """The GLM link of a :attr:`Fitter.GLM` family (``ValueError`` otherwise)."""
        if self.link is None:
            raise ValueError(f"The {self.term.model} is not a generalised linear model.")
        return self.link

    @property
    def crude_params(self) -> int:
        """Parameters of the crude model (the exposure, and the intercept)."""
        return 1 + int(self.intercept)

    # -- outcome checks ---------------------------------------------------------

    def check_outcome(self, y: Array, column: str) -> None:
        """Raise :class:`DataError` when the in-memory outcome ``y`` cannot be modelled."""

    def check_time(self, time: Array, column: str) -> None:
        """Raise :class:`DataError` when a survival family's times cannot be modelled."""

    def check_event(self, event: Array, column: str) -> None:
        """Raise :class:`DataError` when a survival family's event indicator cannot be modelled."""

    def check_outcome_sums(self, low: float, high: float, not_binary: int, column: str) -> None:
        """Raise :class:`DataError` when an outcome summarised by its range and
        the count of rows neither 0 nor 1 cannot be modelled (rows left in their source)."""


def single_value_error(column: str, value: float) -> DataError:
    """The error for an outcome with one value in every row of the analytic sample."""
    return DataError(
        f"The outcome {column!r} takes the single value {value:g} in every row of the analytic "
        "sample, so no effect on it can be estimated."
    )
