"""One weighted pass over the rows: everything a Newton step of a GLM needs.

A Newton (IRLS) step of a logistic or log-link Poisson model at coefficients
β needs the deviance, the score X'(y − μ) and the information X'WX; the
robust (sandwich) standard errors of the Poisson model need X' diag((y − μ)²) X
as well.  `glm_pass` computes all of them in one read of the rows, block by
block, so that each block of X is fetched from memory once and used while it
is in the processor cache; a long pass is cut into ranges of rows summed on
threads of their own (:mod:`covariscope.analysis.row_threads`).  A model
that uses only some columns of a wider matrix names them (``cols``) and is
never copied as a whole.

This function is the seam for other data sources: a source that cannot hold
the rows in memory (a database, a cluster) provides the same four sums for a
given β, and the Newton loops in :mod:`covariscope.analysis.glm` run
unchanged on top of it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import GlmLink, family_of
from covariscope.analysis.fitting_common import CHUNK_ROWS
from covariscope.analysis.row_threads import in_ranges

__all__ = ["BLOCK_CELLS", "GlmPass", "glm_pass"]

#: Cells (rows × columns) per block of a pass: a block stays in the
#: processor's cache (about 512 KB) while it is used.
BLOCK_CELLS = 16 * CHUNK_ROWS

Array = npt.NDArray[np.float64]
Index = npt.NDArray[np.intp]


@dataclass(frozen=True)
class GlmPass:
    """The sums of one pass at a given β.

    ``info`` and ``meat`` are None when they were not asked for.
    ``mu_low`` is the smallest fitted probability distance from 0 or 1
    (logistic) or the smallest fitted mean (Poisson); ``mu_high`` the largest
    fitted mean (both tell of separation or of fitted risks above 1).
    """

    deviance: float
    score: Array
    info: Array | None
    meat: Array | None
    mu_low: float
    mu_high: float


def glm_pass(
    X: Array,
    y: Array,
    family: str,
    beta: Array,
    *,
    cols: Index | None = None,
    offset: Array | None = None,
    info: bool = True,
    meat: bool = False,
    ylogy: float = 0.0,
) -> GlmPass:
    """Deviance, score, information (and sandwich meat) at ``beta`` in one pass.

    Parameters
    ----------
    X : n × q float array (C or Fortran order).
    y : outcome (0/1 for "logistic"; counts or 0/1 for "risk_ratio").
    family : the code of a GLM family (its :class:`~covariscope.analysis.families.GlmLink`
        gives the means, weights and deviance: binomial/logit, Poisson/log).
    beta : coefficients, one per column used.
    cols : columns of X that the model uses (default: all), in ``beta``'s order.
    offset : added to the linear predictor (Poisson log person-time).
    info : whether to form the information X'WX (McCullagh & Nelder 1989, §2.5).
    meat : whether to form X' diag((y − μ)²) X, the middle of the HC0
        sandwich (White 1980; Zou 2004 for the modified Poisson model).
    ylogy : Σ (y log y − y), which makes the Poisson deviance zero at μ = y
        (0 for logistic).

    Examples
    --------
    >>> import numpy as np
    >>> X = np.column_stack([np.ones(4), [0, 1, 0, 1.0]])
    >>> res = glm_pass(X, np.array([0, 1, 1, 1.0]), "logistic", np.zeros(2))
    >>> res.info.tolist(), res.score.tolist()
    ([[1.0, 0.5], [0.5, 0.5]], [1.0, 1.0])
    """
    n, q = X.shape
    if cols is not None and 2 * len(cols) >= q:
        # A wide model reads every column (zero coefficients for the others):
        # gathering most columns block by block costs more than the few extra
        # columns of the products, whose sub-blocks are taken at the end.
        wide = np.zeros(q)
        wide[cols] = beta
        res = glm_pass(X, y, family, wide, offset=offset, info=info, meat=meat, ylogy=ylogy)
        sub = np.ix_(cols, cols)
        return GlmPass(
            res.deviance,
            res.score[cols],
            None if res.info is None else res.info[sub],
            None if res.meat is None else res.meat[sub],
            res.mu_low,
            res.mu_high,
        )
    link = family_of(family).glm

    def rows(start: int, stop: int) -> GlmPass:
        return _pass_rows(X, y, link, beta, cols, offset, info, meat, start, stop)

    parts = in_ranges(n, rows)
    res = parts[0] if len(parts) == 1 else _added(parts)
    if not ylogy:
        return res
    return GlmPass(
        res.deviance + 2.0 * ylogy, res.score, res.info, res.meat, res.mu_low, res.mu_high
    )


def _added(parts: list[GlmPass]) -> GlmPass:
    """The sums of several ranges' passes."""

    def total(values: list[Array | None]) -> Array | None:
        held = [v for v in values if v is not None]
        return np.sum(held, axis=0) if held else None

    return GlmPass(
        math.fsum(part.deviance for part in parts),
        np.sum([part.score for part in parts], axis=0),
        total([part.info for part in parts]),
        total([part.meat for part in parts]),
        min(part.mu_low for part in parts),
        max(part.mu_high for part in parts),
    )


def _pass_rows(
    X: Array,
    y: Array,
    link: GlmLink,
    beta: Array,
    cols: Index | None,
    offset: Array | None,
    info: bool,
    meat: bool,
    start: int,
    stop: int,
) -> GlmPass:
    """The sums of `glm_pass` over rows start .. stop − 1, block by block."""
    p = X.shape[1] if cols is None else len(cols)
    dev = 0.0
    score = np.zeros(p)
    H = np.zeros((p, p)) if info else None
    M = np.zeros((p, p)) if meat else None
    low, high = math.inf, -math.inf
    # A narrow model takes taller blocks: the same cache-sized block of cells,
    # and far fewer rounds of per-block work (its cost for a model of three
    # columns is mostly that overhead, not arithmetic).
    rows = max(CHUNK_ROWS, BLOCK_CELLS // max(p, 1))
    for s in range(start, stop, rows):
        e = min(s + rows, stop)
        # (basic slicing then fancy indexing: ten times faster than np.take
        # on a Fortran-ordered block)
        Xc = X[s:e] if cols is None else X[s:e][:, cols]
        eta = np.dot(Xc, beta)  # np.dot, not @: fitting_common's docstring
        if offset is not None:
            eta += offset[s:e]
        d, resid, w, lo, hi = link.block_sums(y[s:e], eta)
        dev += d
        low, high = min(low, lo), max(high, hi)
        score += np.dot(resid, Xc)
        if H is not None:
            Z = Xc * np.sqrt(w)[:, None]
            H += np.dot(Z.T, Z)
        if M is not None:
            R = Xc * resid[:, None]
            M += np.dot(R.T, R)
    return GlmPass(dev, score, H, M, low, high)
