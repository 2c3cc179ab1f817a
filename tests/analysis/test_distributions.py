"""The distribution functions equal scipy.stats (the reference) to rounding."""

from __future__ import annotations

import pytest
import scipy.stats as st

from covariscope.analysis import distributions as d

DFS = [1, 2, 5, 30, 1000, 1e6]


@pytest.mark.parametrize("df", DFS)
def test_quantiles_equal_scipy_stats(df: float) -> None:
    # Reference: scipy.stats t, chi2, F ppf.
    for p in (0.9, 0.95, 0.975, 0.9999):
        assert d.t_quantile(p, df) == pytest.approx(st.t.ppf(p, df), rel=1e-12)
        assert d.chi2_quantile(p, df) == pytest.approx(st.chi2.ppf(p, df), rel=1e-12)
        assert d.f_quantile(p, df, 50) == pytest.approx(st.f.ppf(p, df, 50), rel=1e-12)
    assert d.normal_quantile(0.975) == pytest.approx(st.norm.ppf(0.975), rel=1e-15)


@pytest.mark.parametrize("df", DFS)
def test_tail_areas_equal_scipy_stats(df: float) -> None:
    # Reference: scipy.stats t, chi2, F sf.
    for x in (0.01, 1.0, 3.0, 40.0):
        assert d.t_sf(x, df) == pytest.approx(st.t.sf(x, df), rel=1e-12)
        assert d.chi2_sf(x, df) == pytest.approx(st.chi2.sf(x, df), rel=1e-12)
        assert d.f_sf(x, df, 50) == pytest.approx(st.f.sf(x, df, 50), rel=1e-12)
