"""What collinearity does to two coefficients, in numbers a picture can draw.

When two covariates are collinear, the data pin down the effect they carry
together (the sum of their coefficients) far better than its split between
them: the joint confidence region of the two coefficients is a long, thin
ellipse lying along a line of constant sum, and the interval of the sum is
much narrower than either coefficient's own interval.

The joint region is the Wald confidence ellipse
``(b − b̂)' V⁻¹ (b − b̂) ≤ c`` with ``V`` the 2 × 2 covariance block of the
two coefficients in the fitted model and ``c`` the 95 % point of χ²(2), or
``2·F(2, df)`` for a linear model (Draper & Smith 1998, *Applied Regression
Analysis*, 3rd ed., §5.5, confidence regions).  Its axes lie along the
eigenvectors of ``V``, with half-lengths ``√(c·λ)``.  The sum ``a'b`` with
``a = (1, 1)`` has standard error ``√(a'Va)`` (the variance of a linear
combination of estimates).

Covariates measured in different units, or correlated negatively, do not
share a "sum": what they carry together is the effect of moving both as
they move together in the data.  So each coefficient is put on the scale
of one standard deviation of its column, with the sign of that column's
correlation with the first member's (:func:`collinearity_pictures`); the
"sum" is then the sum of these signed per-SD coefficients, ``a'b`` with
``aᵢ = ±SDᵢ``.  Two covariates in the same units that rise together keep
a plain sum up to one common factor.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from itertools import combinations

import numpy as np

from covariscope.analysis.design import Design
from covariscope.analysis.distributions import chi2_ppf, f_ppf, norm_ppf, t_ppf
from covariscope.analysis.families import family_of
from covariscope.analysis.fits import Fit

__all__ = [
    "CollinearityPicture",
    "JointRegion",
    "SumInterval",
    "collinearity_picture",
    "collinearity_pictures",
]

#: points on the outline of each ellipse
OUTLINE_POINTS = 121


@dataclass(frozen=True)
class JointRegion:
    """The joint confidence ellipse of two coefficients.

    ``axes`` are the half-lengths (major first), ``directions`` the unit
    vectors of the axes (rows, major first): the eigen-decomposition of the
    covariance block scaled by the critical value.  ``outline`` holds
    :data:`OUTLINE_POINTS` points (x, y) on the ellipse, for drawing.
    """

    members: tuple[str, str]
    center: tuple[float, float]
    cov: tuple[tuple[float, float], tuple[float, float]]
    axes: tuple[float, float]
    directions: tuple[tuple[float, float], tuple[float, float]]
    critical: float
    correlation: float
    outline: tuple[tuple[float, float], ...]

    @property
    def total(self) -> float:
        """The sum of the two estimates: the line ``x + y = total`` runs through the centre."""
        return self.center[0] + self.center[1]


@dataclass(frozen=True)
class SumInterval:
    """The sum of the members' coefficients and each one's own estimate.

    ``own`` holds (coefficient, SE, low, high) per member, in member order.
    """

    members: tuple[str, ...]
    estimate: float
    se: float
    ci: tuple[float, float]
    own: tuple[tuple[float, float, float, float], ...]

    @property
    def width(self) -> float:
        return self.ci[1] - self.ci[0]

    @property
    def narrowest_own_width(self) -> float:
        return min(hi - lo for _, _, lo, hi in self.own)

    @property
    def width_ratio(self) -> float:
        """How many times narrower the sum's interval is than the narrowest own one."""
        return self.narrowest_own_width / self.width if self.width > 0 else math.inf


@dataclass(frozen=True)
class CollinearityPicture:
    """The joint regions (one per pair of members) and the interval of the sum.

    ``members`` are node ids (the exposure's id when it is one of them);
    ``columns`` their design columns; ``level`` the confidence level.
    """

    members: tuple[str, ...]
    columns: tuple[str, ...]
    pairs: tuple[JointRegion, ...]
    total: SumInterval
    level: float
    family: str
    #: the multiplier aᵢ of each member's coefficient (±SD; 1 for raw coefficients)
    scale: tuple[float, ...] = ()

    @property
    def per_sd(self) -> bool:
        """True when the coefficients are shown per SD of their column."""
        return any(a != 1.0 for a in self.scale)


def _critical(fit: Fit, level: float) -> tuple[float, float]:
    """(critical value of the 2-d Wald region, two-sided quantile for one interval)."""
    if family_of(fit.family).least_squares and fit.df_resid:
        df = fit.df_resid
        return (
            2.0 * float(f_ppf(level, 2, df)),
            float(t_ppf(0.5 + level / 2.0, df)),
        )
    return float(chi2_ppf(level, 2)), float(norm_ppf(0.5 + level / 2.0))


def _region(
    members: tuple[str, str], center: np.ndarray, cov: np.ndarray, critical: float
) -> JointRegion:
    values, vectors = np.linalg.eigh(cov)  # ascending
    order = [1, 0]
    half = np.sqrt(critical * np.clip(values[order], 0.0, None))
    dirs = vectors[:, order].T
    angle = np.linspace(0.0, 2.0 * math.pi, OUTLINE_POINTS)
    points = (
        center
        + (np.cos(angle)[:, None] * half[0] * dirs[0])
        + (np.sin(angle)[:, None] * half[1] * dirs[1])
    )
    sd = np.sqrt(np.diag(cov))
    return JointRegion(
        members=members,
        center=(float(center[0]), float(center[1])),
        cov=((float(cov[0, 0]), float(cov[0, 1])), (float(cov[1, 0]), float(cov[1, 1]))),
        axes=(float(half[0]), float(half[1])),
        directions=(
            (float(dirs[0, 0]), float(dirs[0, 1])),
            (float(dirs[1, 0]), float(dirs[1, 1])),
        ),
        critical=critical,
        correlation=float(cov[0, 1] / (sd[0] * sd[1])),
        outline=tuple((float(x), float(y)) for x, y in points),
    )


def collinearity_picture(
    fit: Fit,
    members: Sequence[tuple[str, str]],
    *,
    scale: Sequence[float] | None = None,
    level: float = 0.95,
) -> CollinearityPicture | None:
    """The joint confidence regions of the members' coefficients and the interval of their sum.

    Parameters
    ----------
    fit : Fit
        A fitted model that holds every member (the full model), with its
        coefficient covariance matrix.
    members : sequence of (node id, design column)
        Two or more single-column terms (the exposure's column may be one).
    scale : sequence of float, optional
        The multiplier ``aᵢ`` of each coefficient (default 1): the picture
        shows ``aᵢ·bᵢ`` with covariance ``D V D`` (``D = diag(a)``) and the
        sum ``a'b`` with standard error ``√(a'Va)``.
    level : float
        Confidence level of the regions and intervals.

    Returns
    -------
    CollinearityPicture or None
        None when the fit failed, kept no covariance, or lacks a member.

    Examples
    --------
    >>> fit = Fit("logistic", ("a", "b"), 0.2, 0.1, (0.0, 0.4), 500,
    ...           term_coefs={"a": (0.5, 0.4, -0.28, 1.28), "b": (0.5, 0.4, -0.28, 1.28)},
    ...           cov_columns=("x", "a", "b"),
    ...           cov=np.array([[0.01, 0, 0], [0, 0.16, -0.15], [0, -0.15, 0.16]]))
    >>> pic = collinearity_picture(fit, [("a", "a"), ("b", "b")])
    >>> round(pic.total.estimate, 2), round(pic.total.se, 3)
    (1.0, 0.141)
    >>> round(pic.pairs[0].correlation, 2)
    -0.94
    """
    if not fit.ok or len(members) < 2:
        return None
    nodes = tuple(m for m, _ in members)
    columns = tuple(c for _, c in members)
    cov = fit.covariance(columns)
    coefs = [fit.coefficient(c) for c in columns]
    if cov is None or any(b is None or not math.isfinite(b) for b in coefs):
        return None
    if not np.all(np.isfinite(cov)):
        return None
    a = np.ones(len(nodes)) if scale is None else np.asarray(scale, dtype=float)
    b = a * np.array(coefs, dtype=float)
    cov = cov * np.outer(a, a)
    critical, quantile = _critical(fit, level)
    pairs = tuple(
        _region((nodes[i], nodes[j]), b[[i, j]], cov[np.ix_([i, j], [i, j])], critical)
        for i, j in combinations(range(len(nodes)), 2)
    )
    ones = np.ones(len(nodes))
    total = float(ones @ b)
    se = math.sqrt(max(float(ones @ cov @ ones), 0.0))
    sds = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    own = tuple(
        (float(bi), float(si), float(bi - quantile * si), float(bi + quantile * si))
        for bi, si in zip(b, sds, strict=True)
    )
    return CollinearityPicture(
        members=nodes,
        columns=columns,
        pairs=pairs,
        total=SumInterval(nodes, total, se, (total - quantile * se, total + quantile * se), own),
        level=level,
        family=fit.family,
        scale=tuple(float(v) for v in a),
    )


def collinearity_pictures(
    full: Fit,
    design: Design,
    groups: Sequence[Sequence[str]],
    exposure_aliases: Sequence[str] = (),
    *,
    level: float = 0.95,
) -> tuple[CollinearityPicture, ...]:
    """One picture per collinear group, and one per near-alias of the exposure.

    Only single-column terms take part (the sum of a categorical term's
    level coefficients means nothing); a group left with fewer than two such
    members gets no picture.  ``exposure_aliases`` are covariates so
    collinear with the exposure that its own estimate is at stake: each is
    drawn with the exposure, both from ``full``.  Coefficients are per SD
    of their column, signed by the column's correlation with the first
    member's (see the module notes).
    """
    wanted: list[list[tuple[str, str]]] = []
    for group in groups:
        single = [
            (m, design.blocks[m].columns[0])
            for m in group
            if m in design.blocks and design.blocks[m].df == 1
        ]
        if len(single) >= 2:
            wanted.append(single)
    for c in exposure_aliases:
        if c in design.blocks and design.blocks[c].df == 1:
            wanted.append(
                [(design.exposure_node, design.exposure_name), (c, design.blocks[c].columns[0])]
            )
    pictures = (
        collinearity_picture(full, members, scale=_signed_sd(design, members), level=level)
        for members in wanted
    )
    return tuple(p for p in pictures if p is not None)


def _signed_sd(design: Design, members: Sequence[tuple[str, str]]) -> list[float]:
    index = {name: j for j, name in enumerate(design.column_names)}
    values = design.values[:, [index[c] for _, c in members]]
    sd = values.std(axis=0)
    first = values[:, 0] - values[:, 0].mean()
    signs = [1.0 if float(first @ (v - v.mean())) >= 0 else -1.0 for v in values.T]
    return [float(s * d) for s, d in zip(signs, sd, strict=True)]
