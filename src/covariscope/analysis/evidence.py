"""The comparison models and the numeric evidence per covariate (DESIGN §2).

:class:`EvidenceEngine` fits any model "exposure + a set of covariate terms"
of one :class:`~covariscope.analysis.design.Design`.  Linear models are
solved from the one-pass :class:`~covariscope.analysis.linear.LinearSummary`
and never touch the rows again; logistic, risk-ratio and Cox models call the
fitting functions of :mod:`covariscope.analysis.glm` and
:mod:`covariscope.analysis.survival`, warm-started from the nearest model
already fitted.  An engine keeps every fit it made, by set of terms, behind a
lock (the study keeps one engine per design in its cache, so a diagram edit
refits only the models it changes); nothing is cached at module level.

:func:`compute_evidence` runs the comparisons — crude; crude + C for every
bound covariate; full; full − C for every candidate; each named set — and
gathers the evidence table.
"""

from __future__ import annotations

import functools
import math
import threading
from collections import OrderedDict
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from covariscope.analysis.collinearity import (
    AliasFinding,
    CollinearityReport,
    collinearity_report,
    find_aliases,
    gvif,
    vif,
)
from covariscope.analysis.column_fit import ColumnFit
from covariscope.analysis.contrasts import ExposureJoint, joint_summary
from covariscope.analysis.design import Block, Design, constant_message
from covariscope.analysis.distributions import t_ppf
from covariscope.analysis.families import Fitter, family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.linear import (
    LinearSummary,
    OLSResult,
    is_rank_deficient,
    linear_summary,
    solve_ols,
)
from covariscope.errors import DataError

__all__ = [
    "NEAR_ZERO_SE_FRACTION",
    "Comparison",
    "CovariateEvidence",
    "EvidenceCancelledError",
    "EvidenceEngine",
    "EvidenceTable",
    "PassCallback",
    "compare",
    "compute_evidence",
]

#: ``b_without`` counts as near zero, and the change in % as undefined, when
#: ``|b_without| < NEAR_ZERO_SE_FRACTION × SE_without``: below a tenth of its own
#: standard error, a shift of a hundredth of a standard error — pure noise —
#: would already read as a 10 % change.  Common practice, no published source.
NEAR_ZERO_SE_FRACTION = 0.1

ProgressCallback = Callable[[int, int], None]
#: (model number, models in the table, passes over the rows made for it so far)
PassCallback = Callable[[int, int, int], None]
CancelCallback = Callable[[], bool]
#: Told (stage name, hit?) of every fit asked for: how a cache counts fits it does not hold.
FitRecorder = Callable[[str, bool], None]


@functools.lru_cache(maxsize=256)
def _t_quantile(df: int) -> float:
    return float(t_ppf(0.975, df))


class EvidenceCancelledError(Exception):
    """Raised by :func:`compute_evidence` when its ``cancel`` callback says stop."""


def _remember(cache: OrderedDict[Any, Any], key: Any, value: Any, size: int) -> None:
    cache[key] = value
    cache.move_to_end(key)
    while len(cache) > size:
        cache.popitem(last=False)


class EvidenceEngine:
    """Fits the comparison models of one design, caching every result.

    Parameters
    ----------
    design : Design
        The analytic sample's numbers (see :func:`~covariscope.analysis.design.make_design`).
    family : str
        Must be the family the design was checked for.
    summary : LinearSummary, optional
        The design's one-pass summary when the caller already has it
        (default: computed on first use).
    record : callable(stage, hit), optional
        Told of every fit asked for, ``("fit", True)`` when it was kept.

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(0)
    >>> z = rng.normal(size=300); x = z + rng.normal(size=300); y = x + 2 * z + rng.normal(size=300)
    >>> d = make_design(pd.DataFrame({"x": x, "z": z, "y": y}), exposure=TermSpec("x", "continuous"),
    ...                 covariates={"z": TermSpec("z", "continuous")}, outcome="y", family="linear")
    >>> engine = EvidenceEngine(d, "linear")
    >>> round(engine.fit([]).coef, 1), round(engine.fit(["z"]).coef, 1)
    (2.1, 1.1)
    """

    def __init__(
        self,
        design: Design,
        family: str | None = None,
        *,
        summary: LinearSummary | None = None,
        record: FitRecorder | None = None,
    ) -> None:
        family = family or design.family
        if family != design.family:
            raise ValueError(f"design was built for {design.family!r}, not {family!r}")
        self.design = design
        self.family = family
        #: the family object every branch on the family asks
        self.model_family = family_of(family)
        self._summary = summary
        self._record = record
        # One lock per engine: two threads sharing it fit one model at a time.
        self._lock = threading.RLock()
        self._fits: dict[frozenset[str], tuple[Fit, np.ndarray | None]] = {}
        self._order = {node: i for i, node in enumerate(design.blocks)}
        self._ols: dict[frozenset[str], OLSResult | None] = {}
        # Inverse information of each GLM fit, by its set of terms: lets a nested
        # model start from a one-step update instead of from the bare parameters.
        self._glm_cov: dict[frozenset[str], np.ndarray] = {}
        self._glm_matrix: np.ndarray | None = None
        self._reach_cache: np.ndarray | None = None
        self._cox: Any = None  # the CoxSample, built on the first Cox fit
        # Information and score over every design column at a fitted model's
        # parameters: the first Newton step of each model that adds terms to it.
        self._glm_step: OrderedDict[frozenset[str], tuple[np.ndarray, np.ndarray]] = OrderedDict()

    # -- the summary ---------------------------------------------------------------
    @property
    def summary(self) -> LinearSummary:
        """Means and co-moments of [exposure | covariate columns | outcome], one pass."""
        if self.design.row_stats is not None:
            return self.design.row_stats.summary
        with self._lock:
            if self._summary is None:
                self._summary = linear_summary(self.design.values)
            return self._summary

    @property
    def nbytes(self) -> int:
        """Memory held: the design and the GLM working matrix."""
        extra = 0 if self._glm_matrix is None else int(self._glm_matrix.nbytes)
        return int(self.design.values.nbytes) + extra

    def columns(self, terms: Sequence[str]) -> list[int]:
        """Design-column positions of the exposure and ``terms`` (design order)."""
        cols = list(self.design.exposure_index)
        for node in self.ordered(terms):
            cols.extend(self.design.blocks[node].index)
        return cols

    def ordered(self, terms: Sequence[str]) -> tuple[str, ...]:
        """Terms in design order, each once."""
        return tuple(sorted(set(terms), key=self._order.__getitem__))

    def groups(self, terms: Sequence[str]) -> dict[str, list[int]]:
        groups = {self.design.exposure_node: list(self.design.exposure_index)}
        for node in self.ordered(terms):
            groups[node] = list(self.design.blocks[node].index)
        return groups

    def adopt(self, other: EvidenceEngine, terms: frozenset[str]) -> int:
        """Take over ``other``'s fits of models made of ``terms`` only; returns how many.

        The caller vouches that ``other`` was built from the same rows, with
        the same exposure, outcome and family, and that every one of
        ``terms`` has the same columns in both designs (so binding one more
        covariate, or recoding one, refits only the models that hold it).
        """
        with other._lock:
            fits = {k: v for k, v in other._fits.items() if k <= terms}
            ols = {k: v for k, v in other._ols.items() if k <= terms}
            cov = {k: v for k, v in other._glm_cov.items() if k <= terms}
        with self._lock:
            self._fits.update(fits)
            self._ols.update(ols)
            self._glm_cov.update(cov)
        return len(fits)

    def column_fit(self, terms: Sequence[str]) -> ColumnFit | None:
        """The fitted model exposure + ``terms`` as the checks that extend it
        start from (:func:`~covariscope.analysis.column_fit.base_fit`'s
        columns and form), when an iterative fit of it is at hand; None
        otherwise (a linear model, or one not fitted or failed)."""
        with self._lock:
            hit = self._fits.get(frozenset(terms))
        if hit is None or hit[1] is None or not hit[0].ok:
            return None
        fit, params = hit
        names = [self.design.column_names[c] for c in self.columns(terms)]
        cov = fit.covariance(tuple(names))
        coef = [fit.coefficient(name) for name in names]
        if cov is None or any(b is None or not math.isfinite(b) for b in coef):
            return None
        return ColumnFit(np.array(coef, dtype=float), cov, None, tuple(names), params)

    def aliased(self, terms: Sequence[str] | None = None) -> tuple[AliasFinding, ...]:
        """Exact linear combinations among the exposure and ``terms`` (default: every term)."""
        terms = list(self.design.blocks) if terms is None else terms
        return find_aliases(self.summary, self.groups(terms))

    # -- fitting -------------------------------------------------------------------
    def fit(self, terms: Sequence[str], on_pass: Callable[[], None] | None = None) -> Fit:
        """The model exposure + ``terms``; a failed :class:`Fit` (never an exception) when it cannot be fitted.

        ``on_pass`` is called after every pass over the rows (progress, and
        cancellation: an exception it raises stops the fit and caches nothing).
        """
        unknown = [t for t in terms if t not in self._order]
        if unknown:
            return Fit.failed(
                self.family,
                tuple(terms),
                self.design.n,
                f"{', '.join(unknown)} is not bound to a data column, so this model cannot be fitted.",
            )
        key = frozenset(terms)
        with self._lock:
            hit = self._fits.get(key)
            if self._record is not None:
                self._record("fit", hit is not None)
            if hit is None:
                made, params = self._fit_uncached(self.ordered(terms), on_pass)
                hit = (self._named(made), params)
                self._fits[key] = hit
            return hit[0]

    def fit_many(
        self, plan: Sequence[Sequence[str]], on_pass: Callable[[int], None] | None = None
    ) -> None:
        """Fit the models of ``plan`` together where that saves reads of the rows.

        With the rows left in their source, every read is a full scan, so the
        Newton steps of the models not yet fitted share each read
        (:func:`~covariscope.analysis.glm_rows.fit_glm_rows_many`); each starts
        where :meth:`fit` would start it, and ends where it would end.  Other
        designs are left to :meth:`fit` (their passes are cheap already).
        With the rows in memory, the models' passes are made together as well
        (:func:`~covariscope.analysis.glm_batch.newton_paths_many`).
        ``on_pass`` is called with a model's position in ``plan`` after each
        pass that served it.
        """
        design = self.design
        if self.model_family.fitter is not Fitter.GLM:
            return
        if design.rows is None:
            self._fit_many_memory(plan, on_pass)
            return
        from covariscope.analysis.glm_rows import RowModel, RowOutcome, fit_glm_rows_many

        stats = design.row_stats
        assert stats is not None
        with self._lock:
            todo: list[tuple[frozenset[str], tuple[str, ...], RowModel]] = []
            for _, key, ordered, cols in self._unfitted(plan):
                names = [design.column_names[c] for c in cols]
                todo.append(
                    (
                        key,
                        ordered,
                        RowModel(
                            tuple(cols),
                            ["(intercept)", *names],
                            ordered,
                            np.concatenate([[0.0], self._column_sd()[cols]]),
                            self._reach()[[0, *(c + 1 for c in cols)]],
                            self._warm_start(ordered, names, True),
                        ),
                    )
                )
            if len(todo) < 2:
                return
            outcome = RowOutcome(
                mean=float(stats.summary.mean[-1]),
                offset_exp_sum=stats.offset_exp_sum,
                n=design.n,
                binary=stats.outcome_not_binary == 0,
            )
            try:
                results = fit_glm_rows_many(
                    design.rows,
                    [m for _, _, m in todo],
                    self.family,
                    outcome=outcome,
                    on_pass=None if on_pass is None else lambda: on_pass(0),
                )
            except (ArithmeticError, ValueError, np.linalg.LinAlgError):
                return  # each model is then fitted alone, and says what went wrong
            for (key, _, _), (fit, params, cov) in zip(todo, results, strict=True):
                if cov is not None and fit.ok and fit.converged:
                    self._glm_cov[key] = cov
                if self._record is not None:
                    self._record("fit", False)
                self._fits[key] = (self._named(fit), params)

    def _unfitted(
        self, plan: Sequence[Sequence[str]]
    ) -> list[tuple[int, frozenset[str], tuple[str, ...], list[int]]]:
        """The models of ``plan`` that :meth:`fit_many` fits: (position in
        ``plan``, key, ordered terms, design columns) of each model not yet
        fitted, each once.  A model with an unbound term or a problem that
        :meth:`_precheck` finds is left to :meth:`fit`, which says what it is."""
        out: list[tuple[int, frozenset[str], tuple[str, ...], list[int]]] = []
        seen: set[frozenset[str]] = set()
        for position, terms in enumerate(plan):
            key = frozenset(terms)
            if key in self._fits or key in seen or any(t not in self._order for t in terms):
                continue
            ordered = self.ordered(terms)
            cols = self.columns(ordered)
            if self._precheck(ordered, len(cols) + 1):
                continue
            seen.add(key)
            out.append((position, key, ordered, cols))
        return out

    def _fit_many_memory(
        self, plan: Sequence[Sequence[str]], on_pass: Callable[[int], None] | None
    ) -> None:
        """:meth:`fit_many` for rows in memory: the models' Newton steps share
        each read of the rows (:func:`~covariscope.analysis.glm_batch.newton_paths_many`)."""
        from covariscope.analysis.glm_batch import BatchModel, fits_many

        design = self.design
        assert design.y is not None  # make_design requires an outcome here
        full = self._intercept_matrix()
        with self._lock:
            todo: list[tuple[frozenset[str], tuple[str, ...], list[str], BatchModel]] = []
            where: list[int] = []
            for position, key, ordered, cols in self._unfitted(plan):
                names = ["(intercept)", *(design.column_names[c] for c in cols)]
                idx = np.array([0, *(c + 1 for c in cols)], dtype=np.intp)
                model = BatchModel.of(
                    full,
                    design.y,
                    self.family,
                    idx,
                    offset=design.offset,
                    start=self._warm_start(ordered, names[1:], True),
                    scale=np.concatenate([[0.0], self._column_sd()[cols]]),
                    reach=self._reach()[idx],
                )
                todo.append((key, ordered, names, model))
                where.append(position)
            if len(todo) < 2:
                return
            fitted = fits_many(
                full,
                design.y,
                self.family,
                [model for *_, model in todo],
                [names for _, _, names, _ in todo],
                terms=[ordered for _, ordered, _, _ in todo],
                offset=design.offset,
                on_pass=None if on_pass is None else lambda k: on_pass(where[k]),
            )
            for (key, _, _, _), done in zip(todo, fitted, strict=True):
                if done is None:
                    continue  # fit() fits it alone and says what went wrong
                fit, kept = done
                if kept is not None and kept.cov is not None and fit.ok and fit.converged:
                    self._glm_cov[key] = kept.cov
                if self._record is not None:
                    self._record("fit", False)
                self._fits[key] = (self._named(fit), None if kept is None else kept.params)

    def _named(self, fit: Fit) -> Fit:
        """A multi-level exposure's fit with its contrasts named (see :meth:`Fit.with_contrasts`)."""
        design = self.design
        if not design.multilevel:
            return fit
        cols = design.exposure_columns
        return fit.with_contrasts(cols, tuple(design.contrast_level(c) for c in cols))

    def ols(self, terms: Sequence[str]) -> OLSResult | None:
        """The least-squares solution behind a linear :meth:`fit` (None if rank deficient)."""
        k = frozenset(terms)
        with self._lock:
            if k not in self._ols:
                outcome = self.design.outcome_index
                self._ols[k] = solve_ols(self.summary, self.columns(list(terms)), outcome)
            return self._ols[k]

    def _precheck(self, terms: tuple[str, ...], n_params: int) -> str | None:
        n = self.design.n
        constant = [t for t in terms if t in self.design.constant]
        if constant:
            return " ".join(constant_message(t, self.design.blocks[t].columns[0]) for t in constant)
        if n <= n_params:
            return f"The model has {n_params} parameters but only {n} rows; it needs at least {n_params + 1}."
        # One factorisation decides; the slower column-by-column search only names the culprits.
        if is_rank_deficient(self.summary, self.columns(terms)):
            found = find_aliases(self.summary, self.groups(terms))
            names = (
                "; ".join(f.message for f in found)
                or "Some columns are exact linear combinations of others"
            )
            return names + ", so this model cannot separate them."
        return None

    def _fit_uncached(
        self, terms: tuple[str, ...], on_pass: Callable[[], None] | None = None
    ) -> tuple[Fit, np.ndarray | None]:
        cols = self.columns(terms)
        names = [self.design.column_names[c] for c in cols]
        intercept = self.model_family.intercept
        problem = self._precheck(terms, len(cols) + int(intercept))
        if problem:
            return Fit.failed(self.family, terms, self.design.n, problem), None
        if self.model_family.least_squares:
            return self._fit_linear(terms, names), None
        start = self._warm_start(terms, names, intercept)
        if self.design.rows is not None:
            return self._fit_rows(terms, cols, names, start)
        try:
            if self.model_family.fitter is Fitter.GLM:
                fit, path = self._fit_glm(terms, cols, names, start, on_pass)
            else:
                fit, path = self._fit_cox(terms, cols, names, start, on_pass)
        except (ArithmeticError, ValueError, np.linalg.LinAlgError) as exc:
            # The fitting functions report their own failures; anything left is still a per-model failure.
            return Fit.failed(
                self.family, terms, self.design.n, f"The model could not be fitted: {exc}"
            ), None
        if path is not None and path.cov is not None and fit.ok and fit.converged:
            self._glm_cov[frozenset(terms)] = path.cov
        return fit, None if path is None else path.params

    def _fit_glm(
        self,
        terms: tuple[str, ...],
        cols: list[int],
        names: list[str],
        start: np.ndarray | None,
        on_pass: Callable[[], None] | None,
    ) -> tuple[Fit, Any]:
        from covariscope.analysis.glm import fit_glm_path

        full = self._intercept_matrix()
        idx = np.array([0, *(c + 1 for c in cols)], dtype=np.intp)
        assert self.design.y is not None  # make_design requires an outcome here
        # make_design has checked the values, the outcome and the constant
        # columns, and _precheck the rows and the rank: the fit need not scan
        # again.  The model's columns are read in place from the shared matrix.
        return fit_glm_path(
            full,
            self.design.y,
            self.family,
            column_names=["(intercept)", *names],
            terms=terms,
            exposure_index=1,
            offset=self.design.offset,
            start=start,
            checked=True,
            scale=np.concatenate([[0.0], self._column_sd()[cols]]),
            cols=idx,
            reach=self._reach()[idx],
            on_pass=on_pass,
        )

    def _fit_cox(
        self,
        terms: tuple[str, ...],
        cols: list[int],
        names: list[str],
        start: np.ndarray | None,
        on_pass: Callable[[], None] | None,
    ) -> tuple[Fit, Any]:
        from covariscope.analysis.survival import fit_cox_sample

        sample = self._cox_sample()
        idx = np.array(cols, dtype=np.intp)
        return fit_cox_sample(
            sample,
            idx,
            column_names=names,
            terms=terms,
            exposure_index=0,
            start=start,
            scale=sample.sd[idx],
            on_pass=on_pass,
        )

    def _cox_sample(self) -> Any:
        """The survival sample sorted and centred once, shared by every Cox model."""
        if self._cox is None:
            from covariscope.analysis.survival import CoxSample

            # make_design requires both columns for the Cox family
            assert self.design.time is not None
            assert self.design.event is not None
            q = self.design.n_design_columns
            self._cox = CoxSample(
                self.design.values[:, :q], self.design.time, self.design.event, "efron"
            )
        return self._cox

    def _reach(self) -> np.ndarray:
        """Largest |value| of each column of the intercept matrix (the stopping rule's scale)."""
        if self._reach_cache is None:
            q = self.design.n_design_columns
            stats = self.design.row_stats
            if stats is not None:
                absmax = np.maximum(np.abs(stats.low), np.abs(stats.high))[:q]
            else:
                absmax = np.max(np.abs(self.design.values[:, :q]), axis=0)
            self._reach_cache = np.concatenate([[1.0], absmax])
        return self._reach_cache

    def _fit_rows(
        self, terms: tuple[str, ...], cols: list[int], names: list[str], start: np.ndarray | None
    ) -> tuple[Fit, np.ndarray | None]:
        """A logistic or Poisson fit from row sums (the rows stay with their source)."""
        from covariscope.analysis.glm_rows import RowOutcome, fit_glm_rows

        rows, stats = self.design.rows, self.design.row_stats
        assert rows is not None
        assert stats is not None
        if self.model_family.fitter is not Fitter.GLM:
            return Fit.failed(
                self.family, terms, self.design.n, "This family needs the rows in memory."
            ), None
        outcome = RowOutcome(
            mean=float(stats.summary.mean[-1]),
            offset_exp_sum=stats.offset_exp_sum,
            n=self.design.n,
            binary=stats.outcome_not_binary == 0,
        )
        try:
            fit, params, cov = fit_glm_rows(
                rows,
                tuple(cols),
                self.family,
                outcome=outcome,
                column_names=["(intercept)", *names],
                terms=terms,
                scale=np.concatenate([[0.0], self._column_sd()[cols]]),
                reach=self._reach()[[0, *(c + 1 for c in cols)]],
                start=start,
            )
        except (ArithmeticError, ValueError, np.linalg.LinAlgError) as exc:
            return Fit.failed(
                self.family, terms, self.design.n, f"The model could not be fitted: {exc}"
            ), None
        if cov is not None and fit.ok and fit.converged:
            self._glm_cov[frozenset(terms)] = cov
        return fit, params

    def _intercept_matrix(self) -> np.ndarray:
        """[1 | design columns] in Fortran order, built once: every model reads
        its columns from it in place."""
        if self._glm_matrix is None:
            q = self.design.n_design_columns
            full = np.empty((self.design.n, q + 1), order="F")
            full[:, 0] = 1.0
            full[:, 1:] = self.design.values[:, :q]
            self._glm_matrix = full
        return self._glm_matrix

    def _column_sd(self) -> np.ndarray:
        summary = self.summary
        return np.sqrt(np.clip(np.diag(summary.comoment), 0.0, None) / max(summary.n, 1))

    def _parent(self, wanted: frozenset[str]) -> tuple[frozenset[str], np.ndarray] | None:
        """The fitted model to start from: the nearest one, a model that holds
        every wanted term (a one-step drop update, no pass) before one whose
        terms are all wanted (a one-step add update; preferably from a model
        whose pass over every column is already made)."""
        best: tuple[tuple[int, int], frozenset[str], np.ndarray] | None = None
        for tset, (_, params) in self._fits.items():
            if params is None:
                continue
            distance = len(tset ^ wanted)
            if tset >= wanted and tset in self._glm_cov:
                rank = 0
            elif tset <= wanted and tset in self._glm_step:
                rank = 1
            else:
                rank = 2
            key = (distance + (1 if rank == 2 else 0), rank)
            if best is None or key < best[0]:
                best = (key, tset, params)
        return None if best is None else (best[1], best[2])

    def _warm_start(
        self, terms: tuple[str, ...], names: list[str], intercept: bool
    ) -> np.ndarray | None:
        wanted = frozenset(terms)
        found = self._parent(wanted)
        if found is None:
            return None
        parent, params = found
        old_cols = self.columns(list(parent))
        old_names = (["(intercept)"] if intercept else []) + [
            self.design.column_names[c] for c in old_cols
        ]
        if len(old_names) != len(params):
            return None
        cov = self._glm_cov.get(parent)
        new_names = (["(intercept)"] if intercept else []) + names
        if cov is not None and wanted < parent:
            # Dropping terms from a fitted model: minimise the quadratic
            # approximation of its log-likelihood with the dropped coefficients
            # held at zero, b_K − V_KD V_DD⁻¹ b_D (V the inverse information).
            # The start is then off by O(b_D²) instead of O(b_D): a Newton step saved.
            keep_set = set(new_names)
            drop = [i for i, name in enumerate(old_names) if name not in keep_set]
            keep = [i for i, name in enumerate(old_names) if name in keep_set]
            try:
                shift = cov[np.ix_(keep, drop)] @ np.linalg.solve(
                    cov[np.ix_(drop, drop)], params[drop]
                )
            except np.linalg.LinAlgError:
                shift = np.zeros(len(keep))
            if np.all(np.isfinite(shift)):
                params = params.copy()
                params[keep] -= shift
                params[drop] = 0.0
        lookup = dict(zip(old_names, params, strict=True))
        start = np.array([lookup.get(name, 0.0) for name in new_names])
        if wanted > parent:
            return self._added_start(parent, old_cols, found[1], terms, start)
        return start

    def _step_at(
        self, parent: frozenset[str], parent_cols: list[int], parent_params: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        """Information and score over every design column at a fitted model's
        parameters (zero for the columns it lacks): one pass, kept."""
        hit = self._glm_step.get(parent)
        if hit is not None:
            return hit
        if self.design.rows is not None:
            from covariscope.analysis.rows import glm_pass

            b = np.zeros(self.design.n_design_columns + 1)
            b[[0, *(c + 1 for c in parent_cols)]] = parent_params
            every = tuple(range(self.design.n_design_columns))
            sums = glm_pass(self.design.rows, every, b, self.family)
            hit = (sums.information, sums.score)
        elif self.model_family.fitter is Fitter.COX:
            sample = self._cox_sample()
            b = np.zeros(sample.X.shape[1])
            b[parent_cols] = parent_params
            score, H = sample.derivatives(sample.X, sample.point(sample.X, b))
            hit = (H, score)
        else:
            from covariscope.analysis.glm import information_and_score

            full = self._intercept_matrix()
            b = np.zeros(full.shape[1])
            b[[0, *(c + 1 for c in parent_cols)]] = parent_params
            assert self.design.y is not None
            hit = information_and_score(
                full, self.design.y, self.family, b, offset=self.design.offset
            )
        _remember(self._glm_step, parent, hit, 4)
        return hit

    def _added_start(
        self,
        parent: frozenset[str],
        parent_cols: list[int],
        parent_params: np.ndarray,
        terms: tuple[str, ...],
        start: np.ndarray,
    ) -> np.ndarray:
        """The first Newton step from (parent's fit, 0 for the added terms).

        Every model that adds terms to the same fitted model starts from the
        same linear predictor, so one weighted pass over the whole design serves
        them all: each takes its own sub-blocks of the information and score.
        """
        from covariscope.analysis.fitting_common import DIVERGE_SD

        H, score = self._step_at(parent, parent_cols, parent_params)
        cols = self.columns(terms)
        cox = not self.model_family.intercept
        idx = cols if cox else [0, *(c + 1 for c in cols)]
        try:
            step = np.linalg.solve(H[np.ix_(idx, idx)], score[idx])
        except np.linalg.LinAlgError:
            return start
        candidate = start + step
        sd = self._column_sd()[cols] if cox else np.concatenate([[0.0], self._column_sd()[cols]])
        # A step that runs far out (near separation) is left to the damped loop.
        if not np.all(np.isfinite(candidate)) or np.any(np.abs(candidate) * sd > DIVERGE_SD / 2):
            return start
        return candidate

    def _fit_linear(self, terms: tuple[str, ...], names: list[str]) -> Fit:
        res = self.ols(terms)
        if res is None:
            return Fit.failed(
                self.family, terms, self.design.n, "The model's columns are exactly collinear."
            )
        t = _t_quantile(res.df_resid)
        lo, hi = res.coef - t * res.se, res.coef + t * res.se
        term_coefs = {
            names[j]: (float(res.coef[j]), float(res.se[j]), float(lo[j]), float(hi[j]))
            for j in range(1, len(names))
        }
        return Fit(
            family=self.family,
            terms=terms,
            coef=float(res.coef[0]),
            se=float(res.se[0]),
            ci=(float(lo[0]), float(hi[0])),
            n=res.n,
            resid_sd=res.sigma,
            df_resid=res.df_resid,
            n_params=len(names) + 1,
            term_coefs=term_coefs,
            cov_columns=tuple(names),
            cov=res.cov,
        )


@dataclass(frozen=True)
class Comparison:
    """The exposure estimate with a covariate against without it.

    ``change_pct`` = 100 × (b_with − b_without) / |b_without| (NaN and
    ``change_defined`` False when b_without is near zero, see
    :data:`NEAR_ZERO_SE_FRACTION`); ``change_pct_ratio`` = 100 ×
    (exp(b_with − b_without) − 1) for ratio families; ``se_inflation_pct`` =
    100 × (SE_with / SE_without − 1).  ``se_ratio_parts`` (linear models):
    variance-inflation part √(VIF_with / VIF_without), residual part
    √(RSS_with / RSS_without) and degrees-of-freedom part √(df_without / df_with),
    whose product is SE_with / SE_without.
    """

    with_fit: Fit
    without_fit: Fit
    change_pct: float
    change_pct_ratio: float | None
    se_inflation_pct: float
    change_defined: bool
    note: str = ""
    se_ratio_parts: tuple[float, float, float] | None = None


def compare(
    with_fit: Fit,
    without_fit: Fit,
    *,
    near_zero: float = NEAR_ZERO_SE_FRACTION,
    se_ratio_parts: tuple[float, float, float] | None = None,
) -> Comparison:
    """Change in estimate and SE inflation between two fits (DESIGN §2).

    >>> a = Fit("linear", ("z",), 1.5, 0.2, (1.1, 1.9), 100)
    >>> b = Fit("linear", (), 2.0, 0.1, (1.8, 2.2), 100)
    >>> c = compare(a, b)
    >>> round(c.change_pct, 1), round(c.se_inflation_pct, 1)
    (-25.0, 100.0)
    """
    nan = float("nan")
    ratio_family = family_of(with_fit.family).ratio
    if not (with_fit.ok and without_fit.ok):
        failed = with_fit if not with_fit.ok else without_fit
        note = f"Not compared: {failed.message}"
        return Comparison(
            with_fit, without_fit, nan, nan if ratio_family else None, nan, False, note
        )
    diff = with_fit.coef - without_fit.coef
    ratio_pct = 100.0 * math.expm1(diff) if ratio_family else None
    se_pct = 100.0 * (with_fit.se / without_fit.se - 1.0)
    ref = abs(without_fit.coef)
    if ref == 0.0 or ref < near_zero * without_fit.se:
        note = (
            f"The estimate without the covariate ({without_fit.coef:.3g}) is within {near_zero:g} "
            "standard errors of zero, so a percentage change is not defined."
        )
        if ratio_family:
            note += " The ratio-scale change is still shown."
        return Comparison(
            with_fit, without_fit, nan, ratio_pct, se_pct, False, note, se_ratio_parts
        )
    return Comparison(
        with_fit, without_fit, 100.0 * diff / ref, ratio_pct, se_pct, True, "", se_ratio_parts
    )


@dataclass(frozen=True)
class CovariateEvidence:
    """Everything the data say about one covariate (DESIGN §2).

    ``vif``, ``tolerance`` and ``aux_r2`` are for C in the full model (None
    when C is not a candidate); for a multi-column term ``vif`` is
    GVIF^(1/df), the value compared with a VIF threshold, and tolerance and
    auxiliary R² follow from it.  ``own_coef``/``own_se``/``own_ci`` come from
    crude + C; for a multi-column term they are dicts by design column.
    """

    node: str
    added: Comparison
    dropped: Comparison | None
    vif_exposure_added: float
    vif: float | None
    tolerance: float | None
    aux_r2: float | None
    gvif: float | None
    gvif_root: float | None
    df: int
    r2_exposure: float
    own_coef: float | dict[str, float] | None
    own_se: float | dict[str, float] | None
    own_ci: tuple[float, float] | dict[str, tuple[float, float]] | None
    se_ratio_parts: tuple[float, float, float] | None
    #: a multi-level exposure: every contrast's comparisons and their joint
    #: summary (``added``/``dropped`` then hold the contrast that moved most,
    #: and ``vif_exposure_added`` the block's GVIF^(1/df)); None otherwise
    joint: ExposureJoint | None = None


@dataclass(frozen=True)
class EvidenceTable:
    """Every comparison model and the evidence per covariate."""

    family: str
    crude: Fit
    full: Fit
    covariates: dict[str, CovariateEvidence]
    sets: dict[str, Fit]
    collinearity: CollinearityReport
    aliased: tuple[AliasFinding, ...]
    candidates: tuple[str, ...]
    warnings: tuple[str, ...] = ()
    dropped_fits: dict[str, Fit] = field(default_factory=dict)


def _se_parts(
    engine: EvidenceEngine,
    with_terms: Sequence[str],
    without_terms: Sequence[str],
    contrast: int = 0,
) -> tuple[float, float, float] | None:
    """The split of the SE ratio of the exposure's column ``contrast`` (linear models)."""
    if not engine.model_family.least_squares:
        return None
    w, wo = engine.ols(with_terms), engine.ols(without_terms)
    if w is None or wo is None:
        return None
    j = contrast
    if min(wo.rss, w.rss, wo.vif[j], w.vif[j], w.df_resid, wo.df_resid) <= 0:
        return None  # a perfect fit or no residual degrees of freedom: no split
    return (
        math.sqrt(w.vif[j] / wo.vif[j]),
        math.sqrt(w.rss / wo.rss),
        math.sqrt(wo.df_resid / w.df_resid),
    )


def _own(fit: Fit, columns: tuple[str, ...]) -> tuple[Any, Any, Any]:
    if not fit.ok or any(c not in fit.term_coefs for c in columns):
        return None, None, None
    if len(columns) == 1:
        b, se, lo, hi = fit.term_coefs[columns[0]]
        return b, se, (lo, hi)
    return (
        {c: fit.term_coefs[c][0] for c in columns},
        {c: fit.term_coefs[c][1] for c in columns},
        {c: (fit.term_coefs[c][2], fit.term_coefs[c][3]) for c in columns},
    )


def _headline(
    engine: EvidenceEngine,
    joint: ExposureJoint,
    node: str,
    cands: tuple[str, ...],
    near_zero: float,
) -> tuple[Comparison, Comparison | None]:
    """The comparisons of the contrast that moved most, with their SE split (linear)."""
    shift = next(s for s in joint.contrasts if s.level == joint.moved_most)
    j = [s.level for s in joint.contrasts].index(joint.moved_most)
    constant = node in engine.design.constant
    added = compare(
        shift.added.with_fit,
        shift.added.without_fit,
        near_zero=near_zero,
        se_ratio_parts=None if constant else _se_parts(engine, (node,), (), j),
    )
    if shift.dropped is None:
        return added, None
    rest = tuple(t for t in cands if t != node)
    dropped = compare(
        shift.dropped.with_fit,
        shift.dropped.without_fit,
        near_zero=near_zero,
        se_ratio_parts=None if constant else _se_parts(engine, cands, rest, j),
    )
    return added, dropped


def _pass_hook(
    model: int, total: int, cancel: CancelCallback | None, report: PassCallback | None
) -> Callable[[], None] | None:
    """What runs after every pass over the rows of one model's fit."""
    if cancel is None and report is None:
        return None
    passes = 0

    def hook() -> None:
        nonlocal passes
        passes += 1
        if cancel is not None and cancel():
            raise EvidenceCancelledError("The evidence computation was cancelled.")
        if report is not None:
            report(model, total, passes)

    return hook


def _group_hook(hooks: list[Callable[[], None] | None]) -> Callable[[int], None] | None:
    """The pass hook of a group of models fitted together: model k's own hook."""
    if all(h is None for h in hooks):
        return None

    def hook(k: int) -> None:
        own = hooks[k]
        if own is not None:
            own()

    return hook


def _fit_plan(
    engine: EvidenceEngine,
    plan: Sequence[tuple[str, ...]],
    together: dict[int, int],
    cancel: CancelCallback | None,
    progress: ProgressCallback | None,
    pass_progress: PassCallback | None,
) -> None:
    """Fit the models of ``plan`` in order; ``together`` maps the first index
    of a group that may share its reads of the rows to the index past it."""
    total = len(plan)
    for done, terms in enumerate(plan):
        if cancel is not None and cancel():
            raise EvidenceCancelledError("The evidence computation was cancelled.")
        if done in together:
            hooks = [
                _pass_hook(model, total, cancel, pass_progress)
                for model in range(done + 1, together[done] + 1)
            ]
            engine.fit_many(plan[done : together[done]], on_pass=_group_hook(hooks))
        engine.fit(terms, on_pass=_pass_hook(done + 1, total, cancel, pass_progress))
        if progress is not None:
            progress(done + 1, total)


def _vif_figures(
    summary: LinearSummary, block: Block, full_vif: np.ndarray, vif_cols: list[int]
) -> tuple[float | None, float | None, float | None, float | None, float | None]:
    """(VIF, tolerance, auxiliary R², GVIF, GVIF^(1/(2 df))) of a covariate in the
    full model; a block of several columns reads its GVIF^(1/df) as its VIF.
    Tolerance, auxiliary R² and the GVIF root are None when the block is
    degenerate (a VIF of 0 or NaN: not available)."""
    if block.df == 1:
        v = g = float(full_vif[vif_cols.index(block.index[0])])
    else:
        others = [j for j in vif_cols if j not in block.index]
        g = gvif(summary, list(block.index), others)
        v = g ** (1.0 / block.df)
    if not (math.isfinite(v) and v > 0):
        return v, None, None, g, None
    return v, 1.0 / v, 1.0 - 1.0 / v, g, g ** (1.0 / (2 * block.df))


def compute_evidence(
    engine: EvidenceEngine,
    *,
    candidates: Sequence[str],
    added: Sequence[str],
    sets: Mapping[str, Sequence[str]] | None = None,
    progress: ProgressCallback | None = None,
    cancel: CancelCallback | None = None,
    pass_progress: PassCallback | None = None,
    near_zero: float = NEAR_ZERO_SE_FRACTION,
    index_threshold: float = 30.0,
    proportion_threshold: float = 0.5,
) -> EvidenceTable:
    """Fit every comparison model and gather the evidence table.

    Parameters
    ----------
    engine : EvidenceEngine
    candidates : sequence of node ids
        The full model's terms (bound covariates that are not descendants of
        the exposure or the outcome).
    added : sequence of node ids
        Every bound covariate (mediators too): each gets crude + C.
    sets : mapping of name → node ids
        Further models ("proposed", "minimal:1", ...).
    progress : callable(done, total), optional
        Called after each model.
    cancel : callable() → bool, optional
        Checked before each model and after every pass over the rows; True
        raises :class:`EvidenceCancelledError` (the model being fitted is not
        cached).
    pass_progress : callable(model, total, passes), optional
        Called after every pass over the rows of an iterative fit.
    near_zero, index_threshold, proportion_threshold : float
        See :data:`NEAR_ZERO_SE_FRACTION` and
        :func:`~covariscope.analysis.collinearity.collinearity_report`.

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(0)
    >>> z = rng.normal(size=300); x = z + rng.normal(size=300); y = x + 2 * z + rng.normal(size=300)
    >>> d = make_design(pd.DataFrame({"x": x, "z": z, "y": y}), exposure=TermSpec("x", "continuous"),
    ...                 covariates={"z": TermSpec("z", "continuous")}, outcome="y", family="linear")
    >>> table = compute_evidence(EvidenceEngine(d), candidates=["z"], added=["z"])
    >>> round(table.covariates["z"].added.change_pct)
    -50
    """
    design = engine.design
    sets = dict(sets or {})
    unknown = [c for c in [*candidates, *added] if c not in design.blocks]
    if unknown:
        raise DataError(
            f"{', '.join(unknown)} is not bound to a data column; bind it or leave it out of the model."
        )
    cands = engine.ordered(candidates)
    added_nodes = list(dict.fromkeys(added))
    plan: list[tuple[str, ...]] = [(), *[(c,) for c in added_nodes], cands]
    plan += [tuple(t for t in cands if t != c) for c in cands]
    plan += [tuple(v) for v in sets.values()]
    # Models that start from the same fitted neighbour (crude + C from the
    # crude model, full − C from the full model) can share their reads of the rows.
    together = {1: 1 + len(added_nodes), 2 + len(added_nodes): 2 + len(added_nodes) + len(cands)}
    _fit_plan(engine, plan, together, cancel, progress, pass_progress)

    summary = engine.summary
    crude = engine.fit(())
    full = engine.fit(cands)
    # A constant covariate has no VIF and would make every other one infinite:
    # the collinearity of the full model is read without it.
    constant = set(design.constant)
    varying = [t for t in cands if t not in constant]
    vif_cols = engine.columns(varying)
    # With no more rows than the full model has parameters every column looks
    # collinear: its diagnostics are withheld rather than shown as aliasing.
    few_rows = design.n <= len(vif_cols) + 1
    full_vif = None if few_rows else vif(summary, vif_cols)
    covariates: dict[str, CovariateEvidence] = {}
    dropped_fits: dict[str, Fit] = {}
    x_cols = list(design.exposure_index)
    gvif_full = (
        gvif(summary, x_cols, [j for j in vif_cols if j not in x_cols])
        if design.multilevel and not few_rows
        else None
    )
    for c in added_nodes:
        block = design.blocks[c]
        with_c = engine.fit((c,))
        added_cmp = compare(
            with_c, crude, near_zero=near_zero, se_ratio_parts=_se_parts(engine, (c,), ())
        )
        dropped_cmp = None
        without: Fit | None = None
        v = tol = aux = g = g_root = None
        if c in cands:
            rest = tuple(t for t in cands if t != c)
            without = engine.fit(rest)
            dropped_fits[c] = without
            parts = None if c in constant else _se_parts(engine, cands, rest)
            dropped_cmp = compare(full, without, near_zero=near_zero, se_ratio_parts=parts)
        if c in cands and c not in constant and full_vif is not None:
            v, tol, aux, g, g_root = _vif_figures(summary, block, full_vif, vif_cols)
        joint = None
        if design.multilevel:
            g_added = 1.0 if c in constant else gvif(summary, x_cols, list(block.index))
            joint = joint_summary(
                with_c,
                crude,
                full if without is not None else None,
                without,
                compare=functools.partial(compare, near_zero=near_zero),
                exposure_columns=design.exposure_columns,
                gvif_added=g_added,
                gvif_full=gvif_full,
            )
            added_cmp, dropped_cmp = _headline(engine, joint, c, cands, near_zero)
            # The block's GVIF^(1/df) is the value a VIF guide reads (DESIGN §2).
            vif_x = g_added ** (1.0 / design.exposure_width)
        else:
            # On a constant, the exposure's auxiliary R² is 0 (the intercept absorbs it).
            vif_x = 1.0 if c in constant else float(vif(summary, [0, *block.index])[0])
        own = _own(with_c, block.columns)
        covariates[c] = CovariateEvidence(
            node=c,
            added=added_cmp,
            dropped=dropped_cmp,
            vif_exposure_added=vif_x,
            vif=v,
            tolerance=tol,
            aux_r2=aux,
            gvif=g,
            gvif_root=g_root,
            df=block.df,
            r2_exposure=1.0 - 1.0 / vif_x,
            own_coef=own[0],
            own_se=own[1],
            own_ci=own[2],
            se_ratio_parts=added_cmp.se_ratio_parts,
            joint=joint,
        )

    report = collinearity_report(
        summary,
        [] if few_rows else vif_cols,
        [] if few_rows else [design.column_names[j] for j in vif_cols],
        []
        if few_rows
        else [design.exposure_node] * design.exposure_width
        + [n for n in varying for _ in design.blocks[n].index],
        index_threshold=index_threshold,
        proportion_threshold=proportion_threshold,
    )
    aliases = (
        () if few_rows else engine.aliased([t for t in [*cands, *added_nodes] if t not in constant])
    )
    warnings = [*design.messages, *(f.message + "." for f in aliases)]
    if few_rows:
        warnings.append(
            f"The analytic sample has {design.n} rows, no more than the {len(vif_cols) + 1} "
            "parameters of the full model: the full model, the models that drop one covariate "
            "from it and its collinearity diagnostics cannot be estimated. Load more data or "
            "consider fewer candidate covariates."
        )
    warnings.extend(engine.model_family.cautions)
    return EvidenceTable(
        family=engine.family,
        crude=crude,
        full=full,
        covariates=covariates,
        sets={name: engine.fit(tuple(v)) for name, v in sets.items()},
        collinearity=report,
        aliased=aliases,
        candidates=cands,
        warnings=tuple(warnings),
        dropped_fits=dropped_fits,
    )
