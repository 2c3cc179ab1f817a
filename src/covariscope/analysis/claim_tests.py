"""Test a diagram's independence claims on the analytic sample.

Each claim ``a ⫫ b | S`` (see :mod:`covariscope.analysis.claims`) is tested
by regression with the family that fits each variable's type (see
:mod:`covariscope.analysis.claim_fits`).  Where the test is asymmetric —
any pair but two continuous variables — both directions are fitted and the
more conservative (larger) p-value is reported: a claim fails only when
both regressions disagree with it.  The p-values of all claims are then
adjusted for multiplicity, by Holm's step-down method (default) or by the
Benjamini–Hochberg false-discovery rate.

The strength shown beside each claim is one the analyst can read:

- two continuous variables: the partial correlation, with the Fisher-z
  interval;
- a continuous or count variable with another count: the standardised
  coefficient (SD change of one per SD of the other), with its t interval;
- a binary variable with another: the odds ratio from the logistic
  regression of the binary one (per SD of a numeric partner, or for the
  level furthest from the reference of a categorical one), Wald interval;
- a categorical variable with a numeric one: the standardised difference
  (in SDs of the numeric variable) of the level furthest from the reference;
- two categorical variables: the largest odds ratio of the multinomial model.

A passing test is no proof that the diagram is right (the data may lack the
power to see a departure), and a large sample flags departures too small to
matter: read the strength, not only the p-value.

References
----------
Holm, S. (1979). A simple sequentially rejective multiple test procedure.
*Scand. J. Statist.* 6(2), 65–70.
Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery rate.
*J. R. Statist. Soc. B* 57(1), 289–300.
Fisher, R. A. (1924). The distribution of the partial correlation
coefficient. *Metron* 3, 329–332.
Chinn, S. (2000). A simple method for converting an odds ratio to effect
size for use in meta-analysis. *Stat. Med.* 19(22), 3127–3131.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property, partial

import numpy as np

from covariscope.analysis.claim_fits import (
    DirectionTest,
    GlmFit,
    fit_glm_direction,
    fit_null,
    linear_direction,
)
from covariscope.analysis.claims import CORRECTIONS, Claim, ClaimSet, Untestable
from covariscope.analysis.design import Design
from covariscope.analysis.distributions import norm_ppf, t_ppf
from covariscope.analysis.families import family_of
from covariscope.analysis.linear import LinearSummary, linear_summary
from covariscope.vocabulary import StrengthKind

__all__ = [
    "STRENGTH_KINDS",
    "ClaimData",
    "ClaimMemo",
    "ClaimOutcome",
    "ClaimResult",
    "DiagramChecks",
    "Strength",
    "adjust_p",
    "check_claims",
    "claim_data",
    "design_claim_data",
]

#: Kinds of strength a claim's result may carry.
STRENGTH_KINDS: tuple[str, ...] = tuple(k.value for k in StrengthKind)

_TYPES = frozenset({"continuous", "binary", "count", "categorical"})
_NUMERIC = frozenset({"continuous", "count"})
_Z975 = float(norm_ppf(0.975))


@dataclass(frozen=True, eq=False)
class ClaimData:
    """The analytic sample's numbers, as the claim tests read them.

    Attributes
    ----------
    values : ndarray
        n × q design columns (binary coded 0/1, categorical as reference
        dummies).
    columns : mapping
        Node id → its column positions in ``values``.
    types : mapping
        Node id → ``continuous``, ``binary``, ``count`` or ``categorical``.
    summary : LinearSummary
        Means and co-moments of ``values`` (the study's cross-product matrix).
    names : tuple of str
        Column names (for naming a level), or empty.
    """

    values: np.ndarray
    columns: Mapping[str, tuple[int, ...]]
    types: Mapping[str, str]
    summary: LinearSummary
    names: tuple[str, ...] = ()

    @property
    def n(self) -> int:
        return int(self.summary.n)

    @property
    def rows_in_memory(self) -> bool:
        """False when the rows stay in their source (only the summary is here)."""
        return bool(self.values.shape[0] == self.summary.n)


def claim_data(
    values: np.ndarray,
    columns: Mapping[str, Sequence[int]],
    types: Mapping[str, str],
    *,
    summary: LinearSummary | None = None,
    names: Sequence[str] = (),
) -> ClaimData:
    """Bundle the numbers for :func:`check_claims`, reusing a summary when given.

    >>> v = np.array([[0.0, 1.2], [1.0, 0.3], [1.0, 2.2], [0.0, 0.1]])
    >>> d = claim_data(v, {"x": [0], "c": [1]}, {"x": "binary", "c": "continuous"})
    >>> d.n, d.columns["c"]
    (4, (1,))
    """
    for node, kind in types.items():
        if kind not in _TYPES:
            raise ValueError(f"unknown type {kind!r} for {node!r}")
    values = np.asarray(values, dtype=np.float64)
    return ClaimData(
        values=values,
        columns={k: tuple(v) for k, v in columns.items()},
        types=dict(types),
        summary=summary if summary is not None else linear_summary(values),
        names=tuple(names),
    )


def _outcome_type(design: Design, y: np.ndarray) -> str:
    if np.isin(y, (0.0, 1.0)).all():
        return "binary"
    whole = bool(np.all(y >= 0) and np.all(np.floor(y) == y))
    return "count" if whole and family_of(design.family).count_outcome else "continuous"


def design_claim_data(
    design: Design, summary: LinearSummary, outcome: str | None = None
) -> ClaimData:
    """The claim tests' view of a study's design, reusing its cross-product summary.

    The exposure and every covariate with a varying column take part; the
    outcome too when the design holds it (``outcome`` its node id).  A
    categorical column with one contrast is tested as binary.

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> frame = pd.DataFrame({"x": [0, 1, 0, 1, 1, 0], "c": [1.0, 2.0, 0.5, 3.0, 2.5, 1.5],
    ...                       "y": [1.0, 2.5, 0.5, 2.0, 3.0, 1.1]})
    >>> d = make_design(frame, exposure=TermSpec("x", "binary"),
    ...                 covariates={"c": TermSpec("c", "continuous")}, outcome="y", family="linear")
    >>> data = design_claim_data(d, linear_summary(d.values), "y")
    >>> sorted(data.types.items())
    [('c', 'continuous'), ('x', 'binary'), ('y', 'continuous')]
    """
    columns: dict[str, tuple[int, ...]] = {design.exposure_node: design.exposure_index}
    for node, block in design.blocks.items():
        if node not in design.constant:
            columns[node] = block.index
    types = {node: design.types.get(node, "continuous") for node in columns}
    for node, cols in columns.items():
        if types[node] == "categorical" and len(cols) == 1:
            types[node] = "binary"
    names = list(design.column_names)
    if design.y is not None and outcome is not None:
        columns[outcome] = (design.outcome_index,)
        types[outcome] = _outcome_type(design, design.y)
        # by position: a grown design names its outcome's column ""
        names[design.outcome_index : design.outcome_index + 1] = [outcome]
    elif design.row_stats is not None and outcome is not None:
        # Rows in their source: the outcome is the summary's last column.
        columns[outcome] = (design.outcome_index,)
        stats = design.row_stats
        binary = stats.outcome_not_binary == 0
        types[outcome] = (
            "binary"
            if binary
            else "count"
            if family_of(design.family).count_outcome
            else "continuous"
        )
        names.append(outcome)
    return ClaimData(design.values, columns, types, summary, tuple(names))


@dataclass(frozen=True)
class Strength:
    """How strongly the data disagree with a claim, on a readable scale.

    ``level`` names the design column the value belongs to when the
    partner is categorical; ``size`` puts every kind on one scale for
    ranking (a correlation-like number in [0, 1)).
    """

    value: float
    kind: str
    low: float
    high: float
    level: str = ""

    @property
    def size(self) -> float:
        """|r|, |β|, or d and ln OR converted to r (Cohen 1988; Chinn 2000)."""
        if self.kind in ("partial_correlation", "standardised_coefficient"):
            return abs(self.value)
        if self.kind == "standardised_difference":
            d = abs(self.value)
        else:
            d = abs(math.log(self.value)) * math.sqrt(3.0) / math.pi if self.value > 0 else 0.0
        return d / math.sqrt(d * d + 4.0)


@dataclass(frozen=True)
class ClaimResult:
    """One claim's test: the reported (more conservative) direction and strength."""

    claim: Claim
    test: str
    statistic: float
    df: int
    p: float
    p_adjusted: float
    strength: Strength
    failed: bool
    df_denominator: int | None = None


@dataclass(frozen=True)
class DiagramChecks:
    """Every testable claim of the diagram, tested and corrected for multiplicity."""

    method: str
    alpha: float
    n: int
    results: tuple[ClaimResult, ...]
    untestable: tuple[Untestable, ...]
    omitted: int
    limit: int
    warnings: tuple[str, ...] = field(default=())
    #: pairs not looked at: the listing of claims stopped at its search budget
    unsearched: int = 0

    @property
    def tested(self) -> int:
        return len(self.results)

    @property
    def failed(self) -> int:
        return sum(r.failed for r in self.results)

    def ranked(self) -> tuple[ClaimResult, ...]:
        """Failed claims first, each part by strength (largest first)."""
        return self._ranked

    @cached_property
    def _ranked(self) -> tuple[ClaimResult, ...]:
        # sorted once per result: the verdicts ask once per covariate
        return tuple(
            sorted(
                self.results,
                key=lambda r: (not r.failed, -r.strength.size, r.claim.a, r.claim.b),
            )
        )

    def failures_involving(self, node: str) -> tuple[ClaimResult, ...]:
        """Failed claims with ``node`` as one of the pair, strongest first."""
        return tuple(r for r in self.ranked() if r.failed and node in (r.claim.a, r.claim.b))


def adjust_p(p: Sequence[float], method: str = "holm") -> np.ndarray:
    """Adjusted p-values by Holm (``"holm"``) or Benjamini–Hochberg (``"bh"``).

    Holm's step-down adjustment is written out here: statsmodels'
    ``multipletests`` gives the same numbers (the tests check it) but runs a
    full garbage collection on every Holm call, which costs a large
    interactive process a noticeable pause.  Benjamini–Hochberg is
    ``multipletests(method="fdr_bh")``.

    >>> [round(float(v), 3) for v in adjust_p([0.01, 0.04, 0.03], "holm")]
    [0.03, 0.06, 0.06]
    """
    if method not in CORRECTIONS:
        raise ValueError(f"unknown correction {method!r}; use one of {', '.join(CORRECTIONS)}")
    pv = np.asarray(p, dtype=float)
    if pv.size == 0:
        return np.zeros(0)
    if method == "bh":
        from statsmodels.stats.multitest import multipletests  # seconds to import: on demand

        return np.asarray(multipletests(pv, method="fdr_bh")[1])
    order = np.argsort(pv, kind="stable")
    steps = pv[order] * np.arange(pv.size, 0, -1)
    out = np.empty_like(pv)
    out[order] = np.minimum(np.maximum.accumulate(steps), 1.0)
    return out


# -- one claim -------------------------------------------------------------------------------


class _Fits:
    """The direction fits of one run, so the strength reuses a p-value's model."""

    def __init__(self, data: ClaimData) -> None:
        self.data = data
        self._done: dict[tuple[str, str, tuple[str, ...], bool], DirectionTest | None] = {}
        self._null: dict[tuple[str, tuple[str, ...]], GlmFit | None] = {}

    def direction(
        self, response: str, predictor: str, given: tuple[str, ...], *, linear: bool = False
    ) -> DirectionTest | None:
        """Test of ``predictor`` in the model of ``response``; least squares when ``linear``."""
        linear = linear or self.data.types[response] == "continuous"
        key = (response, predictor, given, linear)
        if key not in self._done:
            self._done[key] = self._fit(response, predictor, given, linear)
        return self._done[key]

    def _fit(
        self, response: str, predictor: str, given: tuple[str, ...], linear: bool
    ) -> DirectionTest | None:
        d = self.data
        s_cols = [c for g in given for c in d.columns[g]]
        p_cols = list(d.columns[predictor])
        if linear:
            return linear_direction(d.summary, d.columns[response][0], p_cols, s_cols)
        kind, y, given_values = (
            d.types[response],
            _response_values(d, response),
            d.values[:, s_cols],
        )

        def null() -> GlmFit | None:
            key = (response, given)
            if key not in self._null:
                self._null[key] = fit_null(kind, y, given_values)
            return self._null[key]

        return fit_glm_direction(kind, y, d.values[:, p_cols], given_values, null=null)


def _response_values(d: ClaimData, node: str) -> np.ndarray:
    cols = d.values[:, list(d.columns[node])]
    if d.types[node] != "categorical":
        return np.asarray(cols[:, 0])
    # Level codes: 0 for the reference (all dummies zero), j for the j-th dummy.
    return np.asarray(np.where(cols.any(axis=1), cols.argmax(axis=1) + 1, 0), dtype=np.float64)


def _strength_direction(d: ClaimData, a: str, b: str) -> tuple[str, str]:
    """(response, predictor) of the model whose coefficient is the readable strength."""
    ta, tb = d.types[a], d.types[b]
    if ta in _NUMERIC and tb in _NUMERIC:
        return (b, a) if tb == "continuous" and ta != "continuous" else (a, b)
    if "binary" in (ta, tb):
        return (a, b) if ta == "binary" else (b, a)
    if ta == "categorical" and tb == "categorical":
        return (a, b)
    return (b, a) if ta == "categorical" else (a, b)


def _sd(d: ClaimData, col: int) -> float:
    return float(math.sqrt(d.summary.comoment[col, col] / max(d.summary.n - 1, 1)))


def strength_of(d: ClaimData, response: str, predictor: str, t: DirectionTest) -> Strength:
    """The readable strength of a direction's predictor coefficients (see module notes)."""
    kr, kp = d.types[response], d.types[predictor]
    coef, se = np.atleast_2d(t.coefficients.coef.T).T, np.atleast_2d(t.coefficients.se.T).T
    i, j = np.unravel_index(int(np.argmax(np.abs(coef))), coef.shape)
    b, s = float(coef[i, j]), float(se[i, j])
    p_col = d.columns[predictor][int(i)]
    level = d.names[p_col] if kp == "categorical" and d.names else ""
    if kr in _NUMERIC:
        if kp == "categorical":
            scale, kind = 1.0 / _sd(d, d.columns[response][0]), "standardised_difference"
        elif kr == "continuous" and kp == "continuous":
            return _partial_r(t, d.n)
        else:
            scale = _sd(d, p_col) / _sd(d, d.columns[response][0])
            kind = "standardised_coefficient"
        q = float(t_ppf(0.975, max(t.coefficients.df_resid, 1)))
        return Strength(b * scale, kind, (b - q * s) * scale, (b + q * s) * scale, level)
    per_sd = kp in _NUMERIC
    scale = _sd(d, p_col) if per_sd else 1.0
    lo, hi = (b - _Z975 * s) * scale, (b + _Z975 * s) * scale
    kind = "odds_ratio_per_sd" if per_sd else "odds_ratio"
    return Strength(math.exp(b * scale), kind, math.exp(lo), math.exp(hi), level)


def _partial_r(t: DirectionTest, n: int) -> Strength:
    """Partial correlation from the t statistic, Fisher-z interval (Fisher 1924)."""
    df = t.coefficients.df_resid
    r = t.statistic / math.sqrt(t.statistic**2 + df)
    given = n - df - 2  # columns in the conditioning set
    half = _Z975 / math.sqrt(max(n - given - 3, 1))
    z = math.atanh(max(min(r, 1 - 1e-15), -1 + 1e-15))
    return Strength(r, "partial_correlation", math.tanh(z - half), math.tanh(z + half))


#: one claim's test: the reported direction and the strength, or why none was fitted
ClaimOutcome = tuple[DirectionTest, Strength] | str

#: ``memo(claim, test)``: ``test()``'s answer, or one kept from an earlier run
ClaimMemo = Callable[[Claim, Callable[[], ClaimOutcome]], ClaimOutcome]

_ROWS_ELSEWHERE = (
    "the rows stay in the data source, where only claims between numeric variables are "
    "tested (from the cross-product matrix)"
)


def _test_claim(fits: _Fits, claim: Claim) -> ClaimOutcome:
    """The reported direction and the strength, or why no model could be fitted."""
    d = fits.data
    a, b, given = claim.a, claim.b, claim.given
    if not d.rows_in_memory and not {d.types[a], d.types[b]} <= _NUMERIC:
        return _ROWS_ELSEWHERE
    symmetric = d.types[a] == "continuous" and d.types[b] == "continuous"
    pairs = [(a, b)] if symmetric else [(a, b), (b, a)]
    # Rows left in their source: least squares from the cross-product matrix only.
    summary_only = not d.rows_in_memory
    tried = [(r, p, fits.direction(r, p, given, linear=summary_only)) for r, p in pairs]
    done = [(r, p, t) for r, p, t in tried if t is not None]
    if not done:
        return (
            "the regression models could not be fitted (separation, collinearity or no convergence)"
        )
    reported = max(done, key=lambda x: x[2].p)[2]
    sr, sp = _strength_direction(d, a, b)
    st = fits.direction(sr, sp, given, linear=d.types[sr] in _NUMERIC)
    if st is None:
        return "the model that measures the strength could not be fitted"
    return reported, strength_of(d, sr, sp, st)


def _announced(
    on_claim: Callable[[int, int], None] | None, k: int, n: int, fits: _Fits, claim: Claim
) -> ClaimOutcome:
    """Claim ``k`` of ``n`` tested, after ``on_claim`` heard of it."""
    if on_claim is not None:
        on_claim(k, n)
    return _test_claim(fits, claim)


def check_claims(
    claims: ClaimSet,
    data: ClaimData,
    *,
    method: str = "holm",
    alpha: float = 0.05,
    cancel: Callable[[], bool] | None = None,
    memo: ClaimMemo | None = None,
    on_claim: Callable[[int, int], None] | None = None,
) -> DiagramChecks:
    """Test every claim and adjust the p-values for multiplicity.

    Parameters
    ----------
    claims : ClaimSet
        From :func:`~covariscope.analysis.claims.implied_claims`.
    data : ClaimData
        Every node named in a claim must be in ``data.columns``.
    method : {"holm", "bh"}
        Holm (family-wise error) or Benjamini–Hochberg (false-discovery rate).
    alpha : float
        A claim fails when its adjusted p-value is below ``alpha``.
    cancel : callable, optional
        Checked between claims; a True answer stops the run with the claims
        tested so far (and says so in ``warnings``).
    memo : callable, optional
        ``memo(claim, test)`` returns ``test()``'s answer, or an answer kept
        from an earlier run on the same data for the same pair and
        separating set (the caller's cache: a diagram edit retests only the
        claims it changed).  The multiplicity correction always runs on the
        whole set.
    on_claim : callable, optional
        ``on_claim(k, n)`` is called before claim ``k`` of ``n`` is tested
        (not for an answer ``memo`` kept); what it raises stops the run
        between two claims.

    Examples
    --------
    >>> from covariscope.analysis.claims import implied_claims
    >>> import networkx as nx
    >>> rng = np.random.default_rng(1)
    >>> c = rng.normal(size=800); x = c + rng.normal(size=800); y = x + rng.normal(size=800)
    >>> G = nx.DiGraph([("c", "x"), ("x", "y")])
    >>> data = claim_data(np.column_stack([c, x, y]), {"c": [0], "x": [1], "y": [2]},
    ...                   dict.fromkeys("cxy", "continuous"))
    >>> checks = check_claims(implied_claims(G, "x", "y", "cxy"), data)
    >>> [(r.claim.a, r.claim.b, r.claim.given, r.failed) for r in checks.results]
    [('c', 'y', ('x',), False)]
    """
    fits = _Fits(data)
    done: list[tuple[Claim, DirectionTest, Strength]] = []
    unfit: list[Untestable] = []
    stopped: tuple[str, ...] = ()
    total = len(claims.claims)
    for k, claim in enumerate(claims.claims, start=1):
        if cancel is not None and cancel():
            stopped = (f"Stopped after {len(done)} of {total} claims.",)
            break
        test = partial(_announced, on_claim, k, total, fits, claim)
        outcome = test() if memo is None else memo(claim, test)
        if isinstance(outcome, str):
            unfit.append(Untestable(claim.a, claim.b, "no_fit", detail=outcome))
        else:
            done.append((claim, *outcome))
    adjusted = adjust_p([t.p for _, t, _ in done], method)
    results = tuple(
        ClaimResult(
            c, t.test, t.statistic, t.df, t.p, float(q), s, bool(q < alpha), t.df_denominator
        )
        for (c, t, s), q in zip(done, adjusted, strict=True)
    )
    untestable = tuple(sorted([*claims.untestable, *unfit], key=lambda u: (u.a, u.b)))
    return DiagramChecks(
        method,
        alpha,
        data.n,
        results,
        untestable,
        claims.omitted,
        claims.limit,
        stopped,
        unsearched=claims.unsearched,
    )
