"""The row that moves a straight line most: Cook's distance, one engine query for every fit.

Cook (1977, "Detection of influential observation in linear regression",
Technometrics 19:15-18) measures how far the fitted coefficients move when row i is
left out, in units of their confidence region:

    D_i = e_i² h_i / (p s² (1 − h_i)²),  h_i = 1/n + (x_i − x̄)²/Sxx,  p = 2

for a line with an intercept (e_i the residual, s² = SSE/(n − 2), h_i the leverage).
D_i equal to the median of F(p, n − p) moves them to the edge of their 50% confidence
region: that median is the cut-off used here (Cook 1977 compares D with the F
percentiles; Cook & Weisberg 1982, "Residuals and Influence in Regression", p. 118,
round it to D > 1; both from memory). It is about 0.70 for p = 2 above 20 rows, so a
single row in a large table rarely passes it: only when the line truly rests on it.

Each row's D is a few float operations on deviations from the fits' references (the
same small values the exact sums scale, so an offset of 1e12 costs no digit) and the
fit's own slope, means, Sxx and s². Per-row arithmetic does not depend on the
engine's threads; the largest D is an order statistic; ties go to the row with the
smallest predictor value, then the smallest target value (rows tied in all three are
the same values), so every run and engine names the same row. The query is one union
of a top row per predictor, beside the count of rows above the cut-off.

The slope without that row is the fit's exact sums less the row's own fixed-point
terms (the same rounding the engine applied), in Python: no second pass.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir

from briefgen.stats.core.distributions import f_ppf
from briefgen.stats.core.exact import FixedPoint, centred_pair

# Parameters of a straight line with an intercept: Cook's p.
PARAMETERS = 2
# A row with leverage this close to 1 is the only row away from one predictor value:
# without it there is no line, and its D is 0/0 in exact arithmetic (noise in floats).
LEVERAGE_GAP = 1e-9


@dataclass(frozen=True, slots=True)
class Influence:
    """The row of a straight-line fit with the largest Cook's distance.

    ``cooks_distance`` is D of that row, ``x`` and ``y`` its predictor and target
    values; ``cutoff`` is the median of F(2, n − 2) and ``rows_over`` counts the rows
    whose D exceeds it (0: no row pulls the line). ``slope_without`` is the slope fitted
    to the other n − 1 rows. Ties in D go to the smallest x, then the smallest y.
    """

    cooks_distance: float
    x: float
    y: float
    cutoff: float
    rows_over: int
    slope_without: float | None

    @property
    def pulls(self) -> bool:
        """Whether the row moves the line beyond the cut-off."""
        return self.cooks_distance > self.cutoff


def cooks_cutoff(n: int) -> float:
    """The median of F(2, n − 2): D there moves the fit to its 50% confidence region's edge."""
    return f_ppf(0.5, PARAMETERS, n - PARAMETERS)


def most_influential(
    frame: ir.Table,
    predictors: list[str],
    refs: dict,
    sums: dict[str, dict[str, Fraction]],
    lines: dict[int, dict],
) -> dict[int, Influence]:
    """Per predictor index with a fit: its most influential row, one query for all.

    ``lines`` holds, per predictor index i, the fit's ``slope``, ``sxx`` and ``sse``
    (floats from the exact sums) and the ``scales`` its sums were taken at; fits
    without residual spread or with fewer than three rows have no Cook's distance
    and are left out.
    """
    tops, counts, cutoffs = [], {}, {}
    y = frame.y
    for i, line in lines.items():
        n = int(refs[f"n{i}"] or 0)
        if n <= PARAMETERS or line["sse"] is None or line["sse"] <= 0 or not line["sxx"]:
            continue
        values = sums[f"value{i}"]
        x = frame[predictors[i]]
        # Deviations from the fit's means, formed from the references as the sums were.
        cx = (x - refs[f"x_ref{i}"]) - float(values["sx"] / n)
        cy = (y - refs[f"y_ref{i}"]) - float(values["sy"] / n)
        residual = cy - _float(line["slope"]) * cx
        leverage = _float(1 / n) + cx * cx / _float(line["sxx"])
        room = _float(1.0) - leverage
        usable = x.notnull() & y.notnull() & (room > LEVERAGE_GAP)
        # Null, not a division by zero, beyond the gap: Spark's ANSI mode raises on x / 0.
        room = ibis.ifelse(usable, room, ibis.null(dt.float64))
        s2 = line["sse"] / (n - PARAMETERS)
        distance = (residual * residual * leverage) / (_float(PARAMETERS * s2) * room * room)
        cutoffs[i] = cooks_cutoff(n)
        top = (
            frame.filter(usable)
            .select(i=ibis.literal(i, dt.int64), d=distance, x=x, y=y)
            .order_by([ibis.desc("d"), "x", "y"])
            .limit(1)
        )
        tops.append(top)
        counts[f"over{i}"] = (usable & (distance > cutoffs[i])).sum()
    if not tops:
        return {}
    rows = ibis.union(*tops).cross_join(frame.aggregate(**counts)).to_pyarrow().to_pylist()
    found = {}
    for row in rows:
        i = int(row["i"])
        found[i] = Influence(
            cooks_distance=float(row["d"]),
            x=float(row["x"]),
            y=float(row["y"]),
            cutoff=cutoffs[i],
            rows_over=int(row[f"over{i}"] or 0),
            slope_without=slope_without(
                refs, sums[f"value{i}"], lines[i]["scales"], i, float(row["x"]), float(row["y"])
            ),
        )
    return found


def _float(value: float) -> ir.FloatingScalar:
    return ibis.literal(float(value), dt.float64)


def slope_without(
    refs: dict,
    values: dict[str, Fraction],
    scales: tuple[FixedPoint, FixedPoint],
    i: int,
    x: float,
    y: float,
) -> float | None:
    """The slope of predictor i's fit without one row (x, y): its exact sums less that row's.

    ``values`` are the fit's exact sums of deviations (``pair_values``), taken at ``scales``.
    """
    n = int(refs[f"n{i}"]) - 1
    if n < 2:
        return None
    scale_x, scale_y = scales
    dx = scale_x.quantised(x - refs[f"x_ref{i}"])
    dy = scale_y.quantised(y - refs[f"y_ref{i}"])
    left = {
        "sx": values["sx"] - dx,
        "sy": values["sy"] - dy,
        "sxx": values["sxx"] - dx * dx,
        "sxy": values["sxy"] - dx * dy,
        "syy": values["syy"] - dy * dy,
    }
    sxx, sxy, _ = centred_pair(left, n)
    return float(sxy / sxx) if sxx > 0 else None
