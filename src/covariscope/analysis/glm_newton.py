"""The Newton (IRLS) loop of the logistic and log-link Poisson fits.

Each iteration is one weighted pass over the rows (`covariscope.analysis.passes.glm_pass`)
that gives the deviance, the score and the information at the current
coefficients together; the loop stops by the rule stated in the reported
quantities (`covariscope.analysis.fitting_common.newton_done`).  For the
robust Poisson model the sandwich's middle term is formed in the pass that
turns out to be the last, when the step before it was already small.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Generator
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import GlmLink, family_of
from covariscope.analysis.fitting_common import (
    ALIAS_TOL,
    DIVERGE_SD,
    ETA_TOL,
    inverse_from_cholesky,
    newton_done,
    upper_cholesky,
)
from covariscope.analysis.passes import GlmPass, glm_pass

__all__ = [
    "GlmPath",
    "PassRequest",
    "Walk",
    "information_and_score",
    "newton_glm",
    "newton_walk",
    "walk_inputs",
]

Array = npt.NDArray[np.float64]
Index = npt.NDArray[np.intp]

#: Largest change of any row's linear predictor by a Newton step for which
#: chord steps (score-only passes with the information in hand) may follow.
CHORD_ZONE = 1e-2

#: Most chord steps before the next fresh pass.
CHORD_STEPS = 3

#: Newton's rate s₊ ≈ C s² (steps in linear-predictor units) assumed before
#: two steps have shown it.  The next pass is expected to be the last when
#: C·s² is within `ETA_TOL`: that pass then also forms the sandwich's middle
#: term (a guess that only costs time when wrong: a meat formed in vain, or
#: one more pass for it).
FIRST_RATE = 1.0


@dataclass(frozen=True)
class GlmPath:
    """Where a Newton run ended: parameters, covariance and how it got there."""

    params: Array
    cov: Array | None
    iterations: int
    converged: bool
    #: deviance at the last Newton point (before the final step)
    deviance: float
    #: smallest min(μ, 1 − μ) (logistic) or μ (Poisson) at the last Newton point
    mu_low: float = math.nan
    #: largest fitted mean at the last Newton point
    mu_high: float = math.nan
    #: why the loop stopped early ("" when it converged or ran out of iterations)
    stop: str = ""
    #: the information at the start, kept when the design proved rank-deficient
    info: Array | None = None
    #: X' diag((y − μ)²) X at the last Newton point, when asked for
    meat: Array | None = None
    #: passes over the rows the loop made
    passes: int = 0


def _start(link: GlmLink, first: Array, y: Array, off: Array | None, p: int) -> Array:
    b = np.zeros(p)
    x0 = first[0]
    if np.all(first == x0) and x0 != 0.0:
        denom = float(np.sum(np.exp(off))) if off is not None else float(len(y))
        b[0] = link.start_intercept(float(np.mean(y)), float(np.sum(y)), denom) / x0
    return b


def _column_sd(X: Array) -> Array:
    """Each column's standard deviation from one pass of sums (no n × p
    temporaries); it only scales the test for a runaway coefficient."""
    n = X.shape[0]
    mean = X.sum(axis=0) / n
    sq = np.einsum("ij,ij->j", X, X) / n
    var = sq - mean * mean
    # Where the mean dwarfs the spread the difference cancels: those columns
    # are taken the slow, exact way.
    poor = var <= 1e-6 * sq
    if np.any(poor & (sq > 0)):
        var[poor] = np.var(X[:, np.flatnonzero(poor)], axis=0)
    sd: Array = np.sqrt(np.clip(var, 0.0, None))
    return sd


def _aliased(c: Array | None, H: Array) -> bool:
    # Weights are positive, so X'WX is singular exactly when X is.
    return c is None or float(np.min(np.diag(c) ** 2 / np.diag(H))) < ALIAS_TOL


@dataclass(frozen=True)
class PassRequest:
    """What a Newton walk asks of the next pass over the rows: the sums at
    ``beta``, with the information when ``info`` and the sandwich's middle
    term when ``meat``."""

    beta: Array
    info: bool
    meat: bool


#: A Newton walk: yields the passes it needs, is sent their sums, returns where it ended.
Walk = Generator[PassRequest, GlmPass, GlmPath]


def newton_glm(
    X: Array,
    y: Array,
    family: str,
    *,
    offset: Array | None = None,
    start: Array | None = None,
    max_iter: int = 50,
    scale: Array | None = None,
    cols: Index | None = None,
    reach: Array | None = None,
    meat: bool = False,
    on_pass: Callable[[], None] | None = None,
) -> GlmPath:
    """Maximise a logistic or Poisson log-likelihood by Newton–Raphson (= IRLS
    for these canonical links, McCullagh & Nelder 1989, §2.5) with step halving.

    Returns the parameters after the last step and the inverse information
    at the last Newton point (``cov``; None when the information was
    singular).  The caller checks the design beforehand; this function only
    iterates.  ``cols`` picks the model's columns of a wider X (no copy is
    made); ``scale`` (each column's SD) tells a coefficient running off to
    infinity; ``reach`` (each column's largest |value|) enters the stopping
    rule; both are computed when not given.  ``meat`` asks for the sandwich's
    middle term at the last Newton point; ``on_pass`` is called after every
    pass over the rows (progress, cancellation).  The steps themselves are
    :func:`newton_walk`'s; this function makes its passes one at a time.

    >>> import numpy as np
    >>> X = np.column_stack([np.ones(6), [0, 0, 1, 1, 0, 1.0]])
    >>> path = newton_glm(X, np.array([0, 1, 1, 1, 0, 0.0]), "logistic")
    >>> bool(path.converged), round(float(path.params[1]), 4)  # log(4), odds 1/2 → 2
    (True, 1.3863)
    """
    idx = np.arange(X.shape[1]) if cols is None else np.asarray(cols, dtype=np.intp)
    b, scale, reach = walk_inputs(X, y, family, idx, offset, start, scale, reach)
    ylogy = family_of(family).glm.saturated(y)
    walk = newton_walk(b, scale, reach, meat=meat, max_iter=max_iter)
    request = next(walk)
    while True:
        sums = glm_pass(
            X,
            y,
            family,
            request.beta,
            cols=None if cols is None else idx,
            offset=offset,
            info=request.info,
            meat=request.meat,
            ylogy=ylogy,
        )
        if on_pass is not None:
            on_pass()
        try:
            request = walk.send(sums)
        except StopIteration as done:
            path: GlmPath = done.value
            return path


def walk_inputs(
    X: Array,
    y: Array,
    family: str,
    idx: Index,
    offset: Array | None,
    start: Array | None,
    scale: Array | None,
    reach: Array | None,
) -> tuple[Array, Array, Array]:
    """The start, column SDs and column reaches a Newton walk of the model
    ``idx`` (columns of X) needs; the given ones are kept."""
    if start is None:
        b = _start(family_of(family).glm, X[:, idx[0]], y, offset, len(idx))
    else:
        b = np.array(start, dtype=np.float64)
    if scale is None or reach is None:
        # The model's own columns, read in place when it uses them all.
        Xm = X if len(idx) == X.shape[1] and np.all(idx == np.arange(X.shape[1])) else X[:, idx]
        scale = _column_sd(Xm) if scale is None else scale
        reach = np.maximum(Xm.max(axis=0), -Xm.min(axis=0)) if reach is None else reach
    return b, scale, reach


def newton_walk(
    b: Array, scale: Array, reach: Array, *, meat: bool = False, max_iter: int = 50
) -> Walk:
    """The Newton–Raphson steps from ``b``, as a generator of the passes they need.

    Each ``yield`` asks for one pass (:class:`PassRequest`) and receives its
    sums (:class:`~covariscope.analysis.passes.GlmPass`); the generator
    returns the :class:`GlmPath`.  Whoever drives it decides how the passes
    are made: one model at a time (:func:`newton_glm`), or several models
    whose passes share their reads of the rows
    (:mod:`covariscope.analysis.glm_batch`), with the same steps either way.
    """
    passes = 0

    def ask(beta: Array, info: bool, want_meat: bool) -> Generator[PassRequest, GlmPass, GlmPass]:
        nonlocal passes
        passes += 1
        got = yield PassRequest(beta, info, want_meat)
        return got

    P = yield from ask(b, True, False)
    cov: Array | None = None
    last_moved: float | None = None
    for it in range(1, max_iter + 1):
        H = P.info
        assert H is not None
        c = upper_cholesky(H)
        if it == 1 and _aliased(c, H):
            return GlmPath(
                b, None, it, False, P.deviance, P.mu_low, P.mu_high, "aliased", H, passes=passes
            )
        if c is None:
            return GlmPath(
                b, None, it, False, P.deviance, P.mu_low, P.mu_high, "singular", passes=passes
            )
        cov = inverse_from_cholesky(c)
        delta = cov @ P.score
        if newton_done(delta, cov, reach):
            if meat and P.meat is None:
                P = yield from ask(b, False, True)
            return GlmPath(
                b + delta,
                cov,
                it,
                True,
                P.deviance,
                P.mu_low,
                P.mu_high,
                meat=P.meat,
                passes=passes,
            )
        moved = float(reach @ np.abs(delta))
        if _chord_pays(moved, last_moved):
            chord = yield from _chord(ask, b + delta, cov, reach, P.deviance, moved)
            if chord is not None:
                b = chord
                P = yield from ask(chord, True, meat)
                last_moved = None
                continue
        rate = FIRST_RATE if not last_moved else moved / last_moved**2
        near = meat and rate * moved**2 <= ETA_TOL
        last_moved = moved
        t = 1.0
        for _ in range(40):
            b_new = b + t * delta
            P_new = yield from ask(b_new, t == 1.0, near and t == 1.0)
            dev_new = P_new.deviance
            if math.isfinite(dev_new) and dev_new <= P.deviance + 1e-12 * abs(P.deviance):
                break
            t *= 0.5
        else:
            return GlmPath(
                b, cov, it, False, P.deviance, P.mu_low, P.mu_high, "no_progress", passes=passes
            )
        if P_new.info is None:
            P_new = yield from ask(b_new, True, near)
        b, P = b_new, P_new
        if np.any(np.abs(b[1:]) * scale[1:] > DIVERGE_SD):
            return GlmPath(
                b, cov, it, False, P.deviance, P.mu_low, P.mu_high, "diverging", passes=passes
            )
    return GlmPath(b, cov, max_iter, False, P.deviance, P.mu_low, P.mu_high, passes=passes)


def _chord_pays(moved: float, last_moved: float | None) -> bool:
    """Whether the next fresh pass would still leave a step above `ETA_TOL`.

    Newton's steps shrink quadratically, s₊ ≈ C s², C estimated from the last
    two steps; when the step after this one is predicted to fail the rule,
    a cheap score-only pass or two with the information in hand (the chord
    method, whose error shrinks by about the step's own size each time) brings
    the point close enough that the next fresh pass is the last.
    """
    if last_moved is None or last_moved <= 0.0 or moved > CHORD_ZONE:
        return False
    predicted = moved**3 / last_moved**2
    return predicted > ETA_TOL


def _chord(
    ask: Callable[[Array, bool, bool], Generator[PassRequest, GlmPass, GlmPass]],
    b: Array,
    cov: Array,
    reach: Array,
    deviance: float,
    dist: float,
) -> Generator[PassRequest, GlmPass, Array | None]:
    """Chord steps b ← b + V g(b) (V the inverse information in hand) by
    score-only passes; None when the deviance rises (fall back to Newton).

    A chord step shrinks the error by a factor κ of about the distance
    ``dist`` (in linear-predictor units) between b and the point where V was
    formed, or by the observed ratio of successive steps when that is larger;
    the steps stop once the error left, κ times the last step, is a hundredth
    of `ETA_TOL`, so that the fresh pass that follows is the last.
    """
    last = math.inf
    for _ in range(CHORD_STEPS):
        P = yield from ask(b, False, False)
        if not math.isfinite(P.deviance) or P.deviance > deviance + 1e-12 * abs(deviance):
            return None
        step = cov @ P.score
        b = b + step
        deviance = P.deviance
        size = float(reach @ np.abs(step))
        kappa = max(dist, size / last) if math.isfinite(last) else dist
        if kappa * size <= 1e-2 * ETA_TOL:
            break
        last = size
    return b


def information_and_score(
    X: Array, y: Array, family: str, params: Array, *, offset: Array | None = None
) -> tuple[Array, Array]:
    """Fisher information X'WX and score X'(y − μ) at ``params``.

    One pass gives the Newton step from ``params`` for every model whose
    columns are a subset of X's: take the sub-blocks (the evidence engine
    starts all "crude + C" models from the crude fit this way).

    >>> import numpy as np
    >>> X = np.column_stack([np.ones(4), [0, 1, 0, 1.0]])
    >>> H, g = information_and_score(X, np.array([0, 1, 1, 1.0]), "logistic", np.zeros(2))
    >>> H.tolist(), g.tolist()
    ([[1.0, 0.5], [0.5, 0.5]], [1.0, 1.0])
    """
    res = glm_pass(X, y, family, params, offset=offset)
    assert res.info is not None
    return res.info, res.score
