"""Every word the user sees for a kind, role, verdict, family, column type or
threshold, defined once.

Each enumeration is a :class:`~enum.StrEnum` whose values are the stable codes
written to project files and to ``check --json``, and a frozen table that
gives every code its :class:`Term`: the label the screens and the page show,
a short label where space is tight, and a one-sentence explanation.  The
canvas, the review table, the diagnostics dialog, the page, ``check`` and the
JSON Schema read their words from here, so they cannot drift apart.

Examples
--------
>>> ROLE_TERMS[Role.DESCENDANT_OF_EXPOSURE].label
'descendant of exposure'
>>> family_term("logistic").effect_measure
'odds ratio'
>>> group_key(["income", "area"])
'area|income'
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from enum import StrEnum
from types import MappingProxyType

__all__ = [
    "CAUTIONS",
    "CAUTION_BRIEF",
    "CHANGE_SIGN",
    "CHANGE_SIGN_RATIO",
    "CLAIM_CAUTION",
    "CLAIM_CAUTION_SHORT",
    "CLAIM_TEST_TERMS",
    "COLUMN_TYPE_TERMS",
    "CONCEPT_TERMS",
    "CORRECTION_TERMS",
    "DEFAULT_CLAIM_LIMIT",
    "DEFAULT_THRESHOLDS",
    "ENGINE_TERMS",
    "FAMILY_TERMS",
    "KIND_TERMS",
    "REVIEW_COLUMN_TERMS",
    "ROLE_TERMS",
    "STRENGTH_TERMS",
    "THRESHOLD_TERMS",
    "VERDICT_TERMS",
    "ClaimTest",
    "ColumnTerm",
    "ColumnType",
    "Correction",
    "Engine",
    "Family",
    "FamilyTerm",
    "Kind",
    "ModificationForm",
    "ReviewColumn",
    "Role",
    "StrengthKind",
    "Term",
    "Threshold",
    "ThresholdTerm",
    "Untestable",
    "VerdictCode",
    "change_read",
    "column_tooltip",
    "family_term",
    "group_key",
    "role_label",
    "verdict_label",
]


@dataclass(frozen=True)
class Term:
    """The words for one code: ``label`` (full), ``short`` (where space is
    tight) and ``explanation`` (one plain sentence)."""

    code: str
    label: str
    short: str
    explanation: str


# -- node kinds ------------------------------------------------------------------------


class Kind(StrEnum):
    """What a node of the diagram stands for."""

    EXPOSURE = "exposure"
    OUTCOME = "outcome"
    COVARIATE = "covariate"


KIND_TERMS: Mapping[Kind, Term] = MappingProxyType(
    {
        Kind.EXPOSURE: Term(
            "exposure", "exposure", "EXPOSURE", "The variable whose effect is estimated."
        ),
        Kind.OUTCOME: Term(
            "outcome", "outcome", "OUTCOME", "The variable the exposure is thought to affect."
        ),
        Kind.COVARIATE: Term(
            "covariate",
            "covariate",
            "covariate",
            "Any other variable of the diagram, a candidate for adjustment.",
        ),
    }
)


# -- roles (DESIGN §2, first rule that holds wins) -------------------------------------


class Role(StrEnum):
    """The role of a covariate for the total effect of the exposure on the outcome."""

    MEDIATOR = "mediator"
    DESCENDANT_OF_OUTCOME = "descendant_of_outcome"
    DESCENDANT_OF_EXPOSURE = "descendant_of_exposure"
    CONFOUNDER = "confounder"
    COLLIDER = "collider"
    INSTRUMENT = "instrument"
    PRECISION = "precision"
    CONFOUNDER_PROXY = "confounder_proxy"
    UNRELATED = "unrelated"


ROLE_TERMS: Mapping[Role, Term] = MappingProxyType(
    {
        Role.MEDIATOR: Term(
            "mediator",
            "mediator",
            "mediator",
            "A descendant of the exposure and a cause of the outcome: on the causal pathway.",
        ),
        Role.DESCENDANT_OF_OUTCOME: Term(
            "descendant_of_outcome",
            "descendant of outcome",
            "after outcome",
            "An effect of the outcome; adjusting for it can bias the estimate.",
        ),
        Role.DESCENDANT_OF_EXPOSURE: Term(
            "descendant_of_exposure",
            "descendant of exposure",
            "after exposure",
            "An effect of the exposure that is not on the way to the outcome.",
        ),
        Role.CONFOUNDER: Term(
            "confounder",
            "confounder",
            "confounder",
            "A non-collider on a backdoor path that is open when nothing is adjusted.",
        ),
        Role.COLLIDER: Term(
            "collider",
            "collider",
            "collider",
            "Adjusting for it alone opens a backdoor path that is otherwise blocked.",
        ),
        Role.INSTRUMENT: Term(
            "instrument",
            "instrument",
            "instrument",
            "Linked to the exposure, but linked to the outcome only through the exposure.",
        ),
        Role.PRECISION: Term(
            "precision",
            "precision",
            "precision",
            "A cause of the outcome not linked to the exposure; it can sharpen the estimate.",
        ),
        Role.CONFOUNDER_PROXY: Term(
            "confounder_proxy",
            "confounder proxy",
            "proxy",
            "Linked to both ends but on no open backdoor path; it may stand in for an "
            "unmeasured confounder.",
        ),
        Role.UNRELATED: Term(
            "unrelated",
            "unrelated",
            "unrelated",
            "The diagram links it to neither end in a way that matters for adjustment.",
        ),
    }
)


# -- verdicts ---------------------------------------------------------------------------


class VerdictCode(StrEnum):
    """What to do with a covariate: role, evidence and thresholds put together."""

    ADJUST = "adjust"
    KEEP_ONE_OF = "keep_one_of"
    EXCLUDE_MEASURES_EXPOSURE = "exclude_measures_exposure"
    EXCLUDE_PATHWAY = "exclude_pathway"
    EXCLUDE_DESCENDANT = "exclude_descendant"
    EXCLUDE_COLLIDER = "exclude_collider"
    OPTIONAL_PRECISION = "optional_precision"
    NOT_NEEDED = "not_needed"
    AVOID_INSTRUMENT = "avoid_instrument"
    CONSIDER_PROXY = "consider_proxy"
    REVIEW = "review"
    UNMEASURED = "unmeasured"


VERDICT_TERMS: Mapping[VerdictCode, Term] = MappingProxyType(
    {
        VerdictCode.ADJUST: Term(
            "adjust", "Adjust", "Adjust", "A confounder: adjust for it to remove its bias."
        ),
        VerdictCode.KEEP_ONE_OF: Term(
            "keep_one_of",
            "Keep one of",
            "Keep one",
            "Collinear confounders that close the same paths: adjust for one of them.",
        ),
        VerdictCode.EXCLUDE_MEASURES_EXPOSURE: Term(
            "exclude_measures_exposure",
            "Exclude — measures the exposure",
            "Exclude",
            "It measures the exposure itself; adjusting for it removes the effect sought.",
        ),
        VerdictCode.EXCLUDE_PATHWAY: Term(
            "exclude_pathway",
            "Exclude — on the pathway",
            "Exclude",
            "A mediator: adjusting for it removes part of the total effect.",
        ),
        VerdictCode.EXCLUDE_DESCENDANT: Term(
            "exclude_descendant",
            "Exclude — descendant",
            "Exclude",
            "An effect of the exposure or the outcome: adjusting for it can bias the estimate.",
        ),
        VerdictCode.EXCLUDE_COLLIDER: Term(
            "exclude_collider",
            "Exclude — collider",
            "Exclude",
            "Adjusting for it opens a backdoor path and brings in bias.",
        ),
        VerdictCode.OPTIONAL_PRECISION: Term(
            "optional_precision",
            "Optional — precision",
            "Optional",
            "Not needed against bias; it may narrow the confidence interval.",
        ),
        VerdictCode.NOT_NEEDED: Term(
            "not_needed",
            "Not needed — unrelated",
            "Not needed",
            "The diagram links it to neither end; adjusting changes nothing but the variance.",
        ),
        VerdictCode.AVOID_INSTRUMENT: Term(
            "avoid_instrument",
            "Avoid — instrument-like",
            "Avoid",
            "Adjusting for it adds variance and removes no bias.",
        ),
        VerdictCode.CONSIDER_PROXY: Term(
            "consider_proxy",
            "Consider — proxy of a confounder",
            "Consider",
            "It closes no path itself, but may reduce bias from a confounder not measured.",
        ),
        VerdictCode.REVIEW: Term(
            "review",
            "Review — diagram and data disagree",
            "Review",
            "The data move the estimate where the diagram says they should not: check both.",
        ),
        VerdictCode.UNMEASURED: Term(
            "unmeasured",
            "Not measured",
            "Not measured",
            "The variable was not measured, so it cannot be adjusted for.",
        ),
    }
)


# -- model families ---------------------------------------------------------------------


class Family(StrEnum):
    """The regression model every comparison model of a study uses."""

    LINEAR = "linear"
    LOGISTIC = "logistic"
    RISK_RATIO = "risk_ratio"
    COX = "cox"


@dataclass(frozen=True)
class FamilyTerm(Term):
    """A family's words: ``model`` names the regression in the trade's words,
    ``effect_measure`` (``count_measure`` for a count outcome) what it
    estimates; ``ratio`` is True when the exposure coefficient is a log ratio,
    ``noncollapsible`` when the measure can change on adjustment without
    confounding (odds and hazard ratios)."""

    model: str
    effect_measure: str
    count_measure: str
    ratio: bool
    noncollapsible: bool


FAMILY_TERMS: Mapping[Family, FamilyTerm] = MappingProxyType(
    {
        Family.LINEAR: FamilyTerm(
            "linear",
            "Linear (mean difference)",
            "Linear",
            "For a measured outcome; the effect is a difference in means.",
            model="linear regression",
            effect_measure="mean difference",
            count_measure="mean difference",
            ratio=False,
            noncollapsible=False,
        ),
        Family.LOGISTIC: FamilyTerm(
            "logistic",
            "Logistic (odds ratio)",
            "Logistic",
            "For a yes/no outcome; the effect is an odds ratio.",
            model="logistic regression",
            effect_measure="odds ratio",
            count_measure="odds ratio",
            ratio=True,
            noncollapsible=True,
        ),
        Family.RISK_RATIO: FamilyTerm(
            "risk_ratio",
            "Log-link Poisson, robust SE (risk or rate ratio)",
            "Risk ratio",
            "For a yes/no outcome (risk ratio) or a count (rate ratio, optional offset).",
            model="log-link Poisson regression with robust SE",
            effect_measure="risk ratio",
            count_measure="rate ratio",
            ratio=True,
            noncollapsible=False,
        ),
        Family.COX: FamilyTerm(
            "cox",
            "Cox proportional hazards (hazard ratio)",
            "Cox",
            "For time to an event; the effect is a hazard ratio.",
            model="Cox proportional hazards regression",
            effect_measure="hazard ratio",
            count_measure="hazard ratio",
            ratio=True,
            noncollapsible=True,
        ),
    }
)


def family_term(family: str) -> FamilyTerm:
    """The words of a family given by its code; ``ValueError`` names the known codes.

    >>> family_term("cox").ratio
    True
    """
    try:
        return FAMILY_TERMS[Family(family)]
    except ValueError:
        known = ", ".join(f.value for f in Family)
        raise ValueError(f"unknown model family {family!r} (known: {known})") from None


def change_read(
    change_pct: float | None, change_pct_ratio: float | None, *, ratio: bool
) -> float | None:
    """The change in estimate that the threshold reads (DESIGN §2): on the
    ratio scale for ratio measures (``ratio`` True), on the coefficient scale
    otherwise; None when that change is undefined or not finite.

    >>> change_read(12.0, 8.0, ratio=True), change_read(12.0, None, ratio=False)
    (8.0, 12.0)
    """
    value = change_pct_ratio if ratio else change_pct
    return value if value is not None and math.isfinite(value) else None


# -- column types -----------------------------------------------------------------------


class ColumnType(StrEnum):
    """How a data column is read."""

    CONTINUOUS = "continuous"
    BINARY = "binary"
    CATEGORICAL = "categorical"
    COUNT = "count"
    DATE = "date"
    IDENTIFIER = "identifier"
    TEXT = "text"


COLUMN_TYPE_TERMS: Mapping[ColumnType, Term] = MappingProxyType(
    {
        ColumnType.CONTINUOUS: Term(
            "continuous", "continuous", "cont.", "A measurement, entered as a number."
        ),
        ColumnType.BINARY: Term(
            "binary", "binary", "bin.", "Two levels, coded 0/1 against the reference level."
        ),
        ColumnType.CATEGORICAL: Term(
            "categorical",
            "categorical",
            "cat.",
            "Several levels, each contrasted with the reference level.",
        ),
        ColumnType.COUNT: Term("count", "count", "count", "A whole number of events or items."),
        ColumnType.DATE: Term("date", "date", "date", "A calendar date; not used in a model."),
        ColumnType.IDENTIFIER: Term(
            "identifier",
            "identifier",
            "id",
            "A row label such as a participant number; not used in a model.",
        ),
        ColumnType.TEXT: Term("text", "text", "text", "Free text; not used in a model."),
    }
)


# -- thresholds (guides, common practice) -----------------------------------------------


class Threshold(StrEnum):
    """The editable guides the verdicts compare the evidence with."""

    CHANGE_PCT = "change_pct"
    SE_INFLATION_PCT = "se_inflation_pct"
    VIF = "vif"
    R2 = "r2"
    CONDITION_INDEX = "condition_index"
    MODIFICATION_P = "modification_p"
    MODIFICATION_RATIO = "modification_ratio"


class ModificationForm(StrEnum):
    """How the exposure's effect across a modifier's levels was estimated."""

    #: linear combinations of one model with exposure × covariate product terms
    MODEL = "model"
    #: separate fits on each stratum's rows
    STRATA = "strata"


@dataclass(frozen=True)
class ThresholdTerm(Term):
    """A threshold's words and its default (common practice, a guide)."""

    default: float


THRESHOLD_TERMS: Mapping[Threshold, ThresholdTerm] = MappingProxyType(
    {
        Threshold.CHANGE_PCT: ThresholdTerm(
            "change_pct",
            "Change in estimate (%)",
            "change",
            "A covariate that moves the exposure estimate by more than this is taken to "
            "confound it (on the ratio scale for ratio measures).",
            default=10.0,
        ),
        Threshold.SE_INFLATION_PCT: ThresholdTerm(
            "se_inflation_pct",
            "SE inflation (%)",
            "SE inflation",
            "An increase of the exposure estimate's standard error past this is called inflation.",
            default=20.0,
        ),
        Threshold.VIF: ThresholdTerm(
            "vif",
            "Variance inflation factor",
            "VIF",
            "A VIF above this marks a covariate as collinear with the others.",
            default=10.0,
        ),
        Threshold.R2: ThresholdTerm(
            "r2",
            "R² of the exposure on a covariate",
            "R²",
            "Above this, with SE inflation, a covariate is read as a measure of the exposure.",
            default=0.9,
        ),
        Threshold.CONDITION_INDEX: ThresholdTerm(
            "condition_index",
            "Condition index",
            "condition index",
            "A condition index of the full model above this points at a collinear group.",
            default=30.0,
        ),
        Threshold.MODIFICATION_P: ThresholdTerm(
            "modification_p",
            "Effect modification: interaction p below",
            "interaction p",
            "A covariate whose interaction test with the exposure has p below this, and whose "
            "stratum estimates differ by the ratio guide, is flagged as a possible modifier "
            "(not a confounder; no reason to adjust or not).",
            default=0.05,
        ),
        Threshold.MODIFICATION_RATIO: ThresholdTerm(
            "modification_ratio",
            "Effect modification: stratum estimates' ratio",
            "ratio of stratum estimates",
            "With the interaction p guide, the ratio of the largest to the smallest stratum "
            "estimate past which a covariate is flagged as a possible modifier.",
            default=1.5,
        ),
    }
)

#: The default of every threshold, by code (common practice; guides, not rules).
DEFAULT_THRESHOLDS: Mapping[str, float] = MappingProxyType(
    {t.value: term.default for t, term in THRESHOLD_TERMS.items()}
)


# -- diagram checks (DESIGN §6: the diagram's independence claims) -----------------------


class Correction(StrEnum):
    """Multiplicity corrections of the diagram's independence claims."""

    HOLM = "holm"
    BH = "bh"


CORRECTION_TERMS: Mapping[Correction, Term] = MappingProxyType(
    {
        Correction.HOLM: Term(
            "holm",
            "Holm's step-down correction",
            "Holm correction",
            "Keeps the chance of any false alarm among all claims at 5% (Holm 1979).",
        ),
        Correction.BH: Term(
            "bh",
            "the Benjamini–Hochberg false-discovery-rate correction",
            "Benjamini–Hochberg correction",
            "Keeps the expected share of false alarms among the failed claims at 5% "
            "(Benjamini & Hochberg 1995); flags more claims than Holm.",
        ),
    }
)


class StrengthKind(StrEnum):
    """The readable strength a tested claim carries."""

    PARTIAL_CORRELATION = "partial_correlation"
    STANDARDISED_COEFFICIENT = "standardised_coefficient"
    STANDARDISED_DIFFERENCE = "standardised_difference"
    ODDS_RATIO = "odds_ratio"
    ODDS_RATIO_PER_SD = "odds_ratio_per_sd"


STRENGTH_TERMS: Mapping[StrengthKind, Term] = MappingProxyType(
    {
        StrengthKind.PARTIAL_CORRELATION: Term(
            "partial_correlation",
            "partial correlation",
            "partial r",
            "The correlation of the two once the separating set is held fixed.",
        ),
        StrengthKind.STANDARDISED_COEFFICIENT: Term(
            "standardised_coefficient",
            "standardised coefficient",
            "std. coef.",
            "SDs of one variable per SD of the other, the separating set held fixed.",
        ),
        StrengthKind.STANDARDISED_DIFFERENCE: Term(
            "standardised_difference",
            "standardised difference",
            "std. diff.",
            "How far a level lies from the reference level, in SDs of the numeric variable.",
        ),
        StrengthKind.ODDS_RATIO: Term(
            "odds_ratio",
            "odds ratio",
            "OR",
            "The odds ratio of the binary (or categorical) variable, the set held fixed.",
        ),
        StrengthKind.ODDS_RATIO_PER_SD: Term(
            "odds_ratio_per_sd",
            "odds ratio per SD",
            "OR per SD",
            "The odds ratio of the binary variable per SD of the numeric one.",
        ),
    }
)


class ClaimTest(StrEnum):
    """The test a claim's result reports (the more conservative direction)."""

    LINEAR_T = "linear t"
    LINEAR_F = "linear F"
    LOGISTIC_LR = "logistic LR"
    POISSON_LR = "Poisson LR"
    MULTINOMIAL_LR = "multinomial LR"


CLAIM_TEST_TERMS: Mapping[ClaimTest, Term] = MappingProxyType(
    {
        ClaimTest.LINEAR_T: Term(
            "linear t", "t test, linear regression", "t", "Least squares, one column."
        ),
        ClaimTest.LINEAR_F: Term(
            "linear F", "F test, linear regression", "F", "Least squares, several columns."
        ),
        ClaimTest.LOGISTIC_LR: Term(
            "logistic LR",
            "likelihood-ratio test, logistic regression",
            "LR (logistic)",
            "A binary variable modelled on the other and the set.",
        ),
        ClaimTest.POISSON_LR: Term(
            "Poisson LR",
            "likelihood-ratio test, Poisson regression",
            "LR (Poisson)",
            "A count modelled on the other and the set; over-dispersion scaled out.",
        ),
        ClaimTest.MULTINOMIAL_LR: Term(
            "multinomial LR",
            "likelihood-ratio test, multinomial regression",
            "LR (multinomial)",
            "A categorical variable modelled on the other and the set.",
        ),
    }
)


class Untestable(StrEnum):
    """Why a pair with no arrow between them has no tested claim."""

    UNMEASURED = "unmeasured"
    MEASURES_ENDPOINT = "measures_endpoint"
    NO_FIT = "no_fit"


#: Claims tested by default; the analyst may raise it (common practice: a diagram
#: of 22 measured variables implies at most 231 claims, most far fewer).
DEFAULT_CLAIM_LIMIT = 200

#: The cautions that go with the diagram checks, in full and in a few words.
CLAIM_CAUTION = (
    "A claim that passes is no proof that the diagram is right (the data may lack the power "
    "to see a departure), and a large sample flags departures too small to matter: read the "
    "strength, not only the p-value."
)
CLAIM_CAUTION_SHORT = "Passing is no proof; read the strength, not only p."


# -- cautions (DESIGN §7) ---------------------------------------------------------------

#: What every output says beside its findings, in plain words.
CAUTIONS: tuple[str, ...] = (
    "The diagram encodes assumptions that the data cannot fully test.",
    "The thresholds are rules of thumb, shown as guides, not rules.",
    "Unmeasured confounding is possible; the E-value says how strong it would have to be.",
    "Covariscope supports the analyst's judgment and the pre-specified analysis plan; "
    "it does not replace them.",
)

#: The cautions in one sentence, where a list has no room (the analysis's messages).
CAUTION_BRIEF = (
    "The diagram holds assumptions the data cannot fully test; the thresholds are guides, "
    "not rules, and unmeasured confounding is possible."
)


# -- data engines (DESIGN §3 "Data sources") --------------------------------------------


class Engine(StrEnum):
    """What reads a study's data: "auto" picks memory or DuckDB by the file's size."""

    AUTO = "auto"
    MEMORY = "memory"
    DUCKDB = "duckdb"
    DASK = "dask"


ENGINE_TERMS: Mapping[Engine, Term] = MappingProxyType(
    {
        Engine.AUTO: Term(
            "auto",
            "Automatic: in memory when the file fits, else read where it lies",
            "Automatic",
            "Loads the file into memory unless it would take more than 40% of the memory "
            "available; then DuckDB reads it where it lies.",
        ),
        Engine.MEMORY: Term(
            "memory",
            "In memory (pandas)",
            "In memory",
            "Every row is loaded; the fastest for files that fit in memory.",
        ),
        Engine.DUCKDB: Term(
            "duckdb",
            "DuckDB, reading the file where it lies",
            "DuckDB",
            "The file (Parquet or CSV) is queried where it lies and never loaded whole; "
            "every number is a sum the database computes.",
        ),
        Engine.DASK: Term(
            "dask",
            "Dask, summing on a cluster",
            "Dask",
            "A Parquet file is summed on a Dask cluster (its address, or a local one); "
            'needs pip install "covariscope[cluster]".',
        ),
    }
)

# -- small shared rules ------------------------------------------------------------------


def group_key(members: Iterable[str]) -> str:
    """The name of a measure group or collinear group: its member ids, sorted,
    joined by ``|`` (DESIGN §2).

    >>> group_key(("b", "a"))
    'a|b'
    """
    return "|".join(sorted(members))


def role_label(role: str | None) -> str | None:
    """The label of a role code (None when there is no role)."""
    return ROLE_TERMS[Role(role)].label if role else None


def verdict_label(code: str | None) -> str | None:
    """The label of a verdict code (None when there is no verdict)."""
    return VERDICT_TERMS[VerdictCode(code)].label if code else None


# -- the review table's columns and the numbers behind them -----------------------------


class ReviewColumn(StrEnum):
    """A column of the covariate review table (and of its CSV export)."""

    COVARIATE = "covariate"
    ROLE = "role"
    CHANGE_ADDED = "change_added"
    CHANGE_DROPPED = "change_dropped"
    SE_INFLATION = "se_inflation"
    VIF = "vif"
    MODIFIES = "modifies"
    VERDICT = "verdict"
    PROPOSED = "proposed"


@dataclass(frozen=True)
class ColumnTerm(Term):
    """A review column's words: ``formula`` says how its number is computed
    (on the coefficient scale) and ``ratio_formula`` how, where it differs,
    for ratio measures (odds, risk, rate and hazard ratios)."""

    formula: str = ""
    ratio_formula: str = ""

    def formula_for(self, ratio: bool) -> str:
        """The formula on the scale the column shows (ratio measures or not)."""
        return self.ratio_formula if ratio and self.ratio_formula else self.formula


#: The sign of a change in estimate, on either scale (DESIGN §2).
CHANGE_SIGN = (
    "Sign: a positive change means the exposure estimate is larger with the covariate than "
    "without it, a negative one that it is smaller."
)
#: The same for ratio measures, where "larger" is read on the ratio scale.
CHANGE_SIGN_RATIO = (
    "For ratio measures the change is on the ratio scale: positive means the ratio is larger "
    "with the covariate than without it (a ratio below 1 moves toward 1, a ratio above 1 away "
    "from 1); negative means it is smaller."
)

_CHANGE_COEF = "100 × (b_with − b_without) / |b_without|, b the exposure coefficient"
_CHANGE_RATIO = (
    "100 × (exp(b_with − b_without) − 1) = 100 × (ratio_with / ratio_without − 1), "
    "b the exposure coefficient (a log ratio)"
)

REVIEW_COLUMN_TERMS: Mapping[ReviewColumn, ColumnTerm] = MappingProxyType(
    {
        ReviewColumn.COVARIATE: ColumnTerm(
            "covariate",
            "Covariate",
            "Covariate",
            "The covariate's label on the diagram, with its data column in brackets where the "
            "two differ.",
        ),
        ReviewColumn.ROLE: ColumnTerm(
            "role",
            "Role",
            "Role",
            "What the diagram says the covariate is for the total effect of the exposure on "
            "the outcome (see Roles).",
        ),
        ReviewColumn.CHANGE_ADDED: ColumnTerm(
            "change_added",
            "Added: change %",
            "Added: change %",
            "How far adding the covariate alone to the crude model (outcome on exposure) moves "
            "the exposure estimate: with = crude + covariate, without = crude.",
            formula=_CHANGE_COEF,
            ratio_formula=_CHANGE_RATIO,
        ),
        ReviewColumn.CHANGE_DROPPED: ColumnTerm(
            "change_dropped",
            "Dropped: change %",
            "Dropped: change %",
            "How far the exposure estimate of the full candidate model differs from the same "
            "model without the covariate: with = full, without = full − covariate.",
            formula=_CHANGE_COEF,
            ratio_formula=_CHANGE_RATIO,
        ),
        ReviewColumn.SE_INFLATION: ColumnTerm(
            "se_inflation",
            "SE inflation %",
            "SE inflation %",
            "How much adding the covariate alone to the crude model widens the standard error "
            "of the exposure estimate (negative: it narrows it).",
            formula="100 × (SE_with / SE_without − 1), with = crude + covariate, without = crude",
        ),
        ReviewColumn.VIF: ColumnTerm(
            "vif",
            "VIF",
            "VIF",
            "Variance inflation factor of the covariate in the full candidate model: how much "
            "its collinearity with the other terms inflates its coefficient's variance.",
            formula=(
                "VIF = 1 / (1 − R²), R² of the covariate on every other term of the full model "
                "(with an intercept); tolerance = 1 / VIF; for a multi-level term "
                "GVIF^(1/df) (Fox & Monette 1992)"
            ),
        ),
        ReviewColumn.MODIFIES: ColumnTerm(
            "modifies",
            "Modifies effect",
            "Modifies effect",
            "Whether the exposure's effect differs across the covariate's levels (effect "
            "modification). It is not confounding and no reason to adjust for it or not.",
            formula=(
                "yes when the exposure × covariate interaction test has p below its guide and "
                "the largest and smallest stratum estimates differ by more than their ratio guide"
            ),
        ),
        ReviewColumn.VERDICT: ColumnTerm(
            "verdict",
            "Verdict",
            "Verdict",
            "What to do with the covariate: its role, the data's evidence and the guides put "
            "together (see Verdicts); the full reason is under the table.",
        ),
        ReviewColumn.PROPOSED: ColumnTerm(
            "proposed",
            "In proposed set",
            "In proposed set",
            "Ticked when the covariate is in the proposed set, the set you plan to adjust for; "
            "tick or untick to change it.",
        ),
    }
)


def column_tooltip(column: ReviewColumn, *, ratio: bool = False) -> str:
    """A review column's definition with its formula (and, for the change
    columns, the sign convention), as one plain paragraph.

    >>> column_tooltip(ReviewColumn.SE_INFLATION).startswith("How much adding")
    True
    """
    term = REVIEW_COLUMN_TERMS[column]
    text = term.explanation
    formula = term.formula_for(ratio)
    if formula:
        text += f" Formula: {formula}."
    if column in (ReviewColumn.CHANGE_ADDED, ReviewColumn.CHANGE_DROPPED):
        text += " " + (CHANGE_SIGN_RATIO if ratio else CHANGE_SIGN)
    return text


# -- the concepts every screen names ------------------------------------------------------

#: The trade's concepts the screens and the page use, each defined once (the glossary
#: lists them; DESIGN §2).
CONCEPT_TERMS: tuple[Term, ...] = (
    Term(
        "backdoor_path",
        "Backdoor path",
        "backdoor path",
        "A path between the exposure and the outcome, arrows taken either way, whose first "
        "arrow points into the exposure. It is open when no non-collider on it is adjusted for "
        "and every collider on it (or a descendant of one) is.",
    ),
    Term(
        "proposed_set",
        "Proposed set",
        "proposed",
        "The covariates you tick to adjust for; the program says whether the diagram finds it "
        "sufficient, and which members it could do without (either one, not both, where two "
        "close the same path).",
    ),
    Term(
        "minimal_set",
        "Minimal sufficient set",
        "minimal set",
        "A set of measured covariates that closes every backdoor path and holds no descendant "
        "of the exposure, none of whose members can be dropped (the backdoor criterion).",
    ),
    Term(
        "recommended_set",
        "Recommended set",
        "recommended",
        "The minimal sufficient set the program suggests: it keeps the member of a collinear "
        "group that carries the most of the confounding, then prefers your proposed set.",
    ),
    Term(
        "proxy_link",
        "Proxy link",
        "proxy link",
        "An undirected link saying two variables measure the same thing; linked covariates "
        "form a measure group that the diagram treats as one construct.",
    ),
    Term(
        "crude_model",
        "Crude model",
        "crude",
        "The outcome on the exposure alone.",
    ),
    Term(
        "full_model",
        "Full model",
        "full",
        "The outcome on the exposure and every measured candidate covariate.",
    ),
    Term(
        "analytic_sample",
        "Analytic sample",
        "sample",
        "The rows complete on the outcome, the exposure and every candidate covariate, so "
        "that every compared model sees the same rows.",
    ),
)
