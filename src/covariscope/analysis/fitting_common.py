"""Pieces shared by the logistic, Poisson and Cox fits.

The weighted cross product and the Cholesky solve behind every Newton step,
the plain-words messages for data problems (missing values, constant or
aliased columns, too few rows, a singular information matrix, a fit that did
not converge) and the assembly of a `Fit` from the fitted parameters and
their covariance, so that each model family says these things in the same
words.

Products over the rows use ``np.dot``, not the ``@`` operator: ``np.dot``
lets go of the interpreter lock while BLAS works, ``@`` (``np.matmul``)
holds it for the whole product, so the window's GUI thread waits out every
product the analysis thread makes (measured at 200,000 × 10, numpy 2:
``X.T @ X`` 10 ms holding the lock, ``np.dot(X.T, X)`` 6 ms without it; the
same symmetric rank-k update).  Likewise no ``np.linalg`` solve or
factorisation on an n-row matrix: they hold the lock too (``lstsq`` at
200,000 × 8: 100–150 ms); ``scipy.linalg.qr`` does not.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import family_of
from covariscope.analysis.fits import Fit

__all__ = [
    "ALIAS_TOL",
    "CHUNK_ROWS",
    "DIVERGE_SD",
    "ETA_TOL",
    "EVENTS_PER_PARAMETER",
    "LEFT_BLANK",
    "SINGULAR_INFORMATION",
    "STEP_TOL",
    "Z95",
    "aliased_columns",
    "design_problem",
    "fit_from_params",
    "glm_cautions",
    "inverse_from_cholesky",
    "newton_done",
    "rank_message",
    "spread_problem",
    "too_few_rows",
    "upper_cholesky",
    "weighted_crossprod",
]

Array = npt.NDArray[np.float64]

#: Two-sided 95% normal quantile, scipy.stats.norm.ppf(0.975).
Z95 = 1.959963984540054

#: A column whose residual after projection on the earlier columns keeps less
#: than this share of its (weighted) sum of squares is an exact combination of
#: them (a VIF above 1e10: common practice, no published source).
ALIAS_TOL = 1e-10

#: |coefficient| × column SD beyond which a coefficient is taken as running
#: off to infinity (a ratio of e^20 per SD; common practice).
DIVERGE_SD = 20.0

#: Events per covariate parameter below which a caution is given
#: (Peduzzi et al. 1996, J Clin Epidemiol 49:1373).
EVENTS_PER_PARAMETER = 10

#: Convergence of every Newton loop, stated in the quantities reported.  A
#: loop stops at a point where the information was freshly computed and the
#: Newton step from it (i) moves no coefficient by more than `STEP_TOL` of its
#: standard error and (ii) moves no row's linear predictor by more than
#: `ETA_TOL` (bounded by Σⱼ maxᵢ|xᵢⱼ|·|δⱼ|).  The step is then taken: Newton's
#: error after it is of the order of the step squared, so the estimates are
#: far closer to the maximum than (i) says; and the standard errors, taken
#: from the information before the step, are off by about (ii), relatively,
#: because each row's weight (μ(1 − μ), μ, or a risk-set share) changes by a
#: factor of at most e^{|Δη|} (common practice, no published source).  Both
#: are far below the three or four significant digits ever printed.
STEP_TOL = 1e-6
ETA_TOL = 1e-8

#: Rows per block of the weighted cross product: a block of √w·X stays in the
#: processor cache, so the n × p scaled copy is never written to memory.
CHUNK_ROWS = 4096


def weighted_crossprod(X: Array, w: Array, buf: Array | None = None) -> Array:
    """X' diag(w) X (w ≥ 0), accumulated over blocks of rows; full matrix returned.

    Rows go in blocks of `CHUNK_ROWS`; each block of √w·X is built in a small
    buffer (``buf``, optional, at least that many rows) and its cross product
    added by numpy's ``B.T @ B``, which BLAS computes as a symmetric rank-k
    update (half the flops of a general product).  X may be C- or
    Fortran-ordered.  Only numpy's BLAS is called, so that the passes and the
    small solves share one BLAS thread pool (two pools on two cores wait on
    each other).  The rows are not split over Python threads: BLAS alone uses
    the cores, so that no BLAS call is ever made from two of our threads at
    once (OpenBLAS entered from several threads while its own pool also runs
    is a known source of crashes, and the window runs analyses off its own
    thread).
    """
    n, _p = X.shape
    return _crossprod_rows(X, np.sqrt(w), 0, n, buf)


def _crossprod_rows(X: Array, sw: Array, start: int, stop: int, buf: Array | None) -> Array:
    p = X.shape[1]
    rows = max(1, min(stop - start, CHUNK_ROWS))
    if buf is None or buf.shape[0] < rows or buf.shape[1] != p:
        buf = np.empty((rows, p))
    acc = np.zeros((p, p))
    for s in range(start, stop, rows):
        e = min(s + rows, stop)
        block = buf[: e - s]
        np.multiply(X[s:e], sw[s:e, None], out=block)
        acc += np.dot(block.T, block)  # np.dot, not @: see the module docstring
    return acc


def upper_cholesky(H: Array) -> Array | None:
    """Upper Cholesky factor of H, or None if H is not positive definite."""
    if not np.all(np.isfinite(H)):
        return None
    try:
        lower = np.linalg.cholesky(H)
    except np.linalg.LinAlgError:
        return None
    upper: Array = np.asarray(lower.T, dtype=np.float64)
    return upper


def inverse_from_cholesky(c: Array) -> Array:
    """H⁻¹ from the upper Cholesky factor c of H (H = c'c), symmetric."""
    ci = np.linalg.inv(c)
    inv: Array = ci @ ci.T
    return (inv + inv.T) / 2.0


def newton_done(delta: Array, cov: Array, reach: Array) -> bool:
    """Whether the Newton step ``delta`` meets the stopping rule (`STEP_TOL`, `ETA_TOL`).

    ``cov`` is the inverse information at the current point; ``reach`` each
    column's largest absolute value, so that Σⱼ reachⱼ·|δⱼ| bounds the change
    of every row's linear predictor.

    >>> import numpy as np
    >>> newton_done(np.array([1e-12, 0.0]), np.eye(2), np.ones(2))
    True
    """
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    step = np.abs(delta)
    return bool(np.all(step <= STEP_TOL * se) and float(reach @ step) <= ETA_TOL)


def aliased_columns(G: Array, names: list[str]) -> list[str]:
    """Clauses "<a> is an exact linear combination of <b>, <c>" for a cross product.

    Columns are taken in order; each is tested against the earlier columns that
    were kept, so the intercept and the exposure (which come first) are never
    the ones named as redundant.
    """
    d = np.sqrt(np.clip(np.diag(G), 0.0, None))
    clauses: list[str] = []
    kept: list[int] = []
    for j in range(G.shape[0]):
        if d[j] == 0.0:
            clauses.append(f"{names[j]} is zero in every row")
            continue
        if kept:
            K = G[np.ix_(kept, kept)] / np.outer(d[kept], d[kept])
            g = G[kept, j] / (d[kept] * d[j])
            c = np.linalg.solve(K, g)
            resid = 1.0 - float(g @ c)
        else:
            c, resid = np.zeros(0), 1.0
        if resid < ALIAS_TOL:
            parts = [names[kept[i]] for i in range(len(kept)) if abs(c[i]) > 1e-7]
            clauses.append(f"{names[j]} is an exact linear combination of {', '.join(parts)}")
        else:
            kept.append(j)
    return clauses


def rank_message(clauses: list[str]) -> str:
    """The message for a rank-deficient design, from the clauses naming the aliased columns."""
    return (
        "The design is rank-deficient: "
        + "; ".join(clauses)
        + ". Remove one of the columns involved (or bind a different column)."
    )


def design_problem(X: Array, names: list[str], *, skip: int) -> str:
    """A plain message for missing values or constant columns, or ""."""
    if X.shape[0] == 0:
        return "The analytic sample has no rows."
    # One min/max pass finds both: a column's range is NaN or infinite exactly
    # when it holds a NaN or an infinity, and zero when the column is constant.
    with np.errstate(invalid="ignore"):  # inf − inf is NaN, as wanted
        spread = np.ptp(X, axis=0)
    return spread_problem(spread, X[0], names, skip=skip)


def spread_problem(spread: Array, first: Array, names: list[str], *, skip: int) -> str:
    """`design_problem` from each column's range (max − min) and first row:
    the models of a table that share columns read the rows once for all."""
    bad = ~np.isfinite(spread)
    if bad.any():
        cols = ", ".join(names[j] for j in np.flatnonzero(bad))
        return f"Missing or infinite values in {cols}: fit the model on complete cases only."
    const = np.flatnonzero(spread == 0.0)
    const = const[const >= skip]
    if const.size:
        cols = ", ".join(f"{names[j]} (always {first[j]:g})" for j in const)
        return (
            f"Constant column: {cols} has the same value in every row of the analytic "
            "sample, so its effect cannot be estimated. Remove it from the model."
        )
    return ""


def too_few_rows(n: int, p: int) -> str:
    """The message for a model with no more rows than parameters."""
    return (
        f"Only {n} rows for {p} parameters: a model needs more rows than parameters. "
        "Drop covariates or use more data."
    )


#: Said when the Newton loop met a singular information matrix.
SINGULAR_INFORMATION = (
    "The information matrix became singular during fitting; check for "
    "near-duplicate columns or extreme values."
)

#: Added to a warning about coefficients that run off to infinity when the
#: fit goes on without them.
LEFT_BLANK = " Their estimates are left blank; the exposure's is the limit of the fit."


def fit_from_params(
    family: str,
    terms: tuple[str, ...],
    names: list[str],
    params: Array,
    cov: Array,
    n: int,
    exposure_index: int,
    skip: set[int],
    *,
    converged: bool,
    iterations: int,
    warnings: list[str],
    blank: frozenset[int] = frozenset(),
) -> Fit:
    """Assemble a `Fit`: the exposure's Wald estimate and every other column's.

    Columns in ``skip`` (the intercept) are left out of ``term_coefs``, those
    in ``blank`` (coefficients that run off to infinity) are NaN there.  A fit
    that did not converge says so in its message and warnings; one whose
    runaway coefficients were left blank counts as converged, the exposure's
    estimate then being the limit the loop was heading for.

    >>> import numpy as np
    >>> fit = fit_from_params("logistic", (), ["const", "x"], np.zeros(2), np.eye(2), 10, 1, {0},
    ...                       converged=False, iterations=50, warnings=[])
    >>> fit.converged, fit.message.startswith("The fit did not converge after 50")
    (False, True)
    """
    converged = converged or bool(blank)
    message = ""
    warns = list(warnings)
    if not converged:
        message = (
            f"The fit did not converge after {iterations} iterations; the estimates "
            "shown are the last ones reached. Allow more iterations or simplify the model."
        )
        warns.append(message)
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    b, s = float(params[exposure_index]), float(se[exposure_index])
    nan = float("nan")
    term_coefs: dict[str, tuple[float, float, float, float]] = {}
    for j, name in enumerate(names):
        if j in skip or j == exposure_index:
            continue
        if j in blank:
            term_coefs[name] = (nan, nan, nan, nan)
        else:
            bj, sj = float(params[j]), float(se[j])
            term_coefs[name] = (bj, sj, bj - Z95 * sj, bj + Z95 * sj)
    kept = [j for j in range(len(names)) if j not in skip]
    kept.remove(exposure_index)
    kept.insert(0, exposure_index)
    return Fit(
        family,
        terms,
        b,
        s,
        (b - Z95 * s, b + Z95 * s),
        n,
        cov_columns=tuple(names[j] for j in kept),
        cov=np.asarray(cov)[np.ix_(kept, kept)],
        ok=True,
        converged=converged,
        message=message,
        warnings=tuple(warns),
        n_params=len(params),
        term_coefs=term_coefs,
    )


def glm_cautions(family: str, events: float, p: int, *, binary: bool, mu_high: float) -> list[str]:
    """The cautions a logistic or Poisson fit carries: fitted risks above 1 (a
    log-link model of a 0/1 outcome), and few events per covariate parameter
    (Peduzzi et al. 1996).  ``events``: events (Poisson) or outcomes in the rarer
    class (logistic); ``p``: parameters with the intercept.

    >>> glm_cautions("logistic", 12.0, 3, binary=True, mu_high=0.9)
    ['Only 12 outcomes in the rarer class for 2 covariate parameters (fewer than 10 per parameter, Peduzzi et al. 1996): estimates may be unstable.']
    """
    link = family_of(family).glm
    said: list[str] = []
    risk = link.fitted_risk_caution(binary=binary, mu_high=mu_high)
    if risk:
        said.append(risk)
    if p > 1 and events / (p - 1) < EVENTS_PER_PARAMETER:
        said.append(
            f"Only {events:g} {link.events_word} "
            f"for {p - 1} covariate parameters (fewer than {EVENTS_PER_PARAMETER} per parameter, "
            "Peduzzi et al. 1996): estimates may be unstable."
        )
    return said
