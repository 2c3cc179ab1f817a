"""E-values for unmeasured confounding (VanderWeele & Ding 2017).

The E-value is the minimum strength of association, on the risk-ratio
scale, that an unmeasured confounder would need with both the exposure and
the outcome, beyond the measured covariates, to explain away an estimate.
For a risk ratio RR > 1 it is ``RR + sqrt(RR × (RR − 1))``; an estimate below 1
is inverted first.  For a confidence interval the limit nearer the null is
used, and the E-value is 1 when the interval includes the null.

Other effect measures are first converted to an approximate risk ratio, and
the conversion used is reported in plain words:

- odds ratio, rare outcome (under 15% — VanderWeele & Ding 2017, from memory):
  taken as a risk ratio;
- odds ratio, common outcome: ``sqrt(OR)`` (VanderWeele 2017);
- hazard ratio, rare outcome: taken as a risk ratio;
- hazard ratio, common outcome: ``(1 − 0.5^sqrt(HR)) / (1 − 0.5^sqrt(1/HR))``
  (VanderWeele's published conversion, from memory);
- mean difference: standardised mean difference ``d`` = difference / SD of
  the outcome, then ``RR ≈ exp(0.91 × d)`` (VanderWeele & Ding 2017,
  after Hasselblad & Hedges 1995).

References
----------
VanderWeele TJ, Ding P. Sensitivity analysis in observational research:
introducing the E-value. Annals of Internal Medicine 2017;167:268–274.

VanderWeele TJ. On a square-root transformation of the odds ratio for a
common outcome. Epidemiology 2017;28:e58–e60.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from covariscope.analysis.families import family_of

if TYPE_CHECKING:
    from covariscope.analysis.design import Design
    from covariscope.analysis.fits import Fit

__all__ = [
    "COMMON_OUTCOME_PREVALENCE",
    "EValue",
    "as_risk_ratio",
    "evalue",
    "evalue_for_estimate",
    "evalue_for_fit",
]

#: Outcome prevalence from which an outcome counts as common (VanderWeele &
#: Ding 2017 use 15%; from memory).
COMMON_OUTCOME_PREVALENCE = 0.15


@dataclass(frozen=True)
class EValue:
    """E-value of an estimate and of its confidence limit nearer the null.

    ``rr`` and ``rr_ci`` are the (approximate) risk ratios the E-values were
    computed from; ``conversion`` says in plain words how they were obtained.
    """

    estimate: float
    ci: float
    rr: float
    rr_ci: tuple[float, float]
    conversion: str


def evalue(rr: float) -> float:
    """E-value of a risk ratio (VanderWeele & Ding 2017).

    Parameters
    ----------
    rr : float
        A positive risk ratio; values below 1 are inverted first.

    Examples
    --------
    >>> round(evalue(3.9), 2)
    7.26
    >>> round(evalue(1 / 3.9), 2)
    7.26
    >>> evalue(1.0)
    1.0
    """
    if not (rr > 0 and math.isfinite(rr)):
        raise ValueError(f"a risk ratio must be positive and finite, not {rr!r}")
    if rr < 1:
        rr = 1 / rr
    return rr + math.sqrt(rr * (rr - 1))


def _limit_evalue(lo: float, hi: float) -> float:
    """E-value of the confidence limit nearer the null (1 if the interval covers it)."""
    if lo <= 1 <= hi:
        return 1.0
    return evalue(lo if lo > 1 else hi)


def as_risk_ratio(
    value: float,
    measure: str,
    *,
    common_outcome: bool = False,
    outcome_sd: float | None = None,
) -> tuple[float, str]:
    """Convert an estimate to an approximate risk ratio; return it with the
    conversion used, in plain words.

    ``value`` is the ratio itself for ratio measures (not its logarithm) and
    the mean difference for ``"mean difference"``.

    Examples
    --------
    >>> rr, how = as_risk_ratio(4.0, "odds ratio", common_outcome=True)
    >>> rr, how
    (2.0, 'odds ratio of a common outcome (15% or more) converted by its square root')
    """
    if measure in ("risk ratio", "rate ratio"):
        return value, f"{measure} used as it is"
    if measure == "odds ratio":
        if common_outcome:
            return math.sqrt(value), (
                "odds ratio of a common outcome (15% or more) converted by its square root"
            )
        return value, "odds ratio of a rare outcome (under 15%) taken as a risk ratio"
    if measure == "hazard ratio":
        if common_outcome:
            rr = (1 - 0.5 ** math.sqrt(value)) / (1 - 0.5 ** math.sqrt(1 / value))
            return rr, (
                "hazard ratio of a common outcome (15% or more) converted by "
                "(1 − 0.5^√HR) / (1 − 0.5^√(1/HR))"
            )
        return value, "hazard ratio of a rare outcome (under 15%) taken as a risk ratio"
    if measure == "mean difference":
        if outcome_sd is None or not (outcome_sd > 0):
            raise ValueError("a mean difference needs the outcome's standard deviation")
        d = value / outcome_sd
        return math.exp(0.91 * d), (
            f"mean difference standardised by the outcome SD ({outcome_sd:.3g}) "
            "and converted by RR ≈ exp(0.91 × d)"
        )
    raise ValueError(f"unknown effect measure {measure!r}")


def evalue_for_estimate(
    estimate: float,
    ci: tuple[float, float],
    measure: str,
    *,
    common_outcome: bool = False,
    outcome_sd: float | None = None,
) -> EValue:
    """E-values of an estimate and of its CI limit nearer the null.

    Parameters
    ----------
    estimate, ci : float, (float, float)
        The ratio and its CI for ratio measures; the mean difference and its
        CI for ``"mean difference"``.
    measure : str
        ``"risk ratio"``, ``"rate ratio"``, ``"odds ratio"``, ``"hazard ratio"``
        or ``"mean difference"``.
    common_outcome : bool
        For odds and hazard ratios: the outcome occurs in 15% or more.
    outcome_sd : float, optional
        For a mean difference: the outcome's standard deviation.

    Examples
    --------
    The worked example of VanderWeele & Ding (2017): RR 3.9 (1.8 to 8.7).

    >>> e = evalue_for_estimate(3.9, (1.8, 8.7), "risk ratio")
    >>> round(e.estimate, 2), round(e.ci, 2)
    (7.26, 3.0)
    """
    rr, how = as_risk_ratio(estimate, measure, common_outcome=common_outcome, outcome_sd=outcome_sd)
    lo, _ = as_risk_ratio(ci[0], measure, common_outcome=common_outcome, outcome_sd=outcome_sd)
    hi, _ = as_risk_ratio(ci[1], measure, common_outcome=common_outcome, outcome_sd=outcome_sd)
    lo, hi = min(lo, hi), max(lo, hi)
    return EValue(evalue(rr), _limit_evalue(lo, hi), rr, (lo, hi), how)


def evalue_for_fit(
    fit: Fit | None, design: Design, measure: str
) -> tuple[EValue | None, str | None]:
    """E-value of a fitted model's exposure estimate, with the conversion its
    family needs (VanderWeele & Ding 2017).

    For odds and hazard ratios the share of rows with the event decides
    between the rare- and the common-outcome conversion; for a mean
    difference the outcome's standard deviation in the analytic sample
    standardises it.  Returns the E-value, or None with a plain reason when
    it cannot be computed (None, None when the fit does not apply).
    """
    if fit is None or not fit.ok:
        return None, None
    try:
        fam = family_of(fit.family)
        if fam.ratio:
            ratio, ratio_ci = fit.ratio, fit.ratio_ci
            assert ratio is not None
            assert ratio_ci is not None
            share = None
            if fam.survival and design.event is not None:
                share = float(np.mean(design.event))
            elif design.y is not None:
                share = float(np.mean(design.y > 0))
            elif design.row_stats is not None and design.n > 0:
                share = design.row_stats.outcome_positive / design.n
            common = share is not None and share >= COMMON_OUTCOME_PREVALENCE
            return evalue_for_estimate(ratio, ratio_ci, measure, common_outcome=common), None
        if fam.least_squares and design.y is not None and len(design.y) > 1:
            sd = float(np.std(design.y, ddof=1))
            return evalue_for_estimate(fit.coef, fit.ci, "mean difference", outcome_sd=sd), None
        if fam.least_squares and design.row_stats is not None and design.n > 1:
            sd = math.sqrt(float(design.row_stats.summary.comoment[-1, -1]) / (design.n - 1))
            return evalue_for_estimate(fit.coef, fit.ci, "mean difference", outcome_sd=sd), None
    except (ValueError, ZeroDivisionError, OverflowError) as exc:
        return None, f"The E-value could not be computed: {exc}."
    return None, None
