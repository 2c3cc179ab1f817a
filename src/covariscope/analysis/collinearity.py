"""Collinearity diagnostics from a :class:`~covariscope.analysis.linear.LinearSummary`.

Variance inflation factors (with an intercept in every auxiliary
regression), generalized VIFs for multi-column terms (Fox & Monette 1992),
condition indices with variance-decomposition proportions (Belsley, Kuh &
Welsch 1980), and exact linear combinations (aliasing) found before any model
is fitted.

References
----------
Fox, J. & Monette, G. (1992). Generalized collinearity diagnostics. *Journal
of the American Statistical Association* 87, 178–183.

Belsley, D. A., Kuh, E. & Welsch, R. E. (1980). *Regression Diagnostics:
Identifying Influential Data and Sources of Collinearity.* Wiley.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from covariscope.analysis.linear import (
    ALIAS_TOLERANCE,
    LinearSummary,
    cholesky_lower,
    inverse_lower,
)

__all__ = [
    "AliasFinding",
    "CollinearityReport",
    "FlaggedDimension",
    "collinearity_report",
    "find_aliases",
    "gvif",
    "vif",
]

INTERCEPT = "(intercept)"


def vif(summary: LinearSummary, columns: Sequence[int]) -> np.ndarray:
    """VIF of each of ``columns`` in the regression on all of them (with intercept).

    The VIF of column j is the j-th diagonal element of the inverse of the
    correlation matrix of the columns, ``1 / (1 − R²_j)``.  Infinite for an
    aliased column.

    >>> from covariscope.analysis.linear import linear_summary
    >>> rng = np.random.default_rng(0)
    >>> x = rng.normal(size=(200, 2)); x[:, 1] += x[:, 0]
    >>> [round(float(v), 1) for v in vif(linear_summary(x), [0, 1])]
    [2.1, 2.1]
    """
    cols = list(columns)
    if len(cols) == 1:
        return np.ones(1)
    chol = cholesky_lower(summary.correlation[np.ix_(cols, cols)])
    if chol is None or np.min(np.diag(chol) ** 2) < ALIAS_TOLERANCE:
        return np.full(len(cols), np.inf)
    inv_l = inverse_lower(chol)
    return np.asarray(np.sum(inv_l**2, axis=0))


def _logdet(r: np.ndarray) -> float:
    if r.shape[0] == 0:
        return 0.0
    chol = cholesky_lower(r)
    if chol is None:
        return -np.inf
    return float(2.0 * np.sum(np.log(np.diag(chol))))


def gvif(summary: LinearSummary, term: Sequence[int], others: Sequence[int]) -> float:
    """Generalized VIF of the columns ``term`` given ``others`` (Fox & Monette 1992).

    ``GVIF = det(R₁₁) det(R₂₂) / det(R)`` with R the correlation matrix of all
    the columns, R₁₁ that of the term's columns and R₂₂ that of the others.
    It equals the VIF for a one-column term and does not depend on how a
    categorical term is coded (for instance on its reference level).

    >>> from covariscope.analysis.linear import linear_summary
    >>> rng = np.random.default_rng(0)
    >>> x = rng.normal(size=(200, 3))
    >>> 1.0 <= gvif(linear_summary(x), [0, 1], [2]) < 1.1
    True
    """
    t, o = list(term), list(others)
    corr = summary.correlation
    both = t + o
    logdet_all = _logdet(corr[np.ix_(both, both)])
    if not np.isfinite(logdet_all):
        return float("inf")
    value = _logdet(corr[np.ix_(t, t)]) + _logdet(corr[np.ix_(o, o)]) - logdet_all
    return float(np.exp(value))


@dataclass(frozen=True)
class AliasFinding:
    """A term whose columns are an exact linear combination of earlier terms' columns."""

    node: str
    combination: tuple[str, ...]
    message: str


def find_aliases(
    summary: LinearSummary, groups: Mapping[str, Sequence[int]]
) -> tuple[AliasFinding, ...]:
    """Terms that are exact linear combinations of the terms before them (and the intercept).

    ``groups`` maps a node id to its column positions, in order of priority:
    the earliest terms are kept and a later term that adds nothing is named.
    Uses a Cholesky factorisation with the columns taken in that order,
    which on a correlation matrix is pivoted QR of the centred, scaled design.

    >>> from covariscope.analysis.linear import linear_summary
    >>> rng = np.random.default_rng(0)
    >>> a = rng.normal(size=50); b = rng.normal(size=50)
    >>> s = linear_summary(np.column_stack([a, b, a + 2 * b]))
    >>> find_aliases(s, {"a": [0], "b": [1], "c": [2]})[0].message
    'c is an exact linear combination of a, b'
    """
    corr = summary.correlation
    kept: list[int] = []
    owner: dict[int, str] = {}
    findings: list[AliasFinding] = []
    for node, cols in groups.items():
        for col in cols:
            if kept:
                sub = corr[np.ix_(kept, kept)]
                chol = cholesky_lower(sub)
                if chol is None:  # cannot happen: the kept columns are independent
                    raise np.linalg.LinAlgError("kept columns lost rank")
                inv_l = inverse_lower(chol)
                border = inv_l @ corr[kept, col]
                tol = float(corr[col, col]) - float(border @ border)
            else:
                tol = float(corr[col, col])  # 1, or 0 for a constant column
            if tol >= ALIAS_TOLERANCE:
                kept.append(col)
                owner[col] = node
                continue
            if corr[col, col] == 0.0:
                # A constant is a multiple of the intercept, whatever else is in the model.
                text = f"{node} is constant: an exact multiple of the intercept"
                if not any(f.node == node for f in findings):
                    findings.append(AliasFinding(node, (INTERCEPT,), text))
                continue
            weights = inv_l.T @ border
            involved: list[str] = []
            for c, w in zip(kept, weights, strict=True):
                if abs(w) > 1e-8 and owner[c] not in involved and owner[c] != node:
                    involved.append(owner[c])
            if not involved:
                involved = [node]  # its own other columns (dummies summing to a constant)
            text = f"{node} is an exact linear combination of {', '.join(involved)}"
            if not any(f.node == node for f in findings):
                findings.append(AliasFinding(node, tuple(involved), text))
    return tuple(findings)


@dataclass(frozen=True)
class FlaggedDimension:
    """One near-dependency: a high condition index shared by two or more variables."""

    index: float
    columns: tuple[str, ...]
    nodes: tuple[str, ...]
    proportions: tuple[float, ...]
    #: its position in :attr:`CollinearityReport.condition_indices`
    dimension: int = -1


@dataclass(frozen=True, eq=False)
class CollinearityReport:
    """Condition indices (ascending: 1 first, the largest last) and
    variance-decomposition proportions; ``flagged`` in the same order.

    ``proportions[k, j]`` is the share of column j's coefficient variance tied
    to dimension k (rows sum over k to 1 for each column).
    """

    columns: tuple[str, ...]
    nodes: tuple[str, ...]
    condition_indices: np.ndarray
    proportions: np.ndarray
    flagged: tuple[FlaggedDimension, ...]
    index_threshold: float
    proportion_threshold: float


def collinearity_report(
    summary: LinearSummary,
    columns: Sequence[int],
    names: Sequence[str],
    nodes: Sequence[str],
    *,
    intercept: bool = True,
    index_threshold: float = 30.0,
    proportion_threshold: float = 0.5,
) -> CollinearityReport:
    """Belsley–Kuh–Welsch condition indices of [intercept | columns].

    Columns (the intercept included) are scaled to unit length and not
    centred.  The raw cross-product is rebuilt from the summary as the factor
    ``F = [[√n, √n·x̄ᵀ], [0, G]]`` with ``GᵀG`` the co-moment matrix, so
    ``FᵀF = [1 X]ᵀ[1 X]`` and the singular values of F (column-scaled) are
    those of the scaled design, without squaring its condition number.
    A dimension is flagged when its index is at least ``index_threshold`` and
    two or more proportions reach ``proportion_threshold`` (BKW's guides 30
    and 0.5).

    >>> from covariscope.analysis.linear import linear_summary
    >>> rng = np.random.default_rng(0)
    >>> x = rng.normal(size=(100, 2))
    >>> r = collinearity_report(linear_summary(x), [0, 1], ["a", "b"], ["a", "b"])
    >>> r.condition_indices.shape, r.flagged
    ((3,), ())
    """
    cols = list(columns)
    n = summary.n
    c = summary.comoment[np.ix_(cols, cols)]
    evals, evecs = np.linalg.eigh(c)
    g = np.sqrt(np.clip(evals, 0.0, None))[:, None] * evecs.T
    mean = summary.mean[cols]
    if intercept:
        k = len(cols) + 1
        f = np.zeros((k, k))
        f[0, 0] = np.sqrt(n)
        f[0, 1:] = np.sqrt(n) * mean
        f[1:, 1:] = g
        all_names = (INTERCEPT, *names)
        all_nodes = (INTERCEPT, *nodes)
    else:
        f = np.vstack([np.sqrt(n) * mean[None, :], g])
        all_names, all_nodes = tuple(names), tuple(nodes)
    norms = np.sqrt(np.sum(f**2, axis=0))
    f = f / np.where(norms > 0, norms, 1.0)
    _, sv, vt = np.linalg.svd(f, full_matrices=False)
    order = np.argsort(-sv)
    sv, vt = sv[order], vt[order]
    with np.errstate(divide="ignore"):
        indices = sv[0] / sv
        phi = (vt**2) / (sv[:, None] ** 2)
    phi = np.where(np.isfinite(phi), phi, np.finfo(float).max)
    props = phi / phi.sum(axis=0, keepdims=True)
    flagged = []
    for k_dim in range(len(sv)):
        high = np.flatnonzero(props[k_dim] >= proportion_threshold)
        if indices[k_dim] >= index_threshold and len(high) >= 2:
            member_nodes: list[str] = []
            for j in high:
                if all_nodes[j] not in member_nodes:
                    member_nodes.append(all_nodes[j])
            flagged.append(
                FlaggedDimension(
                    float(indices[k_dim]),
                    tuple(all_names[j] for j in high),
                    tuple(member_nodes),
                    tuple(float(props[k_dim, j]) for j in high),
                    k_dim,
                )
            )
    # singular values descend, so the indices sv[0]/sv already ascend, as
    # Belsley, Kuh & Welsch tabulate them (the largest, most telling, last)
    return CollinearityReport(
        columns=all_names,
        nodes=all_nodes,
        condition_indices=indices.copy(),
        proportions=props.copy(),
        flagged=tuple(flagged),
        index_threshold=index_threshold,
        proportion_threshold=proportion_threshold,
    )
