"""Evidence for a multi-level categorical exposure: one comparison per contrast.

A categorical exposure with k + 1 levels enters every comparison model as a
block of k treatment contrasts against its reference level.  For each
covariate, :func:`joint_summary` compares every contrast with and
without the covariate (change in estimate and SE inflation, DESIGN §2) and
gathers a joint summary: the contrast that moved most and by how much, the
exposure block's generalized VIF (Fox & Monette 1992) in crude + C and in
the full model, and the Wald test of the whole block in crude + C.

References
----------
Fox J, Monette G (1992). Generalized collinearity diagnostics. *Journal of
the American Statistical Association* 87:178–183.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from covariscope.analysis.distributions import chi2_sf, f_sf
from covariscope.analysis.families import family_of
from covariscope.analysis.fits import Fit
from covariscope.vocabulary import change_read

if TYPE_CHECKING:  # evidence imports this module
    from covariscope.analysis.evidence import Comparison

__all__ = [
    "BlockWald",
    "ContrastShift",
    "ExposureJoint",
    "block_wald",
    "headline_estimates",
    "joint_summary",
    "moved_most",
]


@dataclass(frozen=True)
class BlockWald:
    """The Wald test that every contrast of the exposure block is zero.

    ``kind`` is ``"F"`` (the Wald χ² over its df, on (df, residual df)) for a
    linear model, else ``"chi2"``.
    """

    stat: float
    df: int
    p: float
    kind: str = "chi2"


@dataclass(frozen=True)
class ContrastShift:
    """One contrast's comparisons for one covariate: ``added`` (crude + C
    against crude) and ``dropped`` (full against full − C, candidates only)."""

    level: str
    added: Comparison
    dropped: Comparison | None


@dataclass(frozen=True)
class ExposureJoint:
    """The joint summary of a multi-level exposure's contrasts for one covariate.

    ``moved_most`` names the contrast whose change in estimate (on the scale
    the change guide reads) is largest in absolute value across both
    comparisons; ``largest_change_pct`` is that change (signed, None when no
    change is defined).  ``gvif_root_added`` / ``gvif_root_full`` are the
    exposure block's GVIF^(1/(2·df)) in crude + C and in the full model;
    ``wald`` tests the block in crude + C.
    """

    contrasts: tuple[ContrastShift, ...]
    moved_most: str
    largest_change_pct: float | None
    gvif_root_added: float | None
    gvif_root_full: float | None
    wald: BlockWald | None
    df: int


def block_wald(fit: Fit, columns: Sequence[str]) -> BlockWald | None:
    """Wald test of H0: every coefficient of ``columns`` is zero, from the fit's covariance.

    W = b' V⁻¹ b on χ²(k); a linear model reports F = W / k on (k, residual
    df).  None when the fit failed or lacks one of the columns.

    >>> fit = Fit("logistic", (), 0.5, 0.1, (0.3, 0.7), 100, cov_columns=("x[b]", "x[c]"),
    ...           cov=np.diag([0.01, 0.04]), term_coefs={"x[c]": (0.4, 0.2, 0.0, 0.8)})
    >>> round(block_wald(fit, ("x[b]", "x[c]")).stat, 2)
    29.0
    """
    cols = tuple(columns)
    V = fit.covariance(cols)
    values = [fit.coefficient(c) for c in cols]
    if not fit.ok or V is None or any(v is None for v in values):
        return None
    b = np.array([float(v) for v in values if v is not None])
    try:
        chi2 = float(b @ np.linalg.solve(V, b))
    except np.linalg.LinAlgError:
        return None
    k = len(cols)
    if family_of(fit.family).least_squares and fit.df_resid:
        f = chi2 / k
        return BlockWald(f, k, f_sf(f, k, fit.df_resid), "F")
    return BlockWald(chi2, k, chi2_sf(chi2, k))


def _read(cmp: Comparison, ratio: bool) -> float | None:
    change = cmp.change_pct if cmp.change_defined else None
    return change_read(change, cmp.change_pct_ratio, ratio=ratio)


def joint_summary(
    with_added: Fit,
    without_added: Fit,
    with_dropped: Fit | None,
    without_dropped: Fit | None,
    *,
    compare: Callable[[Fit, Fit], Comparison],
    exposure_columns: Sequence[str],
    gvif_added: float | None,
    gvif_full: float | None,
) -> ExposureJoint:
    """Compare every contrast (``compare`` is the change-in-estimate rule) and summarise them.

    ``with_*``/``without_*`` are the fits of each comparison (the dropped pair
    None for a covariate outside the full model); ``gvif_*`` the exposure
    block's GVIF in crude + C and in the full model.

    >>> from covariscope.analysis.evidence import compare
    >>> def fit(b1, b2):
    ...     f = Fit("linear", (), b1, 0.1, (b1 - 0.2, b1 + 0.2), 100,
    ...             term_coefs={"x[c]": (b2, 0.1, b2 - 0.2, b2 + 0.2)})
    ...     return f.with_contrasts(("x[b]", "x[c]"), ("b vs a", "c vs a"))
    >>> j = joint_summary(fit(1.0, 2.4), fit(1.0, 2.0), None, None, compare=compare,
    ...                   exposure_columns=("x[b]", "x[c]"), gvif_added=1.0, gvif_full=None)
    >>> j.moved_most, round(j.largest_change_pct)
    ('c vs a', 20)
    """
    ratio = family_of(with_added.family).ratio
    shifts: list[ContrastShift] = []
    best: tuple[float, str, float | None] | None = None
    levels = [c.level for c in with_added.contrasts] or [c.level for c in without_added.contrasts]
    for level in levels:
        added = compare(with_added.for_contrast(level), without_added.for_contrast(level))
        dropped = None
        if with_dropped is not None and without_dropped is not None:
            dropped = compare(with_dropped.for_contrast(level), without_dropped.for_contrast(level))
        shifts.append(ContrastShift(level, added, dropped))
        for cmp in (added, dropped):
            value = None if cmp is None else _read(cmp, ratio)
            size = -1.0 if value is None else abs(value)
            if best is None or size > best[0]:
                best = (size, level, value)
    k = len(exposure_columns)
    return ExposureJoint(
        contrasts=tuple(shifts),
        moved_most=best[1] if best is not None else (levels[0] if levels else ""),
        largest_change_pct=best[2] if best is not None else None,
        gvif_root_added=_root(gvif_added, k),
        gvif_root_full=_root(gvif_full, k),
        wald=block_wald(with_added, exposure_columns),
        df=k,
    )


def _root(g: float | None, df: int) -> float | None:
    """GVIF^(1/(2·df)), comparable across terms of different df (Fox & Monette 1992)."""
    if g is None or not math.isfinite(g) or g <= 0:
        return None
    return float(g ** (1.0 / (2 * df)))


def moved_most(fit: Fit, crude: Fit, compare: Callable[[Fit, Fit], Comparison]) -> str | None:
    """The contrast whose estimate moves most from the crude model to ``fit``
    (largest absolute change on the scale the change guide reads); None when
    neither fit has contrasts or no change is defined."""
    ratio = family_of(fit.family).ratio
    best: tuple[float, str] | None = None
    for c in fit.contrasts:
        value = _read(compare(fit.for_contrast(c.level), crude.for_contrast(c.level)), ratio)
        if value is not None and (best is None or abs(value) > best[0]):
            best = (abs(value), c.level)
    return None if best is None else best[1]


def headline_estimates(
    estimates: Mapping[str, Fit | None],
    compare: Callable[[Fit, Fit], Comparison],
    main: Sequence[str] = ("recommended", "proposed", "full"),
) -> dict[str, Fit | None]:
    """Each model's estimate seen from the contrast that moved most from the crude one.

    The crude estimate itself shows the contrast chosen for the first of
    ``main`` that was fitted, so the crude and adjusted estimates read side
    by side; every fit keeps all its contrasts in :attr:`Fit.contrasts`.
    """
    crude = estimates.get("crude")
    out = dict(estimates)
    if crude is None or not crude.contrasts:
        return out
    for key, fit in estimates.items():
        if key != "crude" and fit is not None and fit.contrasts:
            level = moved_most(fit, crude, compare)
            out[key] = fit.for_contrast(level) if level is not None else fit
    for key in main:
        fit = out.get(key)
        if fit is not None and fit.ok and fit.contrast:
            out["crude"] = crude.for_contrast(fit.contrast)
            break
    return out
