"""Ordinary least squares of the target on each predictor, from centred sums.

Three aggregate passes, each one query for all predictors: references, the middle of
each range (shared with the correlations, ``briefgen.stats.core.references``), exact
means (shifted by them), and centred cross-products. Never Σx² − n·x̄² on raw values: on
data with a large offset that formula loses every significant digit. Every sum is an
exact fixed-point integer sum (``briefgen.stats.core.exact``), scaled from the
predictor's and the target's range, so the engine's thread order cannot change a
digit, and the residual sum of squares Syy − Sxy²/Sxx follows from them exactly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import ibis.expr.types as ir
from scipy import stats as scipy_stats

from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.exact import FixedPoint, exact_sum, value_of
from briefgen.stats.core.references import shift_references


@dataclass(frozen=True, slots=True)
class RegressionFit:
    """Straight-line fit of the target on one predictor, over rows with both values.

    ``residual_sd`` is s = √(SSE/(n−2)); with ``x_mean`` and ``sxx`` it gives the
    confidence band of the line at any x: s·√(1/n + (x − x̄)²/Sxx). ``x_distinct``
    counts the distinct predictor values in those rows: exact up to
    ``EXACT_DISTINCT_UP_TO``, an estimate above (None where not counted, as for the
    trend's fit on period means).
    """

    predictor: str
    n: int
    slope: float | None
    slope_se: float | None
    slope_ci_low: float | None
    slope_ci_high: float | None
    intercept: float | None
    intercept_se: float | None
    intercept_ci_low: float | None
    intercept_ci_high: float | None
    r_squared: float | None
    pearson_r: float | None
    residual_sd: float | None
    x_mean: float | None
    y_mean: float | None
    sxx: float | None
    x_min: float | None
    x_max: float | None
    x_distinct: int | None = None

    @property
    def slope_p_value(self) -> float | None:
        """Two-sided p of the t test that the slope is 0 (n − 2 df); None without an error."""
        if self.slope is None or self.slope_se is None:
            return None
        if self.slope_se == 0:  # an exact line: any slope but 0 is certain
            return 0.0 if self.slope else 1.0
        return float(2 * scipy_stats.t.sf(abs(self.slope / self.slope_se), self.n - 2))

    def band(self, x: float, confidence: float) -> tuple[float, float]:
        """Confidence interval of the fitted mean at ``x``."""
        fitted = self.intercept + self.slope * x
        t = float(scipy_stats.t.ppf(0.5 + confidence / 2, self.n - 2))
        half = t * self.residual_sd * math.sqrt(1 / self.n + (x - self.x_mean) ** 2 / self.sxx)
        return fitted - half, fitted + half


def _columns(frame: ir.Table, predictor: str):
    x, y = frame[predictor], frame.y
    both = x.notnull() & y.notnull()
    return x, y, both


def _deviations(frame: ir.Table, predictor: str, i: int, refs: dict, means: dict):
    """Centred x and y of one predictor's rows, and the mask of rows with both values."""
    # Deviation from the mean as (value − reference) − mean shift: the reference is a data
    # value, so the first difference is exact, and the rounded mean never meets the offset.
    x, y, both = _columns(frame, predictor)
    dx = (x - refs[f"x_ref{i}"]) - means[f"dx{i}"]
    dy = (y - refs[f"y_ref{i}"]) - means[f"dy{i}"]
    return dx, dy, both


def _scales(refs: dict, i: int, means: dict | None = None) -> tuple[FixedPoint, FixedPoint]:
    """Fixed-point scales of predictor i's x and y deviations (from the references, or centred)."""
    n = int(refs[f"n{i}"])
    shift_x = means[f"dx{i}"] if means is not None else 0.0
    shift_y = means[f"dy{i}"] if means is not None else 0.0
    return (
        FixedPoint.around(refs[f"x_ref{i}"], refs[f"x_min{i}"], refs[f"x_max{i}"], n, shift_x),
        FixedPoint.around(refs[f"y_ref{i}"], refs[f"y_min{i}"], refs[f"y_max{i}"], n, shift_y),
    )


def _mean_pass(
    frame: ir.Table, predictors: list[str], refs: dict
) -> tuple[dict, dict[int, tuple[float, float]]]:
    """Pass 2: mean shifts from the references, and the exact (x̄, ȳ) of each fittable predictor."""
    means_expr, scales = {}, {}
    for i, p in enumerate(predictors):
        x, y, both = _columns(frame, p)
        if refs[f"n{i}"]:
            scales[i] = scale_x, scale_y = _scales(refs, i)
            # Null outside the rows with both values: the bounds hold only over those.
            means_expr[f"dx{i}"] = exact_sum(scale_x.quantise(x - refs[f"x_ref{i}"], both))
            means_expr[f"dy{i}"] = exact_sum(scale_y.quantise(y - refs[f"y_ref{i}"], both))
    sums = one_row(frame, means_expr)
    means = {}
    for i, (scale_x, scale_y) in scales.items():
        n = int(refs[f"n{i}"])
        means[f"dx{i}"] = float(value_of(sums[f"dx{i}"], scale_x) / n)
        means[f"dy{i}"] = float(value_of(sums[f"dy{i}"], scale_y) / n)
    centre = {
        i: (refs[f"x_ref{i}"] + means[f"dx{i}"], refs[f"y_ref{i}"] + means[f"dy{i}"])
        for i in range(len(predictors))
        if refs[f"n{i}"]
    }
    return means, centre


def _sums_pass(
    frame: ir.Table, predictors: list[str], refs: dict, means: dict, centre: dict
) -> dict:
    """Pass 3: centred sums of squares and cross-products Sxx, Sxy, Syy, and the SSE.

    The sums are exact, so Python removes what is left of the (rounded) mean shift and
    forms the residual sum of squares SSE = Syy − Sxy²/Sxx without cancelling a digit:
    one rounding each, where summing float residuals in a fourth pass rounded every row.
    """
    sums_expr, scales = {}, {}
    for i in centre:
        dx, dy, both = _deviations(frame, predictors[i], i, refs, means)
        scales[i] = scale_x, scale_y = _scales(refs, i, means)
        qx, qy = scale_x.quantise(dx, both), scale_y.quantise(dy, both)
        sums_expr |= {
            f"sx{i}": exact_sum(qx),
            f"sy{i}": exact_sum(qy),
            f"sxx{i}": exact_sum(qx * qx),
            f"sxy{i}": exact_sum(qx * qy),
            f"syy{i}": exact_sum(qy * qy),
        }
    sums = one_row(frame, sums_expr)
    result = {}
    for i, (scale_x, scale_y) in scales.items():
        n = int(refs[f"n{i}"])
        sx, sy = value_of(sums[f"sx{i}"], scale_x), value_of(sums[f"sy{i}"], scale_y)
        sxx = value_of(sums[f"sxx{i}"], scale_x, scale_x) - sx * sx / n
        sxy = value_of(sums[f"sxy{i}"], scale_x, scale_y) - sx * sy / n
        syy = value_of(sums[f"syy{i}"], scale_y, scale_y) - sy * sy / n
        result |= {f"sxx{i}": float(sxx), f"sxy{i}": float(sxy), f"syy{i}": float(syy)}
        if sxx > 0:
            result[f"sse{i}"] = float(syy - sxy * sxy / sxx)
    return result


def fit_lines(
    frame: ir.Table, predictors: list[str], confidence: float, references: dict | None = None
) -> tuple[RegressionFit, ...]:
    """Fit ``y`` on each predictor column of ``frame`` (columns already float, NaN as null).

    ``references`` are the shared shift references of the same table, when already known.
    """
    if not predictors:
        return ()
    refs = references if references is not None else shift_references(frame, predictors)
    means, centre = _mean_pass(frame, predictors, refs)
    sums = _sums_pass(frame, predictors, refs, means, centre)
    distinct = _distinct_counts(frame, predictors, refs)
    fits = []
    for i, predictor in enumerate(predictors):
        x_mean, y_mean = centre.get(i, (None, None))
        fits.append(
            fit_from_sums(
                predictor,
                n=int(refs[f"n{i}"] or 0),
                x_mean=x_mean,
                y_mean=y_mean,
                sxx=sums.get(f"sxx{i}"),
                sxy=sums.get(f"sxy{i}"),
                syy=sums.get(f"syy{i}"),
                sse=sums.get(f"sse{i}"),
                x_min=refs[f"x_min{i}"],
                x_max=refs[f"x_max{i}"],
                confidence=confidence,
                x_distinct=distinct.get(i),
            )
        )
    return tuple(fits)


# A generous margin over the few values that read as codes: HyperLogLog's error on
# small counts is far below this, so no predictor with a handful of values is missed.
EXACT_DISTINCT_UP_TO = 32


def _distinct_counts(frame: ir.Table, predictors: list[str], refs: dict) -> dict[int, int]:
    """Distinct values per predictor: exact where the estimate is small, else the estimate."""
    counts = {
        i: int(refs[f"approx_distinct{i}"])
        for i in range(len(predictors))
        if refs.get(f"approx_distinct{i}") is not None
    }
    few = [i for i, n in counts.items() if n <= EXACT_DISTINCT_UP_TO]
    y = frame.y
    exact = one_row(
        frame,
        {
            f"d{i}": frame[predictors[i]].nunique(
                where=frame[predictors[i]].notnull() & y.notnull()
            )
            for i in few
        },
    )
    return counts | {i: int(exact[f"d{i}"]) for i in few}


# RegressionFit fields that are estimates: unknown (None) when a fit cannot be made.
_ESTIMATE_FIELDS = (
    "slope",
    "slope_se",
    "slope_ci_low",
    "slope_ci_high",
    "intercept",
    "intercept_se",
    "intercept_ci_low",
    "intercept_ci_high",
    "r_squared",
    "pearson_r",
    "residual_sd",
)


def fit_from_sums(
    predictor: str,
    *,
    n: int,
    x_mean: float | None,
    y_mean: float | None,
    sxx: float | None,
    sxy: float | None,
    syy: float | None,
    sse: float | None,
    x_min: float | None,
    x_max: float | None,
    confidence: float,
    x_distinct: int | None = None,
) -> RegressionFit:
    """The fit from centred sums and the residual sum of squares, however they were summed.

    Slope and intercept need n ≥ 2 and spread in x; errors, intervals and R² need n ≥ 3.
    """
    base = {"predictor": predictor, "n": n, "x_mean": x_mean, "y_mean": y_mean, "sxx": sxx}
    base |= {"x_min": x_min, "x_max": x_max, "x_distinct": x_distinct}
    empty = dict.fromkeys(_ESTIMATE_FIELDS)
    if n < 2 or not sxx or sxx <= 0:
        return RegressionFit(**base, **empty)
    slope = sxy / sxx
    intercept = y_mean - slope * x_mean
    if n < 3 or sse is None:
        return RegressionFit(**base, **(empty | {"slope": slope, "intercept": intercept}))
    residual_sd = math.sqrt(max(sse, 0.0) / (n - 2))
    slope_se = residual_sd / math.sqrt(sxx)
    intercept_se = residual_sd * math.sqrt(1 / n + x_mean * x_mean / sxx)
    t = float(scipy_stats.t.ppf(0.5 + confidence / 2, n - 2))
    return RegressionFit(
        **base,
        slope=slope,
        slope_se=slope_se,
        slope_ci_low=slope - t * slope_se,
        slope_ci_high=slope + t * slope_se,
        intercept=intercept,
        intercept_se=intercept_se,
        intercept_ci_low=intercept - t * intercept_se,
        intercept_ci_high=intercept + t * intercept_se,
        r_squared=1 - sse / syy if syy > 0 else None,
        pearson_r=sxy / math.sqrt(sxx * syy) if syy > 0 else None,
        residual_sd=residual_sd,
    )
