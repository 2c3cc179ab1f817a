"""Quantiles and tail areas of the t, normal, chi-squared and F distributions.

The same special functions :mod:`scipy.stats` evaluates for these four
distributions (Cephes, through :mod:`scipy.special`), without importing
:mod:`scipy.stats`, which takes seconds to import and would be paid by
every ``check``.  The tests compare each with :mod:`scipy.stats`.

>>> round(t_ppf(0.975, 10), 4), round(norm_ppf(0.975), 4)
(2.2281, 1.96)
>>> round(chi2_sf(3.841458820694124, 1), 4), round(f_sf(4.964602743730711, 1, 10), 4)
(0.05, 0.05)
"""

from __future__ import annotations

from scipy import special

__all__ = ["chi2_ppf", "chi2_sf", "f_ppf", "f_sf", "norm_ppf", "t_ppf", "t_sf"]


def t_ppf(p: float, df: float) -> float:
    """Quantile of Student's t with ``df`` degrees of freedom."""
    return float(special.stdtrit(df, p))


def t_sf(x: float, df: float) -> float:
    """Upper tail area of Student's t, P(T > x)."""
    return float(special.stdtr(df, -x))


def norm_ppf(p: float) -> float:
    """Quantile of the standard normal distribution."""
    return float(special.ndtri(p))


def chi2_sf(x: float, df: float) -> float:
    """Upper tail area of the chi-squared distribution, P(X > x)."""
    return float(special.chdtrc(df, x))


def chi2_ppf(p: float, df: float) -> float:
    """Quantile of the chi-squared distribution."""
    return float(special.chdtri(df, 1.0 - p))


def f_sf(x: float, dfn: float, dfd: float) -> float:
    """Upper tail area of the F distribution, P(F > x)."""
    return float(special.fdtrc(dfn, dfd, x))


def f_ppf(p: float, dfn: float, dfd: float) -> float:
    """Quantile of the F distribution."""
    return float(special.fdtri(dfn, dfd, p))
