"""Ordinary least squares of the target on each predictor, from centred sums.

Two aggregate passes, each one query for all predictors: references, the middle of
each range (shared with the correlations, ``briefgen.stats.core.references``), and
exact sums of deviations from them (``value_sums``; in a brief the correlations'
pass sums the same integers, so the fits take theirs). Never Σx² − n·x̄² on raw
values: on data with a large offset that formula loses every significant digit. Every
sum is an exact fixed-point integer sum (``briefgen.stats.core.exact``), scaled from
the predictor's and the target's range, so the engine's thread order cannot change a
digit, and the means, the centred sums and the residual sum of squares
Syy − Sxy²/Sxx follow from them exactly, with one rounding each. (A pass of means and
a second of deviations from them, the earlier form, cost a query and added a rounding
per value.) A brief's fits take one more query, after the lines are known: each line's
most influential row by Cook's distance (``briefgen.stats.influence``)."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from fractions import Fraction

import ibis.expr.types as ir

from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.distributions import t_ppf, t_sf
from briefgen.stats.core.exact import FixedPoint, centred_pair, pair_sums, pair_values
from briefgen.stats.core.references import shift_references
from briefgen.stats.influence import Influence, most_influential


@dataclass(frozen=True, slots=True)
class RegressionFit:
    """Straight-line fit of the target on one predictor, over rows with both values.

    ``residual_sd`` is s = √(SSE/(n−2)); with ``x_mean`` and ``sxx`` it gives the
    confidence band of the line at any x: s·√(1/n + (x − x̄)²/Sxx). ``x_distinct``
    counts the distinct predictor values in those rows: exact up to
    ``EXACT_DISTINCT_UP_TO``, an estimate above (None where not counted, as for the
    trend's fit on period means). ``influence`` is the row with the largest Cook's
    distance and the slope without it (``briefgen.stats.influence``); None where not
    looked for (the trend's and the log-scale fits) or where no row has a distance.
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
    influence: Influence | None = None

    @property
    def slope_p_value(self) -> float | None:
        """Two-sided p of the t test that the slope is 0 (n − 2 df); None without an error."""
        if self.slope is None or self.slope_se is None:
            return None
        if self.slope_se == 0:  # an exact line: any slope but 0 is certain
            return 0.0 if self.slope else 1.0
        return 2 * t_sf(abs(self.slope / self.slope_se), self.n - 2)

    def band(self, x: float, confidence: float) -> tuple[float, float]:
        """Confidence interval of the fitted mean at ``x``."""
        fitted = self.intercept + self.slope * x
        t = t_ppf(0.5 + confidence / 2, self.n - 2)
        half = t * self.residual_sd * math.sqrt(1 / self.n + (x - self.x_mean) ** 2 / self.sxx)
        return fitted - half, fitted + half


def value_sums(
    frame: ir.Table, predictors: list[str], refs: dict
) -> dict[str, dict[str, Fraction]]:
    """Exact sums of deviations from the references, one query for every predictor.

    For predictor i, over the rows with both values: ``value{i}``, the sums ``sx``,
    ``sy``, ``sxx``, ``sxy`` and ``syy`` of d = value − reference (``pair_values``), as
    exact ``Fraction``s (the correlations sum the same integers beside their ranks, so
    the fits can take theirs: ``briefgen.stats.correlation.centred_sums``).
    """
    sums_expr, scales = {}, {}
    for i, predictor in enumerate(predictors):
        if not refs[f"n{i}"]:
            continue
        x, y = frame[predictor], frame.y
        both = x.notnull() & y.notnull()
        scales[i] = scale_x, scale_y = reference_scales(refs, i)
        # Null outside the rows with both values: the bounds hold only over those.
        qx = scale_x.quantise(x - refs[f"x_ref{i}"], both)
        qy = scale_y.quantise(y - refs[f"y_ref{i}"], both)
        sums_expr |= pair_sums(qx, qy, f"p{i}_")
    totals = one_row(frame, sums_expr)
    exact = {}
    for i, (scale_x, scale_y) in scales.items():
        exact[f"value{i}"] = pair_values(totals, f"p{i}_", scale_x, scale_y)
    return exact


def reference_scales(refs: dict, i: int) -> tuple[FixedPoint, FixedPoint]:
    """Fixed-point scales of predictor i's x and y deviations from their references."""
    n = int(refs[f"n{i}"])
    return (
        FixedPoint.around(refs[f"x_ref{i}"], refs[f"x_min{i}"], refs[f"x_max{i}"], n),
        FixedPoint.around(refs[f"y_ref{i}"], refs[f"y_min{i}"], refs[f"y_max{i}"], n),
    )


def _centred(sums: dict[str, dict[str, Fraction]], refs: dict, i: int) -> dict | None:
    """Means, centred sums Sxx, Sxy, Syy and the SSE of predictor i, from its exact sums.

    The sums are exact, so centring (Σd² − (Σd)²/n) and SSE = Syy − Sxy²/Sxx cancel
    nothing: one rounding each. The mean is the reference plus the mean deviation.
    """
    n = int(refs[f"n{i}"] or 0)
    if not n:
        return None
    values = sums[f"value{i}"]
    sxx, sxy, syy = centred_pair(values, n)
    centred = {
        "x_mean": refs[f"x_ref{i}"] + float(values["sx"] / n),
        "y_mean": refs[f"y_ref{i}"] + float(values["sy"] / n),
        "sxx": float(sxx),
        "sxy": float(sxy),
        "syy": float(syy),
        "sse": None,
    }
    if sxx > 0:
        centred["sse"] = float(syy - sxy * sxy / sxx)
    return centred


def fit_lines(
    frame: ir.Table,
    predictors: list[str],
    confidence: float,
    references: dict | None = None,
    sums: dict[str, dict[str, Fraction]] | None = None,
    influence: bool = False,
) -> tuple[RegressionFit, ...]:
    """Fit ``y`` on each predictor column of ``frame`` (columns already float, NaN as null).

    ``references`` are the shared shift references of the same table and ``sums`` the
    exact sums of deviations from them (``value_sums``), when already known. With
    ``influence``, one more query finds each line's most influential row.
    """
    if not predictors:
        return ()
    refs = references if references is not None else shift_references(frame, predictors)
    if sums is None:
        sums = value_sums(frame, predictors, refs)
    distinct = _distinct_counts(frame, predictors, refs)
    fits, lines = [], {}
    for i, predictor in enumerate(predictors):
        centred = _centred(sums, refs, i) or dict.fromkeys(
            ("x_mean", "y_mean", "sxx", "sxy", "syy", "sse")
        )
        if centred["sxx"]:
            lines[i] = {
                "slope": centred["sxy"] / centred["sxx"],
                "sxx": centred["sxx"],
                "sse": centred["sse"],
                "scales": reference_scales(refs, i),
            }
        fits.append(
            fit_from_sums(
                predictor,
                n=int(refs[f"n{i}"] or 0),
                **centred,
                x_min=refs[f"x_min{i}"],
                x_max=refs[f"x_max{i}"],
                confidence=confidence,
                x_distinct=distinct.get(i),
            )
        )
    if influence:
        rows = most_influential(frame, predictors, refs, sums, lines)
        fits = [replace(fit, influence=rows.get(i)) for i, fit in enumerate(fits)]
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
    t = t_ppf(0.5 + confidence / 2, n - 2)
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
