"""The risk sets of a survival sample, built once and shared by every Cox model.

The rows are sorted latest time first, so that the risk set of an event time
(every row still followed at that time) is a prefix of the rows; the
covariates are centred (which leaves the coefficients unchanged) and kept in
column-major order.  `CoxSample.evaluate` then gives the log partial
likelihood, the score and the information of any model on a subset of the
columns from one cumulative sum down a column-major array holding the risk
weights and every weighted covariate, grouped sums over tied event times
(Efron 1977, JASA 72:557; Breslow 1974, Biometrics 30:89) and one weighted
cross product.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from covariscope.analysis.fitting_common import weighted_crossprod

__all__ = ["CoxPoint", "CoxSample"]

Array = npt.NDArray[np.float64]
Index = npt.NDArray[np.intp]


@dataclass(frozen=True)
class CoxPoint:
    """The partial likelihood at one β, and what its derivatives reuse."""

    beta: Array
    loglik: float
    w: Array  # exp(η − max η) per sorted row
    den: Array  # Efron denominator per event row
    s0d: Array  # Σ w over each tied set


class CoxSample:
    """A survival sample sorted once: index arithmetic that depends on no β.

    Parameters
    ----------
    X : n × q covariates (every column any model may use).
    time, event : follow-up time and 1/0 event code per row.
    ties : "efron" or "breslow".

    Examples
    --------
    >>> import numpy as np
    >>> s = CoxSample(np.array([[0.0], [1.0], [0.0], [1.0]]), np.array([1, 2, 3, 4.0]),
    ...               np.ones(4), "efron")
    >>> round(s.loglik(np.zeros(1)), 4)
    -3.1781
    """

    def __init__(self, X: Array, time: Array, event: Array, ties: str) -> None:
        order = np.argsort(-time, kind="stable")  # latest first: risk sets are prefixes
        Xs = X[order]
        self.X: Array = np.asfortranarray(Xs - Xs.mean(axis=0))
        t = time[order]
        e = event[order] > 0
        self.n = len(t)
        ev_rows = np.flatnonzero(e)
        # Event rows come latest first; a tied set is a run of equal times.
        ev_t = t[ev_rows]
        starts = np.flatnonzero(np.r_[True, ev_t[1:] != ev_t[:-1]])
        self.ev_rows = ev_rows
        self.first = starts
        self.group = np.repeat(np.arange(len(starts)), np.diff(np.r_[starts, len(ev_rows)]))
        self.d = np.bincount(self.group).astype(np.float64)
        # Risk set of each event time: rows 0 .. end − 1 (time ≥ that time).
        t_asc = t[::-1]
        self.end = self.n - np.searchsorted(t_asc, ev_t[starts], side="left")
        within = np.arange(len(ev_rows)) - starts[self.group]
        self.phi = within / self.d[self.group] if ties == "efron" else np.zeros(len(ev_rows))
        # For each row, the tied sets whose risk set holds it: those at times ≤ its
        # own, i.e. groups k ≥ from_group[i] (groups run latest first).
        self.from_group = np.searchsorted(-ev_t[starts], -t, side="left")
        self.n_tied = int(np.count_nonzero(self.d > 1))
        self.X_ev_sum = self.X[ev_rows].sum(axis=0)
        #: largest |centred value| per column (for the stopping rule), and SD
        self.reach = np.max(np.abs(self.X), axis=0) if self.n else np.zeros(X.shape[1])
        self.sd = np.std(self.X, axis=0) if self.n else np.zeros(X.shape[1])
        self._event = e
        self._flags: npt.NDArray[np.bool_] | None = None

    def no_events_at_one_level(self) -> npt.NDArray[np.bool_]:
        """Per column: two-valued with no events at one of its values (the
        hazard ratio then runs off to infinity).  Screened once per sample."""
        if self._flags is None:
            X, e = self.X, self._event
            lo, hi = X.min(axis=0), X.max(axis=0)
            at_hi, at_lo = hi == X, lo == X
            two = np.all(at_hi | at_lo, axis=0) & (hi > lo)
            ev_hi = np.count_nonzero(at_hi & e[:, None], axis=0)
            ev_lo = np.count_nonzero(at_lo & e[:, None], axis=0)
            self._flags = two & ((ev_hi == 0) | (ev_lo == 0))
        return self._flags

    def columns(self, cols: Index | None) -> Array:
        """The model's centred columns, column-major (a view when all are used)."""
        if cols is None:
            return self.X
        return np.asfortranarray(self.X[:, cols])

    def point(self, X: Array, beta: Array) -> CoxPoint:
        """Log partial likelihood at β: one exponential and one cumulative sum of n."""
        eta = X @ beta
        eta -= eta.max()  # the shift cancels between numerator and denominators
        w = np.exp(eta)
        s0 = np.cumsum(w)[self.end - 1]
        s0d = np.add.reduceat(w[self.ev_rows], self.first)
        g = self.group
        den = s0[g] - self.phi * s0d[g]
        loglik = float(np.sum(eta[self.ev_rows]) - np.sum(np.log(den)))
        return CoxPoint(beta, loglik, w, den, s0d)

    def derivatives(
        self, X: Array, pt: CoxPoint, ev_sum: Array | None = None
    ) -> tuple[Array, Array]:
        """Score and information at a point, sharing its weights.

        Cumulative sums down the weighted columns (`_risk_set_sums`) give
        every risk set's S1.  Event j of tied set g has mean
        mⱼ = (S1_g − φⱼ D1_g)/denⱼ (D1_g the weighted sum over the tied set),
        so the score Σⱼ (xⱼ − mⱼ) and Σⱼ mⱼmⱼ' reduce to sums over the tied
        sets with per-set weights Σ 1/den, Σ φ/den, Σ 1/den², Σ φ/den²,
        Σ φ²/den²; the rest of the information is Σᵢ cᵢ wᵢ xᵢxᵢ', with cᵢ
        the summed 1/denominators of the risk sets that hold row i (less
        Efron's share for its own tied set).  ``ev_sum`` is the model's
        column sums over the event rows (computed when not given).
        """
        g, phi, w, den = self.group, self.phi, pt.w, pt.den
        k = len(self.d)
        s1, d1 = self._risk_set_sums(X, w)

        def per_set(weights: Array) -> Array:
            return np.bincount(g, weights=weights, minlength=k).astype(np.float64)

        inv = 1.0 / den
        a, b = per_set(inv), per_set(phi * inv)
        a2, b2, c2 = per_set(inv * inv), per_set(phi * inv * inv), per_set(phi * phi * inv * inv)
        if ev_sum is None:
            ev_sum = self.X_ev_sum if X is self.X else X[self.ev_rows].sum(axis=0)
        score = ev_sum - (a @ s1 - b @ d1)
        cross = (s1 * b2[:, None]).T @ d1
        MtM = (s1 * a2[:, None]).T @ s1 - cross - cross.T + (d1 * c2[:, None]).T @ d1
        tail = np.r_[np.cumsum(a[::-1])[::-1], 0.0]  # Σ over tied sets ≥ k
        c = w * tail[self.from_group]
        c[self.ev_rows] -= w[self.ev_rows] * b[g]
        H = weighted_crossprod(X, np.clip(c, 0.0, None)) - MtM
        return score, H

    def _risk_set_sums(self, X: Array, w: Array) -> tuple[Array, Array]:
        """S1 (Σ wx over each risk set) and D1 (over each tied set), per column.

        Column by column through one buffer of n values: the weighted column,
        its tied-set sums and its cumulative sum stay in the processor cache,
        so the rows are read once (an n × p array of weighted columns would
        be written and read again twice, and the pass is bound by memory).
        """
        n, p = X.shape
        k = len(self.first)
        s1, d1 = np.empty((k, p)), np.empty((k, p))
        tmp = np.empty(n)
        for j in range(p):
            np.multiply(X[:, j], w, out=tmp)
            d1[:, j] = np.add.reduceat(tmp[self.ev_rows], self.first)
            np.cumsum(tmp, out=tmp)
            s1[:, j] = tmp[self.end - 1]
        return s1, d1

    def loglik(self, beta: Array, cols: Index | None = None) -> float:
        """Log partial likelihood of the model on ``cols`` at β."""
        return self.point(self.columns(cols), beta).loglik
