"""Quantiles and tail areas of the t, normal, χ² and F distributions.

These are the functions behind every interval and p-value of the analysis,
computed by the same Cephes/Boost routines of ``scipy.special`` that
``scipy.stats`` calls for these distributions (``stdtrit``, ``stdtr``,
``ndtri``, ``chdtrc``, ``chdtri``, ``fdtrc``, ``fdtri``), so the numbers are
the same; ``scipy.special`` loads in a fraction of the time ``scipy.stats``
takes, which a command-line run pays at every start.
"""

from __future__ import annotations

from scipy import special

__all__ = [
    "chi2_quantile",
    "chi2_sf",
    "f_quantile",
    "f_sf",
    "normal_quantile",
    "t_quantile",
    "t_sf",
]


def t_quantile(p: float, df: float) -> float:
    """Quantile of Student's t with ``df`` degrees of freedom (= scipy.stats.t.ppf).

    >>> round(t_quantile(0.975, 10), 6)
    2.228139
    """
    return float(special.stdtrit(df, p))


def t_sf(x: float, df: float) -> float:
    """Upper tail P(T > x) of Student's t (= scipy.stats.t.sf).

    >>> round(t_sf(2.228139, 10), 6)
    0.025
    """
    return float(special.stdtr(df, -x))


def normal_quantile(p: float) -> float:
    """Quantile of the standard normal distribution (= scipy.stats.norm.ppf).

    >>> round(normal_quantile(0.975), 6)
    1.959964
    """
    return float(special.ndtri(p))


def chi2_sf(x: float, df: float) -> float:
    """Upper tail P(X > x) of χ² with ``df`` degrees of freedom (= scipy.stats.chi2.sf).

    >>> round(chi2_sf(3.841459, 1), 6)
    0.05
    """
    return float(special.chdtrc(df, x))


def chi2_quantile(p: float, df: float) -> float:
    """Quantile of χ² with ``df`` degrees of freedom (= scipy.stats.chi2.ppf).

    >>> round(chi2_quantile(0.95, 2), 6)
    5.991465
    """
    return float(special.chdtri(df, 1.0 - p))


def f_sf(x: float, dfn: float, dfd: float) -> float:
    """Upper tail P(F > x) of F with (``dfn``, ``dfd``) degrees of freedom (= scipy.stats.f.sf).

    >>> round(f_sf(4.964603, 1, 10), 6)
    0.05
    """
    return float(special.fdtrc(dfn, dfd, x))


def f_quantile(p: float, dfn: float, dfd: float) -> float:
    """Quantile of F with (``dfn``, ``dfd``) degrees of freedom (= scipy.stats.f.ppf).

    >>> round(f_quantile(0.95, 1, 10), 6)
    4.964603
    """
    return float(special.fdtri(dfn, dfd, p))
