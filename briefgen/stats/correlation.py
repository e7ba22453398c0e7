"""Pearson and Spearman correlation between the target and each predictor.

Pass 1, one engine query for every predictor, counts the rows with both values
and the middle of the range of x and of y over them. Pass 2, one query per predictor,
sums deviations from those (exact on data with a large offset) and, for
Spearman's rho, from the mean average rank, as exact fixed-point integers
(``briefgen.stats.core.exact``), so the engine's thread order cannot change a
digit; Python centres them exactly. Pass 2 is one query per predictor because
each may need two ordered windows, and DuckDB evaluates several differently
ordered windows in one query far more slowly than apart (10M rows, 1 GB limit:
four windows in one query 9.9 s, one window alone 0.85 s).

Spearman's rho is Pearson's r on average ranks. Each predictor's query ranks x and
y over exactly the rows with both values: by an ordered window, or, when values
repeat, from counts of each distinct value (``stats.core.ranking``). The mean of
average ranks over n rows is exactly (n + 1)/2 whatever the ties.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import ibis.expr.types as ir

from briefgen.stats.core.distributions import norm_ppf, t_sf
from briefgen.stats.core.exact import FixedPoint, centred_pair, pair_sums, pair_values
from briefgen.stats.core.ranking import (
    counting_pays,
    doubled_average_rank,
    doubled_ranks_of_values,
)
from briefgen.stats.core.references import shift_references
from briefgen.stats.regression import reference_scales


@dataclass(frozen=True, slots=True)
class Correlation:
    """How closely the target moves with one predictor, over rows with both values.

    ``pearson_r`` measures a straight-line relation, with a Fisher z interval at
    ``confidence`` and a two-sided t-test p-value. ``spearman_rho`` measures any
    steadily rising or falling relation (Pearson on average ranks), with the
    two-sided p-value of the t approximation. Fields are None when the data do
    not allow them (fewer than 3 rows, a constant column; the interval needs 4).

    Example: ``Correlation(predictor="distance", n=120, pearson_r=0.62, ...)``.
    """

    predictor: str
    n: int
    confidence: float
    pearson_r: float | None
    pearson_ci_low: float | None
    pearson_ci_high: float | None
    pearson_p_value: float | None
    spearman_rho: float | None
    spearman_p_value: float | None


def correlate(
    frame_table: ir.Table,
    predictor_columns: list[str],
    names: list[str],
    confidence: float,
    references: dict | None = None,
    sums: dict[str, dict[str, Fraction]] | None = None,
) -> tuple[Correlation, ...]:
    """Pearson and Spearman correlation of ``y`` with each predictor column.

    ``names`` are the user's names for ``predictor_columns``, in the same order;
    ``references`` and ``sums`` (``centred_sums``) are taken when already known.
    """
    if len(names) != len(predictor_columns):
        raise ValueError("names and predictor_columns must have the same length")
    if not predictor_columns:
        return ()
    predictors = list(predictor_columns)
    if references is None:
        references = shift_references(frame_table, predictors)
    if sums is None:
        sums = centred_sums(frame_table, predictors, references)
    results = []
    for i, name in enumerate(names):
        n = int(references[f"n{i}"] or 0)
        r = _correlation(sums, "value", i, n)
        rho = _correlation(sums, "rank", i, n)
        low, high = fisher_interval(r, n, confidence)
        results.append(
            Correlation(
                predictor=name,
                n=n,
                confidence=confidence,
                pearson_r=r,
                pearson_ci_low=low,
                pearson_ci_high=high,
                pearson_p_value=correlation_p_value(r, n),
                spearman_rho=rho,
                spearman_p_value=correlation_p_value(rho, n),
            )
        )
    return tuple(results)


def fisher_interval(
    r: float | None, n: int, confidence: float
) -> tuple[float | None, float | None]:
    """Confidence interval for a Pearson r by Fisher's z transform (needs n ≥ 4)."""
    if r is None or n < 4:
        return None, None
    if abs(r) >= 1.0:
        # A perfect sample correlation: atanh is infinite and the interval collapses.
        return r, r
    z = math.atanh(r)
    half = norm_ppf(0.5 + confidence / 2) / math.sqrt(n - 3)
    return math.tanh(z - half), math.tanh(z + half)


def correlation_p_value(r: float | None, n: int) -> float | None:
    """Two-sided p-value for r = 0 from t = r·√((n−2)/(1−r²)) on n − 2 degrees of freedom."""
    if r is None or n < 3:
        return None
    if abs(r) >= 1.0:
        return 0.0
    dof = n - 2
    t = r * math.sqrt(dof / ((1.0 + r) * (1.0 - r)))
    return 2.0 * t_sf(abs(t), dof)


def _ranked_rows(rows: ir.Table, n: int, distinct: dict[str, float | None]) -> tuple:
    """``rows`` (columns x and y) with each one's average rank as an expression.

    A column whose values repeat enough (``counting_pays``) is ranked from counts of its
    distinct values, joined back by value; any other by one ordered window over the rows.
    The ranks are the same integers either way; only the cost differs.
    """
    counted = [axis for axis in ("x", "y") if counting_pays(distinct[axis], n)]
    for axis in counted:
        ranks = doubled_ranks_of_values(rows, axis).select(
            **{f"{axis}_value": "value", f"{axis}_doubled": "doubled"}
        )
        rows = rows.inner_join(ranks, rows[axis] == ranks[f"{axis}_value"])
    ranks = {
        axis: (rows[f"{axis}_doubled"] if axis in counted else doubled_average_rank(rows[axis], n))
        / 2
        for axis in ("x", "y")
    }
    return rows, ranks


def centred_sums(
    frame: ir.Table, predictors: list[str], references: dict[str, float | int | None]
) -> dict[str, dict[str, Fraction]]:
    """Pass 2: sums of values and of average ranks (``value{i}``, ``rank{i}``), a query each predictor.

    The value sums are the integers ``briefgen.stats.regression.value_sums`` takes, so
    the line fits read them from here instead of a pass of their own.

    Values are shifted by the pass-1 middles of their ranges, which is exact on data
    with a large offset and a small spread (Sterbenz); the remaining shift, the mean's
    distance from that middle, is taken out exactly in :func:`_correlation`. Centring
    on a mean stored as an absolute value would not do: near 1e12 its rounding alone
    biases r by ~1e-7.
    The sums are exact (fixed point); deviations of average ranks are multiples of
    1/2, which the scale keeps exactly.
    """
    exact = {}
    for i, column in enumerate(predictors):
        if not references[f"n{i}"]:
            continue
        n = int(references[f"n{i}"])
        both = frame.filter(frame[column].notnull() & frame.y.notnull())
        rows, ranks = _ranked_rows(
            both.select(x=both[column], y=both.y),
            n,
            {"x": references[f"approx_distinct{i}"], "y": references[f"y_distinct{i}"]},
        )
        # Mean of average ranks over the n used rows is exactly (n + 1)/2.
        rank_centre = (n + 1) / 2
        rank_scale = FixedPoint.fit(n / 2, n)  # |average rank − (n + 1)/2| ≤ (n − 1)/2
        scales = {"value": reference_scales(references, i), "rank": (rank_scale, rank_scale)}
        (value_x, value_y), (rank_x, rank_y) = scales["value"], scales["rank"]
        shifted = rows.select(
            value_x=value_x.quantise(rows.x - references[f"x_ref{i}"]),
            value_y=value_y.quantise(rows.y - references[f"y_ref{i}"]),
            rank_x=rank_x.quantise(ranks["x"] - rank_centre),
            rank_y=rank_y.quantise(ranks["y"] - rank_centre),
        )
        sums = {}
        for kind in ("value", "rank"):
            sums |= pair_sums(shifted[f"{kind}_x"], shifted[f"{kind}_y"], f"{kind}_")
        totals = shifted.aggregate(**sums).to_pyarrow().to_pylist()[0]
        for kind, (scale_x, scale_y) in scales.items():
            exact[f"{kind}{i}"] = pair_values(totals, f"{kind}_", scale_x, scale_y)
    return exact


def _correlation(sums: dict[str, dict[str, Fraction]], kind: str, i: int, n: int) -> float | None:
    """r from exact shifted sums: S = Σd² − (Σd)²/n removes what is left of the shift.

    The centring and r² = Sxy²/(Sxx·Syy) are exact; r rounds once, at the square root.
    """
    if n < 3:
        return None
    sxx, sxy, syy = centred_pair(sums[f"{kind}{i}"], n)
    if sxx <= 0 or syy <= 0:
        return None
    r = math.copysign(math.sqrt(sxy * sxy / (sxx * syy)), sxy)
    # Only a perfect line reaches ±1 (Cauchy–Schwarz); the square root cannot pass it.
    return max(-1.0, min(1.0, r))
