"""Effect modification: the exposure effect within levels of a covariate.

Modification is not confounding: it says that the exposure's effect differs
across levels of a covariate, not that the covariate biases the estimate, and
it is no reason to adjust for the covariate or not.  It is looked for in the
recommended model, extended by the covariate's main effect (when the model
lacks it) and the exposure × covariate product terms (the *model* form):

- the exposure effect at each level of a binary or categorical covariate, or
  at the quartiles of a continuous one, is the linear combination
  ``b_X + b_{X×level}`` (``b_X + b_{X×M}·m``) with its Wald interval from
  the model's covariance matrix;
- the interaction test is the Wald test of every product coefficient at once
  (χ² for ratio measures; F = χ²/df on (df, residual df) for a linear model);
- for odds, risk and hazard ratios with a binary exposure and a binary
  covariate, the interaction on the additive scale, the relative excess risk
  due to interaction, ``RERI = e^{b1+b2+b3} − e^{b1} − e^{b2} + 1``, with the
  delta-method interval of Hosmer & Lemeshow (1992).

References
----------
Hosmer, D. W. & Lemeshow, S. (1992). Confidence interval estimation of
interaction. *Epidemiology* 3, 452–456.

VanderWeele, T. J. & Knol, M. J. (2014). A tutorial on interaction.
*Epidemiologic Methods* 3, 33–72.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from covariscope.analysis.column_fit import (
    ColumnFit,
    RowsBuffer,
    near_or_base,
    start_from,
)
from covariscope.analysis.column_tables import ExtraModel, fit_extra_many, fit_model
from covariscope.analysis.design import Design
from covariscope.analysis.distributions import chi2_sf, f_sf, norm_ppf, t_ppf
from covariscope.analysis.families import family_of
from covariscope.analysis.linear import LinearSummary
from covariscope.analysis.quantiles import quantiles
from covariscope.vocabulary import ModificationForm

__all__ = [
    "Modification",
    "Stratum",
    "effect_modification",
    "modification_table",
    "reri",
]

#: Rows counted at a time when strata are counted at the quartiles.
_COUNT_ROWS = 1 << 16


@dataclass(frozen=True)
class Stratum:
    """The exposure effect in one level (or at one value) of the covariate."""

    level: str
    coef: float
    se: float
    ci: tuple[float, float]
    n: int
    #: exp(coef) and its interval for ratio measures, else None
    ratio: float | None = None
    ratio_ci: tuple[float, float] | None = None


@dataclass(frozen=True)
class Modification:
    """What the data say about one covariate as a modifier of the exposure's effect.

    ``spread`` is the ratio of the largest to the smallest stratum estimate:
    on the ratio scale for ratio measures, of the absolute estimates for a
    mean difference (infinite when their signs differ).  ``flagged`` is
    ``interaction_p < p_guide and spread ≥ ratio_guide``.
    """

    node: str
    form: str
    kind: str
    strata: tuple[Stratum, ...]
    interaction_stat: float
    interaction_df: int
    interaction_p: float
    spread: float
    flagged: bool
    reri: float | None = None
    reri_ci: tuple[float, float] | None = None
    message: str = ""
    #: "F" for a linear model's test, "chi2" for the Wald χ² of the others
    interaction_stat_kind: str = "chi2"


def reri(
    b: Sequence[float], cov: np.ndarray, *, level: float = 0.95
) -> tuple[float, float, tuple[float, float]]:
    """RERI and its delta-method interval (Hosmer & Lemeshow 1992).

    Parameters
    ----------
    b : (b1, b2, b3)
        Log-ratio coefficients of the exposure, the modifier and their product.
    cov : 3 × 3 covariance matrix of ``b``.

    Returns
    -------
    (reri, se, (low, high))

    Examples
    --------
    >>> r, se, ci = reri([0.0, 0.0, 0.0], np.eye(3) * 0.01)
    >>> r, round(se, 4)
    (0.0, 0.1)
    """
    b1, b2, b3 = (float(v) for v in b)
    joint = math.exp(b1 + b2 + b3)
    value = joint - math.exp(b1) - math.exp(b2) + 1.0
    grad = np.array([joint - math.exp(b1), joint - math.exp(b2), joint])
    se = math.sqrt(max(float(grad @ cov @ grad), 0.0))
    z = float(norm_ppf(0.5 + level / 2.0))
    return value, se, (value - z * se, value + z * se)


def _wald(b: np.ndarray, V: np.ndarray, df_resid: int | None) -> tuple[float, float]:
    chi2 = float(b @ np.linalg.solve(V, b))
    k = len(b)
    if df_resid is not None:
        f = chi2 / k
        return f, float(f_sf(f, k, df_resid))
    return chi2, float(chi2_sf(chi2, k))


def _strata_values(design: Design, node: str) -> tuple[str, list[tuple[str, np.ndarray, int]]]:
    """(kind, [(label, weights on the product columns, rows in the stratum)]) for the covariate.

    A continuous covariate's rows are counted at the quartile nearest to
    each (the lower one on a tie).
    """
    block = design.blocks[node]
    m = block.values
    if block.levels:
        rest = int(np.count_nonzero(m.sum(axis=1) == 0))
        out = [(f"{block.levels[0]} (reference)", np.zeros(block.df), rest)]
        for j, text in enumerate(block.levels[1:]):
            out.append((text, np.eye(block.df)[j], int(np.count_nonzero(m[:, j] == 1))))
        return "levels", out
    col = m[:, 0] if block.raw is None else block.raw
    q = quantiles(col, [0.25, 0.5, 0.75])  # numpy.quantile's, found with less work
    labels = ("25th percentile", "median", "75th percentile")
    return "quartiles", [
        (f"{name} ({v:.3g})", np.array([v]), count)
        for name, v, count in zip(labels, q, _nearest_counts(col, q), strict=True)
    ]


def _nearest_counts(col: np.ndarray, q: np.ndarray) -> tuple[int, int, int]:
    """How many values lie nearest each of three points, the first point
    winning a tie (as ``argmin`` of the distances would count them), a block
    of rows at a time: no n × 3 array of distances, nor three n-long ones."""
    n0 = n1 = 0
    for at in range(0, len(col), _COUNT_ROWS):
        d0, d1, d2 = (np.abs(col[at : at + _COUNT_ROWS] - v) for v in q)
        first = (d0 <= d1) & (d0 <= d2)
        n0 += int(np.count_nonzero(first))
        n1 += int(np.count_nonzero(~first & (d1 <= d2)))
    return n0, n1, len(col) - n0 - n1


def _spread(coefs: np.ndarray, ratio: bool) -> float:
    if ratio:
        return float(math.exp(coefs.max() - coefs.min()))
    if coefs.min() < 0 < coefs.max() or np.any(coefs == 0):
        return math.inf
    a = np.abs(coefs)
    return float(a.max() / a.min())


def effect_modification(
    design: Design,
    terms: Sequence[str],
    node: str,
    *,
    p_guide: float = 0.05,
    ratio_guide: float = 1.5,
    level: float = 0.95,
    near: ColumnFit | None = None,
    summary: LinearSummary | None = None,
    rows: RowsBuffer | None = None,
) -> Modification:
    """The exposure effect across levels of ``node`` in the model exposure + ``terms``.

    Parameters
    ----------
    design : Design
    terms : node ids of the model's covariates (the recommended set)
    node : the covariate examined as a modifier (added as a main effect when
        not in ``terms``)
    p_guide, ratio_guide : the guides of :attr:`Modification.flagged`
    near : a fit of exposure + ``terms`` (`base_fit`) to start the iterative
        fit from, with the product terms at zero (saves passes over the rows;
        the result is the same)
    summary : the design's means and co-moments, outcome last: a linear
        model then reads only its product columns (`fit_extra`)
    rows : memory for the model's matrix of the rows, reused from model to
        model of a table (`RowsBuffer`)

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(2)
    >>> m = rng.integers(0, 2, 2000); x = rng.normal(size=2000)
    >>> y = x * (1 + 2 * m) + rng.normal(size=2000)
    >>> d = make_design(pd.DataFrame({"x": x, "m": m, "y": y}), exposure=TermSpec("x", "continuous"),
    ...                 covariates={"m": TermSpec("m", "binary")}, outcome="y", family="linear")
    >>> mod = effect_modification(d, [], "m")
    >>> [round(s.coef) for s in mod.strata], mod.flagged
    ([1, 3], True)
    """
    model, k = _modification_model(design, terms, node, near)
    # the products live only inside the fit: gone before the strata are counted
    fitted = fit_model(design, model, summary=summary, rows=rows, consume=True)
    return _modification_result(
        design, node, fitted, list(model.names[:-k]), k, p_guide, ratio_guide, level
    )


def _modification_model(
    design: Design, terms: Sequence[str], node: str, near: ColumnFit | None
) -> tuple[ExtraModel, int]:
    """The interaction model of ``node`` (exposure + ``terms`` + node + the
    exposure's products with it), and how many product columns it has."""
    model_terms = [t for t in design.blocks if t in set(terms) | {node}]
    cols = [0] + [j for t in model_terms for j in design.blocks[t].index]
    names = [design.column_names[j] for j in cols]
    block = design.blocks[node]
    k = block.values.shape[1] if block.raw is None else 1
    pnames = [f"{design.exposure_name}×{node}[{j}]" for j in range(k)]

    def prepare() -> tuple[list[np.ndarray], np.ndarray | None]:
        x = design.values[:, 0]
        # a spline-entered modifier: its main effect is the spline, the product is linear in it
        moderated = block.values if block.raw is None else block.raw[:, None]
        start = None if near is None else start_from(near, [*names, *pnames])
        return [moderated * x[:, None]], start

    return ExtraModel(tuple(cols), (*names, *pnames), prepare), k


def _modification_result(
    design: Design,
    node: str,
    fitted: ColumnFit | str,
    names: list[str],
    k: int,
    p_guide: float,
    ratio_guide: float,
    level: float,
) -> Modification:
    """The strata, interaction test and flag of ``node``'s fitted interaction model."""
    x = design.values[:, 0]
    block = design.blocks[node]
    kind, strata_spec = _strata_values(design, node)
    nan = float("nan")
    if isinstance(fitted, str):
        return Modification(
            node, ModificationForm.MODEL, kind, (), nan, k, nan, nan, False, message=fitted
        )
    ratio = family_of(design.family).ratio
    p_idx = list(range(len(names), len(names) + k))
    z = (
        float(t_ppf(0.5 + level / 2.0, fitted.df_resid))
        if fitted.df_resid is not None
        else float(norm_ppf(0.5 + level / 2.0))
    )
    strata = []
    for label, weights, count in strata_spec:
        a = np.zeros(len(fitted.coef))
        a[0] = 1.0
        a[p_idx] = weights
        b = float(a @ fitted.coef)
        se = math.sqrt(max(float(a @ fitted.cov @ a), 0.0))
        ci = (b - z * se, b + z * se)
        strata.append(
            Stratum(
                label,
                b,
                se,
                ci,
                count,
                math.exp(b) if ratio else None,
                (math.exp(ci[0]), math.exp(ci[1])) if ratio else None,
            )
        )
    stat, p = _wald(fitted.coef[p_idx], fitted.cov[np.ix_(p_idx, p_idx)], fitted.df_resid)
    spread = _spread(np.array([s.coef for s in strata]), ratio)
    r = r_ci = None
    # (a ratio measure only: the test reads the exposure's every row)
    if ratio and block.df == 1 and block.levels and bool(np.isin(x, (0.0, 1.0)).all()):
        m_idx = names.index(block.columns[0])
        idx = [0, m_idx, p_idx[0]]
        r, _, r_ci = reri(
            [float(v) for v in fitted.coef[idx]], fitted.cov[np.ix_(idx, idx)], level=level
        )
    return Modification(
        node=node,
        form=ModificationForm.MODEL,
        kind=kind,
        strata=tuple(strata),
        interaction_stat=stat,
        interaction_df=k,
        interaction_p=p,
        spread=spread,
        flagged=bool(p < p_guide and spread >= ratio_guide),
        reri=r,
        reri_ci=r_ci,
        interaction_stat_kind="F" if fitted.df_resid is not None else "chi2",
    )


def modification_table(
    design: Design,
    terms: Sequence[str],
    candidates: Sequence[str],
    *,
    p_guide: float = 0.05,
    ratio_guide: float = 1.5,
    near: ColumnFit | None = None,
    summary: LinearSummary | None = None,
    on_fit: Callable[[int, int], None] | None = None,
) -> dict[str, Modification]:
    """:func:`effect_modification` of every candidate with data, in the model exposure + ``terms``.

    A covariate whose column never varies, or that is not in the design, is
    left out.  Every fit starts from ``near``, the fit of exposure + ``terms``
    (`base_fit`; fitted here when not given).  With ``summary`` (the
    design's means and co-moments) a linear model reads only its product
    columns.  ``on_fit(k, n)`` is called before each of the ``n`` models is
    fitted (the base fit first, when it is fitted here); whatever it raises
    stops the table between two fits (the window's cancel).

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(2)
    >>> m = rng.integers(0, 2, 500); c = rng.normal(size=500); x = rng.normal(size=500)
    >>> d = make_design(pd.DataFrame({"x": x, "m": m, "c": c, "y": x + c + rng.normal(size=500)}),
    ...                 exposure=TermSpec("x", "continuous"), outcome="y", family="linear",
    ...                 covariates={"m": TermSpec("m", "binary"), "c": TermSpec("c", "continuous")})
    >>> seen = []
    >>> sorted(modification_table(d, ["c"], ["m", "c"], on_fit=lambda k, n: seen.append((k, n))))
    ['c', 'm']
    >>> seen
    [(1, 3), (2, 3), (3, 3)]
    """
    if any(t not in design.blocks for t in terms):
        return {}
    wanted = [c for c in candidates if c in design.blocks and c not in design.constant]
    near, announce, first = near_or_base(design, terms, near, len(wanted), on_fit, summary=summary)
    models = [_modification_model(design, terms, c, near) for c in wanted]
    fits = fit_extra_many(
        design,
        [model for model, _ in models],
        summary=summary,
        announce=lambda k: announce(first + k),
        consume=True,
    )
    return {
        c: _modification_result(
            design, c, fitted, list(model.names[:-k]), k, p_guide, ratio_guide, 0.95
        )
        for c, (model, k), fitted in zip(wanted, models, fits, strict=True)
    }
