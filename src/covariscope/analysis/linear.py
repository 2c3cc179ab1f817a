"""Linear models solved from sufficient statistics.

One pass over the rows yields a :class:`LinearSummary`: the row count, the
column means and the co-moment matrix ``Σ (v − v̄)(v − v̄)ᵀ`` of
[design | outcome].  Every least-squares sub-model, its standard errors and
every auxiliary R² then come from blocks of the *centred and scaled*
(correlation-form) summary by Cholesky factorisation, without touching the
rows again.  Centring is what keeps the normal equations accurate: on the
NIST Longley data it keeps about twelve significant digits where raw
cross-products keep about seven.

Summaries of separate pieces of data merge exactly (Chan, Golub & LeVeque
1979, the pairwise update of means and co-moments), so data read in chunks
gives the same summary as data read at once.

References
----------
Chan, T. F., Golub, G. H. & LeVeque, R. J. (1979). Updating formulae and a
pairwise algorithm for computing sample variances. Stanford CS report
STAN-CS-79-773.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np
from scipy.linalg import lapack

from covariscope.analysis.distributions import t_ppf

__all__ = [
    "ALIAS_TOLERANCE",
    "LinearSummary",
    "OLSResult",
    "centred_cross",
    "centred_products",
    "cholesky_lower",
    "inverse_lower",
    "is_rank_deficient",
    "linear_summary",
    "merge_summaries",
    "solve_ols",
]

#: A column whose tolerance (1 − R² on the other columns and the intercept) is
#: below this is treated as an exact linear combination.  Exact combinations
#: leave a tolerance of rounding size (about 1e-15); real near-collinearity
#: rarely goes below 1e-8 (VIF 10⁸).  Common practice, no published source.
ALIAS_TOLERANCE = 1e-10


@dataclass(frozen=True, eq=False)
class LinearSummary:
    """Row count, means and co-moment matrix of a set of columns.

    ``comoment[i, j] = Σ_r (v_ri − mean_i)(v_rj − mean_j)``.
    """

    n: int
    mean: np.ndarray
    comoment: np.ndarray

    # Computed once per summary (every fit and VIF reads them; the summary's
    # arrays are never changed once it is made).
    @cached_property
    def scale(self) -> np.ndarray:
        """Root co-moment of each column (1 for a constant column, to avoid 0/0)."""
        s = np.sqrt(np.clip(np.diag(self.comoment), 0.0, None))
        out: np.ndarray = np.where(s > 0, s, 1.0)
        out.flags.writeable = False
        return out

    @cached_property
    def correlation(self) -> np.ndarray:
        """The centred and scaled cross-product matrix (a correlation matrix)."""
        s = self.scale
        out: np.ndarray = self.comoment / np.outer(s, s)
        out.flags.writeable = False
        return out

    def merge(self, other: LinearSummary) -> LinearSummary:
        """Summary of both pieces of data (see :func:`merge_summaries`)."""
        return merge_summaries(self, other)


def merge_summaries(a: LinearSummary, b: LinearSummary) -> LinearSummary:
    """Combine the summaries of two disjoint sets of rows (Chan et al. 1979).

    >>> rng = np.random.default_rng(1)
    >>> v = rng.normal(size=(100, 3))
    >>> whole = linear_summary(v)
    >>> parts = merge_summaries(linear_summary(v[:30]), linear_summary(v[30:]))
    >>> bool(np.allclose(whole.comoment, parts.comoment))
    True
    """
    if a.n == 0:
        return b
    if b.n == 0:
        return a
    n = a.n + b.n
    delta = b.mean - a.mean
    mean = a.mean + delta * (b.n / n)
    comoment = a.comoment + b.comoment + np.outer(delta, delta) * (a.n * b.n / n)
    return LinearSummary(n, mean, comoment)


def linear_summary(values: np.ndarray, *, chunk_rows: int = 16384) -> LinearSummary:
    """One pass over the rows of ``values`` (n × q) giving its :class:`LinearSummary`.

    Rows are read in chunks; each chunk is shifted by a provisional mean (taken
    from a strided sample of rows), and the cross-product of the shifted chunk,
    bordered by a column of ones, gives both the shifted sums and the shifted
    cross-products in one BLAS call.  The exact co-moment follows as
    ``Q − s sᵀ/n``; because the shift is close to the mean, the correction is
    small and nothing cancels.

    >>> v = np.array([[1.0, 2.0], [2.0, 4.1], [3.0, 5.9]])
    >>> s = linear_summary(v)
    >>> s.n, [round(float(m), 3) for m in s.mean]
    (3, [2.0, 4.0])
    """
    values = np.asarray(values, dtype=np.float64)
    n, q = values.shape
    if n == 0:
        return LinearSummary(0, np.zeros(q), np.zeros((q, q)))
    step = max(1, n // 2048)
    shift = values[::step].mean(axis=0)
    rows = min(chunk_rows, n)
    buf = np.ones((rows, q + 1))
    acc = np.zeros((q + 1, q + 1))
    for start in range(0, n, rows):
        chunk = values[start : start + rows]
        z = buf[: chunk.shape[0]]
        np.subtract(chunk, shift, out=z[:, :q])
        acc += np.dot(z.T, z)  # np.dot, not @: fitting_common's docstring
    sums = acc[:q, q]
    comoment = acc[:q, :q] - np.outer(sums, sums) / n
    comoment = (comoment + comoment.T) / 2.0
    return LinearSummary(n, shift + sums / n, comoment)


@dataclass(frozen=True, eq=False)
class OLSResult:
    """Least-squares fit of one outcome column on some design columns (plus intercept)."""

    columns: tuple[int, ...]
    coef: np.ndarray
    se: np.ndarray
    intercept: float
    intercept_se: float
    rss: float
    tss: float
    df_resid: int
    #: diagonal of the inverse correlation matrix of the regressors = VIF of each column
    vif: np.ndarray
    n: int
    #: covariance matrix of the slopes (the intercept left out)
    cov: np.ndarray | None = None

    @property
    def sigma(self) -> float:
        """Residual standard deviation, √(RSS / df)."""
        return float(np.sqrt(self.rss / self.df_resid))

    @property
    def r2(self) -> float:
        return 1.0 - self.rss / self.tss

    def ci(self, level: float = 0.95) -> tuple[np.ndarray, np.ndarray]:
        """Confidence limits of the slopes from the t distribution."""
        t = float(t_ppf(0.5 + level / 2.0, self.df_resid))
        return self.coef - t * self.se, self.coef + t * self.se


def centred_cross(
    values: np.ndarray,
    mean: np.ndarray,
    centred: np.ndarray,
    cols: Sequence[int] | None = None,
    *,
    chunk_rows: int = 65536,
    centre: np.ndarray | None = None,
) -> np.ndarray:
    """Σ_r (values_r[cols] − mean)ᵀ centred_r: co-moments of ``values``' columns
    (``mean`` their means) with columns already centred (n × k), block by block,
    so that no centred copy of ``values`` is made.  Returns len(mean) × k.

    With ``centre`` (k means), ``centred`` holds the columns as they are and
    each block of them is centred on the way (the same numbers, without a
    centred copy of those columns either).

    >>> v = np.array([[1.0, 2.0], [3.0, 6.0], [5.0, 7.0]])
    >>> o = np.array([[-1.0], [0.0], [1.0]])
    >>> centred_cross(v, v.mean(axis=0), o).ravel().tolist()
    [4.0, 5.0]
    """
    out = np.zeros((len(mean), centred.shape[1]))
    for s in range(0, len(values), chunk_rows):
        block = values[s : s + chunk_rows]
        if cols is None:
            block = block - mean
        else:
            block = block[:, cols]  # already a copy: centred where it lies
            block -= mean
        other = centred[s : s + chunk_rows]
        out += np.dot(block.T, other if centre is None else other - centre)
    return out


#: A column whose mean lies further than this many standard deviations from
#: zero is crossed centred (:func:`centred_products`): the product of its raw
#: values would lose about log10(FAR) digits to the mean.  Common practice.
FAR = 16.0


def centred_products(
    values: np.ndarray,
    mean: np.ndarray,
    sd: np.ndarray,
    centred: np.ndarray,
    cols: Sequence[int] | None = None,
) -> np.ndarray:
    """Σ_r (values_r[cols] − mean)ᵀ centred_r, as :func:`centred_cross`, in one
    product over ``values`` as they lie (no block of them copied or centred).

    ``centred`` (n × k) sums to zero in each column, so Σ (v − m) c = Σ v c −
    m Σ c: one matrix product of the raw columns with ``centred`` (memory
    bound: the design is read once, at the speed of memory) and a correction
    by the rounding-sized sums of ``centred``.  A column whose mean is more
    than :data:`FAR` of its standard deviations (``sd``) from zero would lose
    digits that way and is crossed centred (:func:`centred_cross`).  Returns
    len(mean) × k.

    >>> v = np.array([[1.0, 2.0], [3.0, 6.0], [5.0, 7.0]])
    >>> o = np.array([[-1.0], [0.0], [1.0]])
    >>> centred_products(v, v.mean(axis=0), v.std(axis=0), o).ravel().tolist()
    [4.0, 5.0]
    """
    picked = list(range(values.shape[1])) if cols is None else list(cols)
    out = np.empty((len(picked), centred.shape[1]))
    # Each run of adjacent columns in one product: a column-major array's
    # columns are read in place (a block of its rows, or columns gathered from
    # here and there, would be copied first); np.dot, not @: fitting_common.
    for start, stop, at in _runs(picked):
        out[at : at + stop - start] = np.dot(values[:, start:stop].T, centred)
    out -= np.outer(mean, centred.sum(axis=0))
    far = np.flatnonzero(np.abs(mean) > FAR * sd)
    if len(far):
        out[far] = centred_cross(values, mean[far], centred, [picked[j] for j in far])
    return np.asarray(out)


def _runs(cols: Sequence[int]) -> list[tuple[int, int, int]]:
    """(start, stop, position in ``cols``) of each run of consecutive columns.

    >>> _runs([3, 4, 5, 0, 9, 10])
    [(3, 6, 0), (0, 1, 3), (9, 11, 4)]
    """
    runs: list[tuple[int, int, int]] = []
    for at, c in enumerate(cols):
        if runs and runs[-1][1] == c:
            start, _, first = runs[-1]
            runs[-1] = (start, c + 1, first)
        else:
            runs.append((c, c + 1, at))
    return runs


def cholesky_lower(a: np.ndarray) -> np.ndarray | None:
    """Lower Cholesky factor of a small symmetric matrix, or None if not positive definite."""
    # LAPACK directly: on matrices this small the generic wrappers cost more than the work.
    chol, info = lapack.dpotrf(a, lower=1, clean=1)
    return None if info != 0 else np.asarray(chol)


def inverse_lower(chol: np.ndarray) -> np.ndarray:
    """Inverse of a lower-triangular factor."""
    inv, info = lapack.dtrtri(chol, lower=1)
    if info != 0:
        raise np.linalg.LinAlgError("singular triangular factor")
    return np.tril(inv)


def _tolerances(chol: np.ndarray) -> np.ndarray:
    # The squared diagonal of the Cholesky factor of a correlation matrix is the
    # tolerance of each column on the columns before it.
    return np.diag(chol) ** 2


def is_rank_deficient(summary: LinearSummary, columns: Sequence[int]) -> bool:
    """True when some column is (numerically) an exact combination of the others."""
    cols = list(columns)
    if not cols:
        return False
    chol = cholesky_lower(summary.correlation[np.ix_(cols, cols)])
    if chol is None:
        return True
    return bool(np.min(_tolerances(chol)) < ALIAS_TOLERANCE)


def solve_ols(summary: LinearSummary, columns: Sequence[int], outcome: int) -> OLSResult | None:
    """Regress column ``outcome`` on ``columns`` and an intercept, from the summary.

    Returns None when the regressors are rank deficient (see
    :data:`ALIAS_TOLERANCE`) or there are no residual degrees of freedom.

    The correlation matrix of the regressors is factored once (R_xx = L Lᵀ);
    the border ``l = L⁻¹ r_xy`` gives ``β = L⁻ᵀ l`` and ``1 − R² = 1 − lᵀl``,
    and ``L⁻¹`` gives the standard errors and VIFs.

    >>> rng = np.random.default_rng(0)
    >>> x = rng.normal(size=(500, 2)); y = 1 + x @ [2.0, -1.0] + rng.normal(size=500)
    >>> fit = solve_ols(linear_summary(np.column_stack([x, y])), [0, 1], 2)
    >>> [round(float(b), 1) for b in fit.coef]
    [2.0, -1.0]
    """
    cols = list(columns)
    k = len(cols)
    n = summary.n
    df = n - k - 1
    if df <= 0:
        return None
    s_x = summary.scale[cols]
    s_y = float(summary.scale[outcome])
    corr = summary.correlation
    tss = float(summary.comoment[outcome, outcome])
    if k:
        lxx = cholesky_lower(corr[np.ix_(cols, cols)])
        if lxx is None or np.min(_tolerances(lxx)) < ALIAS_TOLERANCE:
            return None
        # Border of the Cholesky factor of [[R_xx, r_xy], [r_yx, 1]].
        inv_l = inverse_lower(lxx)
        border = inv_l @ corr[cols, outcome]
        beta = inv_l.T @ border
        rinv_diag = np.sum(inv_l**2, axis=0)
        rss = max(0.0, 1.0 - float(border @ border)) * s_y**2
    else:
        beta = np.zeros(0)
        inv_l = np.zeros((0, 0))
        rinv_diag = np.zeros(0)
        rss = tss
    sigma2 = rss / df
    coef = beta * s_y / s_x
    se = np.sqrt(sigma2 * rinv_diag) / s_x
    mean_x = summary.mean[cols]
    intercept = float(summary.mean[outcome] - mean_x @ coef)
    u = inv_l @ (mean_x / s_x)
    intercept_se = float(np.sqrt(sigma2 * (1.0 / n + u @ u)))
    cov = sigma2 * (inv_l.T @ inv_l) / np.outer(s_x, s_x)
    return OLSResult(
        tuple(cols), coef, se, intercept, intercept_se, rss, tss, df, rinv_diag, n, cov
    )
