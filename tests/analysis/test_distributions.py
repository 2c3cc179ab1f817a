"""The distribution functions against scipy.stats (the reference library)."""

from __future__ import annotations

import pytest
import scipy.stats

from covariscope.analysis import distributions as d

PROBS = [0.001, 0.025, 0.5, 0.9, 0.975, 0.9995]
DFS = [1, 2.5, 7, 30, 1000]


@pytest.mark.parametrize("p", PROBS)
@pytest.mark.parametrize("df", DFS)
def test_quantiles_equal_scipy_stats(p, df):
    assert d.t_ppf(p, df) == pytest.approx(scipy.stats.t.ppf(p, df), rel=1e-12)
    assert d.chi2_ppf(p, df) == pytest.approx(scipy.stats.chi2.ppf(p, df), rel=1e-10)
    assert d.f_ppf(p, df, 12) == pytest.approx(scipy.stats.f.ppf(p, df, 12), rel=1e-10)
    assert d.norm_ppf(p) == pytest.approx(scipy.stats.norm.ppf(p), rel=1e-12)


@pytest.mark.parametrize("x", [-3.0, 0.0, 0.4, 2.0, 9.5, 40.0])
@pytest.mark.parametrize("df", DFS)
def test_tail_areas_equal_scipy_stats(x, df):
    assert d.t_sf(x, df) == pytest.approx(scipy.stats.t.sf(x, df), rel=1e-12)
    if x >= 0:
        assert d.chi2_sf(x, df) == pytest.approx(scipy.stats.chi2.sf(x, df), rel=1e-10)
        assert d.f_sf(x, df, 12) == pytest.approx(scipy.stats.f.sf(x, df, 12), rel=1e-10)


def test_check_does_not_import_scipy_stats():
    import subprocess
    import sys

    code = (
        "import sys; import covariscope.cli, covariscope.study, covariscope.views.check_json; "
        "print('scipy.stats' in sys.modules, 'statsmodels' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]
