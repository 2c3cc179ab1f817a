"""The residual-confounding check: a continuous confounder linear or as a spline.

A continuous confounder entered linearly when its effect on the outcome is
curved leaves residual confounding that no change-in-estimate comparison
between covariates can see.  The check compares the exposure estimate of the
recommended model with the confounder entered linearly and as a natural
cubic spline (:mod:`covariscope.analysis.spline_basis`): a change past the
change guide suggests the spline.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from covariscope.analysis.column_fit import (
    ColumnFit,
    RowsBuffer,
    fit_extra,
    near_or_base,
    reordered,
    start_from,
    takes_start,
)
from covariscope.analysis.column_tables import ExtraModel, Prepared, fit_extra_many, fit_model
from covariscope.analysis.design import Design
from covariscope.analysis.families import family_of
from covariscope.analysis.linear import LinearSummary
from covariscope.analysis.spline_basis import DEFAULT_KNOTS, spline_basis

__all__ = ["ResidualCheck", "residual_confounding", "residual_table"]


@dataclass(frozen=True)
class ResidualCheck:
    """The exposure estimate with a confounder entered linearly and as a spline.

    ``change_pct`` is the change the change guide reads: on the ratio scale,
    ``100 × (exp(b_spline − b_linear) − 1)``, for ratio measures, else
    ``100 × (b_spline − b_linear) / |b_linear|``.
    """

    node: str
    knots: int
    linear: float
    spline: float
    change_pct: float
    flagged: bool
    message: str = ""


def residual_confounding(
    design: Design,
    terms: Sequence[str],
    node: str,
    raw: np.ndarray,
    *,
    knots: int = DEFAULT_KNOTS,
    change_guide: float = 10.0,
    near: ColumnFit | None = None,
    summary: LinearSummary | None = None,
    on_fit: Callable[[], None] | None = None,
    rows: RowsBuffer | None = None,
) -> ResidualCheck:
    """Compare the exposure estimate with ``node`` linear and as a spline.

    Parameters
    ----------
    design : Design
    terms : the model's covariates (``node`` among them)
    node : a continuous covariate
    raw : its values in the design's rows
    knots, change_guide : the spline's knots; the guide past which it is flagged
    near : a fit of exposure + ``terms`` to start from (saves passes over the
        rows of an iterative fit; the result is the same)
    summary : the design's means and co-moments, outcome last: a linear
        model then reads only its own new columns (`fit_extra`)
    on_fit : called before each of the two fits (linear, then spline); what
        it raises stops the check between them
    rows : memory for the models' matrices of the rows, reused from model to
        model (`RowsBuffer`)

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(4)
    >>> c = rng.uniform(-2, 2, 3000); x = c**2 + rng.normal(size=3000)
    >>> y = x + 2 * c**2 + rng.normal(size=3000)
    >>> d = make_design(pd.DataFrame({"x": x, "c": c, "y": y}), exposure=TermSpec("x", "continuous"),
    ...                 covariates={"c": TermSpec("c", "continuous")}, outcome="y", family="linear")
    >>> check = residual_confounding(d, ["c"], "c", c)
    >>> check.flagged, round(check.spline, 1)
    (True, 1.0)
    """
    plan = _spline_model(design, terms, node, raw, knots, near, summary)
    if plan is not None:  # the linear model is ``near`` itself: only the spline is fitted
        for _ in range(2):
            if on_fit is not None:
                on_fit()
        spline = fit_model(design, plan.model, summary=summary, rows=rows, consume=True)
        return plan.result(spline, change_guide)
    nan = float("nan")
    others = [t for t in design.blocks if t in set(terms) and t != node]
    cols = [*design.exposure_index, *(j for t in others for j in design.blocks[t].index)]
    names = [design.column_names[j] for j in cols]
    try:
        basis = spline_basis(raw, knots)
    except ValueError as exc:
        return ResidualCheck(node, knots, nan, nan, nan, False, str(exc))
    block = design.blocks[node]
    # The node's own design column holds the raw values when it enters linearly.
    same = {node: near_value(near, block.columns[0])} if block.raw is None else {}
    lin_names = [*names, node]
    start = None if near is None else start_from(near, lin_names, given=same)
    if on_fit is not None:
        on_fit()
    linear = fit_extra(design, cols, [raw], lin_names, start=start, summary=summary, rows=rows)
    if isinstance(linear, str):
        return ResidualCheck(node, knots, nan, nan, nan, False, linear)
    spl_names = [*names, *(f"{node}[spline {j + 1}]" for j in range(basis.shape[1]))]
    start = None
    if takes_start(design, summary):  # a start costs a least-squares pass over the rows
        start = start_from(linear, spl_names, given=_as_spline(linear, node, raw, basis, spl_names))
    if on_fit is not None:
        on_fit()
    # the basis is not read again: a linear model may centre it where it lies
    spline = fit_extra(
        design, cols, [basis], spl_names, start=start, summary=summary, rows=rows, consume=True
    )
    del basis
    return _compared(
        node, knots, linear, spline, design.exposure_width, design.family, change_guide
    )


def _compared(
    node: str,
    knots: int,
    linear: ColumnFit,
    spline: ColumnFit | str,
    exposure_width: int,
    family: str,
    change_guide: float,
) -> ResidualCheck:
    """The check from the linear and the spline model's fits."""
    if isinstance(spline, str):
        nan = float("nan")
        return ResidualCheck(node, knots, nan, nan, nan, False, spline)
    # A multi-level exposure: the contrast whose estimate moves most is reported.
    pairs = [(float(linear.coef[j]), float(spline.coef[j])) for j in range(exposure_width)]
    b_lin, b_spl, change = max(
        ((a, b, _change(a, b, family)) for a, b in pairs), key=lambda t: abs(t[2])
    )
    return ResidualCheck(node, knots, b_lin, b_spl, change, bool(abs(change) >= change_guide))


def _change(b_lin: float, b_spl: float, family: str) -> float:
    """Change from the linear to the spline form, on the scale the change guide reads."""
    if family_of(family).ratio:
        return 100.0 * math.expm1(b_spl - b_lin)
    return 100.0 * (b_spl - b_lin) / abs(b_lin) if b_lin != 0 else math.inf


def near_value(near: ColumnFit | None, name: str) -> float:
    """The coefficient of column ``name`` in a neighbouring fit (0 when it lacks it)."""
    if near is None or name not in near.names:
        return 0.0
    return float(near.coef[near.names.index(name)])


def _as_spline(
    linear: ColumnFit, node: str, raw: np.ndarray, basis: np.ndarray, names: list[str]
) -> dict[str, float]:
    """Spline coefficients (and intercept shift) that reproduce the linear fit's
    b·raw: a natural cubic spline holds every straight line, so the spline fit
    starts where the linear fit ended."""
    b = near_value(linear, node)
    design = np.column_stack([np.ones(len(raw)), basis])
    # least squares through scipy's QR, which lets go of the interpreter lock
    # (np.linalg.lstsq on the n rows holds it: see fitting_common); the small
    # triangular system then gives the same minimum-norm answer
    q, r = scipy.linalg.qr(design, mode="economic")
    c = np.linalg.lstsq(r, np.dot(q.T, raw), rcond=None)[0]
    given = {"(intercept)": b * float(c[0])}
    given.update(
        {name: b * float(v) for name, v in zip(names[-basis.shape[1] :], c[1:], strict=True)}
    )
    return given


def residual_table(
    design: Design,
    terms: Sequence[str],
    confounders: Sequence[str],
    *,
    knots: Mapping[str, int] | None = None,
    change_guide: float = 10.0,
    near: ColumnFit | None = None,
    summary: LinearSummary | None = None,
    on_fit: Callable[[int, int], None] | None = None,
) -> dict[str, ResidualCheck]:
    """:func:`residual_confounding` for every continuous confounder among ``terms``.

    ``knots`` gives a node's spline knots (:data:`DEFAULT_KNOTS` otherwise);
    a binary or categorical covariate, or one whose column never varies, is
    left out.  Every fit starts from ``near``, the fit of exposure + ``terms``
    (`~covariscope.analysis.column_fit.base_fit`; fitted here when not given).
    With ``summary`` (the design's means and co-moments) a linear model reads
    only its own new columns.  ``on_fit(k, n)`` is called before each of the
    ``n`` models is fitted (the base fit first when it is fitted here, then two
    per confounder: linear, spline; a check that stops early skips its
    numbers); whatever it raises stops the table between two fits (the
    window's cancel).

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(4)
    >>> a, c = rng.normal(size=(2, 800)); x = a + c + rng.normal(size=800)
    >>> d = make_design(pd.DataFrame({"x": x, "a": a, "c": c, "y": x + a + c}),
    ...                 exposure=TermSpec("x", "continuous"), outcome="y", family="linear",
    ...                 covariates={"a": TermSpec("a", "continuous"), "c": TermSpec("c", "continuous")})
    >>> seen = []
    >>> sorted(residual_table(d, ["a", "c"], ["a", "c"], on_fit=lambda k, n: seen.append((k, n))))
    ['a', 'c']
    >>> seen
    [(1, 5), (2, 5), (3, 5), (4, 5), (5, 5)]
    """
    examined = [
        c
        for c in confounders
        if c in terms
        and c in design.blocks
        and not design.blocks[c].levels
        and c not in design.constant
    ]
    near, announce, first = near_or_base(
        design, terms, near, 2 * len(examined), on_fit, summary=summary
    )
    out: dict[str, ResidualCheck] = {}
    rows = RowsBuffer()
    # Nodes whose linear model is ``near`` itself: their spline models are
    # fitted together (`fit_extra_many`); the others one at a time.
    together: list[tuple[int, str, _SplineModel]] = []
    for i, c in enumerate(examined):
        block = design.blocks[c]
        raw = block.raw if block.raw is not None else block.values[:, 0]
        count = (knots or {}).get(c) or DEFAULT_KNOTS
        plan = _spline_model(design, terms, c, raw, count, near, summary)
        if plan is not None:
            together.append((i, c, plan))
            continue
        out[c] = residual_confounding(
            design,
            terms,
            c,
            raw,
            knots=count,
            change_guide=change_guide,
            near=near,
            summary=summary,
            on_fit=_numbered(first + 2 * i, announce),
            rows=rows,
        )
    fits = fit_extra_many(
        design,
        [plan.model for _, _, plan in together],
        summary=summary,
        announce=lambda k: announce(first + 2 * together[k][0] + 1),
        consume=True,
    )
    for (_, c, plan), fitted in zip(together, fits, strict=True):
        out[c] = plan.result(fitted, change_guide)
    return {c: out[c] for c in examined}


@dataclass(frozen=True)
class _SplineModel:
    """A residual check whose linear model is already fitted: the spline model to fit."""

    node: str
    knots: int
    linear: ColumnFit
    model: ExtraModel
    exposure_width: int
    family: str

    def result(self, spline: ColumnFit | str, change_guide: float) -> ResidualCheck:
        """The check, once the spline model is fitted."""
        return _compared(
            self.node,
            self.knots,
            self.linear,
            spline,
            self.exposure_width,
            self.family,
            change_guide,
        )


def _spline_model(
    design: Design,
    terms: Sequence[str],
    node: str,
    raw: np.ndarray,
    knots: int,
    near: ColumnFit | None,
    summary: LinearSummary | None,
) -> _SplineModel | None:
    """The spline model of ``node``'s check when its linear model is ``near``
    itself (a node that enters linearly, an iterative fit), else None."""
    block = design.blocks[node]
    if block.raw is not None or near is None or not takes_start(design, summary):
        return None
    others = [t for t in design.blocks if t in set(terms) and t != node]
    cols = [*design.exposure_index, *(j for t in others for j in design.blocks[t].index)]
    names = [design.column_names[j] for j in cols]
    linear = reordered(near, [*names, node])
    if linear is None:
        return None
    fitted_linear = linear
    spl_names = [*names, *(f"{node}[spline {j + 1}]" for j in range(knots - 1))]

    def prepare() -> Prepared:
        try:
            basis = spline_basis(raw, knots)
        except ValueError as exc:
            return str(exc)
        given = _as_spline(fitted_linear, node, raw, basis, spl_names)
        return [basis], start_from(fitted_linear, spl_names, given=given)

    return _SplineModel(
        node,
        knots,
        linear,
        ExtraModel(tuple(cols), tuple(spl_names), prepare),
        design.exposure_width,
        design.family,
    )


def _numbered(first: int, starting: Callable[[int], None]) -> Callable[[], None]:
    """A call per fit that numbers them on from ``first``."""
    count = itertools.count(first)
    return lambda: starting(next(count))
