"""The distribution functions the analyses call, against scipy.stats to the last bit."""

from __future__ import annotations

import math

import pytest
from scipy import stats as scipy_stats

from briefgen.stats.core.distributions import chi2_sf, f_ppf, f_sf, norm_ppf, norm_sf, t_ppf, t_sf

STATISTICS = (0.0, 1e-12, 0.3, 1.0, 1.96, 2.5, 7.0, 40.0, 1e3, math.inf)
DEGREES = (1, 2, 3.5, 9, 29.7, 120, 1e4, 1e7)
LEVELS = (0.5, 0.8, 0.9, 0.95, 0.975, 0.995, 0.9995, 1 - 1e-12)


# reference: scipy.stats (the reference library), the same special functions called
# through its distribution wrappers; equality, not closeness.
@pytest.mark.parametrize("df", DEGREES)
def test_student_t_matches_scipy(df):
    for x in STATISTICS:
        assert t_sf(x, df) == scipy_stats.t.sf(x, df)
        assert t_sf(-x, df) == scipy_stats.t.sf(-x, df)
    for q in LEVELS:
        assert t_ppf(q, df) == scipy_stats.t.ppf(q, df)
    assert t_ppf(0.0, df) == -math.inf and t_ppf(1.0, df) == math.inf


@pytest.mark.parametrize("df1, df2", [(1, 1), (1, 30), (2, 5.5), (4, 200), (11, 1e6)])
def test_f_matches_scipy(df1, df2):
    for x in STATISTICS:
        assert f_sf(x, df1, df2) == scipy_stats.f.sf(x, df1, df2)
    for q in (0.05, 0.5, 0.975):
        assert f_ppf(q, df1, df2) == scipy_stats.f.ppf(q, df1, df2)


@pytest.mark.parametrize("df", (1, 2, 3, 8, 47, 1000))
def test_chi_squared_matches_scipy(df):
    for x in STATISTICS:
        assert chi2_sf(x, df) == scipy_stats.chi2.sf(x, df)


def test_normal_matches_scipy():
    for x in STATISTICS:
        assert norm_sf(x) == scipy_stats.norm.sf(x)
        assert norm_sf(-x) == scipy_stats.norm.sf(-x)
    for q in (*LEVELS, 0.025, 1e-9):
        assert norm_ppf(q) == scipy_stats.norm.ppf(q)


def test_a_build_does_not_import_scipy_stats():
    """The point of this module: scipy.stats cost 0.8 s of every build's start."""
    import subprocess
    import sys

    code = (
        "import sys, briefgen.pipeline, briefgen.document, briefgen.render;"
        "print('scipy.stats' in sys.modules)"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.stdout.strip() == "False", done.stderr
