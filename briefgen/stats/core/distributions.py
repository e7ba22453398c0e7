"""Tail areas and quantiles of the t, F, chi-squared and normal distributions.

The same special functions ``scipy.stats`` calls for these (``t.sf`` is ``stdtr(df, −x)``,
``t.ppf`` is ``stdtrit``, ``f.sf`` is ``fdtrc``, ``f.ppf`` is ``fdtri``, ``chi2.sf`` is
``chdtrc``, ``norm`` is ``ndtr`` and ``ndtri``), so the values are the same to the bit (tested), without
importing ``scipy.stats``: on this machine that import took 0.8 s of every build's
fixed cost, ``scipy.special`` 0.3 s. The edges follow ``scipy.stats``' own wrappers
for the arguments the analyses pass: a statistic at or below zero has the whole
distribution above it.
"""

from __future__ import annotations

import math

from scipy import special


def t_sf(x: float, df: float) -> float:
    """P(T > x) for Student's t on ``df`` degrees of freedom (``scipy.stats.t.sf``)."""
    return float(special.stdtr(df, -x))


def t_ppf(q: float, df: float) -> float:
    """The ``q`` quantile of Student's t on ``df`` degrees of freedom (``scipy.stats.t.ppf``)."""
    if q <= 0.0 or q >= 1.0:
        return -math.inf if q == 0.0 else math.inf if q == 1.0 else math.nan
    return float(special.stdtrit(df, q))


def f_sf(x: float, df1: float, df2: float) -> float:
    """P(F > x) for the F distribution on (``df1``, ``df2``) (``scipy.stats.f.sf``)."""
    if x <= 0.0:
        return 1.0
    return float(special.fdtrc(df1, df2, x))


def f_ppf(q: float, df1: float, df2: float) -> float:
    """The ``q`` quantile of F on (``df1``, ``df2``), 0 < q < 1 (``scipy.stats.f.ppf``)."""
    return float(special.fdtri(df1, df2, q))


def chi2_sf(x: float, df: float) -> float:
    """P(X > x) for chi-squared on ``df`` degrees of freedom (``scipy.stats.chi2.sf``)."""
    if x <= 0.0:
        return 1.0
    return float(special.chdtrc(df, x))


def norm_sf(x: float) -> float:
    """P(Z > x) for the standard normal (``scipy.stats.norm.sf``)."""
    return float(special.ndtr(-x))


def norm_ppf(q: float) -> float:
    """The ``q`` quantile of the standard normal (``scipy.stats.norm.ppf``)."""
    return float(special.ndtri(q))
