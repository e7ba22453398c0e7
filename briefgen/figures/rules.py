"""Chart-choice rules: small pure functions, each citing where it comes from.

Every chart module asks these functions instead of deciding inline, and records the
names of the rules that shaped it on its ``Chart`` (``Chart.rules``, in stats.json as
``figures[].rules``), so a reader of the JSON can see why a figure looks as it does.
A rule's name is the constant beside it; the caption says it in words where it
changes the look. Sources are from memory of the books cited, where not marked
"common practice, no published source".
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

# Rule names as recorded on a Chart and in stats.json (README, "Figure — figures[]").
CATEGORICAL_AXIS = "categorical_axis"
CONTINUOUS_AXIS = "continuous_axis"
TIME_AXIS = "time_axis_breaks_at_gaps"
BARS_FROM_ZERO = "bars_start_at_zero"
NATURAL_ORDER = "natural_order"
VALUE_ORDER = "ordered_by_value"
FOLDED_OTHER = "folded_into_other"
LOG_AXIS = "log_axis"
CLIPPED_AXIS = "clipped_axis"
BINNED_DENSITY = "binned_density"
HEAT_MAP = "heat_map"
SMALL_MULTIPLES = "small_multiples"

_NUMBER_START = re.compile(r"^\s*([-+]?\d+(?:\.\d+)?)")


def axis_kind(numeric: bool, temporal: bool = False) -> str:
    """A categorical axis for labels, a continuous one for numbers, a time axis for dates.

    Cleveland (1985), The Elements of Graphing Data: quantitative values go on a
    scale whose distances mean something; categories go at evenly spaced positions.
    Dates are a continuous scale of their own (see ``segments_at_gaps``).
    """
    if temporal:
        return TIME_AXIS
    return CONTINUOUS_AXIS if numeric else CATEGORICAL_AXIS


def segments_at_gaps(positions: Sequence[int], step: int = 1) -> tuple[tuple[int, int], ...]:
    """Index ranges [i, j) of consecutive positions: a line is drawn per range, never across a gap.

    Positions are period numbers (month 0, 1, 2, 4 …); ``step`` is the cadence. A line
    bridging a missing period draws data that do not exist (Tufte 1983, The Visual
    Display of Quantitative Information: show the data, do not invent them;
    Cleveland 1985 on connecting lines only where values are adjacent).
    """
    if not positions:
        return ()
    ranges, begin = [], 0
    for i in range(1, len(positions)):
        if positions[i] - positions[i - 1] != step:
            ranges.append((begin, i))
            begin = i
    ranges.append((begin, len(positions)))
    return tuple(ranges)


# Common practice after Cleveland (1985) and Few (2012, Show Me the Numbers): values
# an order of magnitude apart on one linear axis squash the smaller ones to the floor.
MAGNITUDE_RATIO = 10.0


def magnitudes_differ(values: Sequence[float], ratio: float = MAGNITUDE_RATIO) -> bool:
    """Whether the largest absolute value is more than ``ratio`` times the smallest non-zero one.

    Such values never share one linear axis: use a log scale (all positive), an index
    to a baseline, or small multiples (Cleveland 1985, ch. 2 on logarithms; Few 2012).
    Zeros and non-finite values are ignored; fewer than two values never differ.
    """
    sizes = [abs(v) for v in values if v is not None and math.isfinite(v) and v != 0]
    return len(sizes) >= 2 and max(sizes) > ratio * min(sizes)


def bar_limits(low: float, high: float) -> tuple[float, float]:
    """The value axis of a bar chart: always including zero, so bar lengths compare.

    Tufte (1983): the lie factor of a bar cut off above zero; Few (2012): bars encode
    by length, which needs a zero baseline. Points and lines may start elsewhere.
    """
    return min(0.0, low), max(0.0, high)


def is_natural_order(levels: Sequence[str], numeric: bool = False) -> bool:
    """Levels that carry an order of their own: numbers in the data, or labels starting with one.

    "07-10", "3 cyl", "2024" keep their order; "north", "south" do not. Common
    practice, no published source for the test on a label's first characters.
    """
    levels = list(levels)
    return bool(levels) and (numeric or all(_NUMBER_START.match(str(v)) for v in levels))


def level_order(
    levels: Sequence[str],
    values: Mapping[str, float | None],
    numeric: bool = False,
    other_label: str | None = None,
) -> tuple[tuple[str, ...], str]:
    """Levels in natural order when they have one, else by value (largest first); "Other" last.

    Returns (levels, rule name). Cleveland (1985) and Few (2012): sort a dot or bar
    chart by value so the reader sees the ranking; a natural order (sizes, years,
    time slots) is kept, since sorting would scramble it. A level without a value
    goes after those with one; ties keep label order.
    """
    plain = [v for v in levels if v != other_label]
    tail = [other_label] if other_label is not None and other_label in levels else []
    if is_natural_order(plain, numeric):
        return tuple(sorted(plain, key=_numeric_key) + tail), NATURAL_ORDER
    ranked = sorted(plain, key=lambda v: (values.get(v) is None, -(values.get(v) or 0.0), str(v)))
    return tuple(ranked + tail), VALUE_ORDER


def _numeric_key(level: str) -> tuple[float, str]:
    found = _NUMBER_START.match(str(level))
    return (float(found.group(1)) if found else math.inf, str(level))


def fold_levels(ranked: Sequence[str], max_levels: int) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """(kept, folded): at most ``max_levels`` shown, the last place going to one "Other".

    ``ranked`` lists levels by importance (most rows first). Few (2012) and common
    practice: beyond about a dozen categories a chart stops being read; the rest
    are folded into one level, and the caption says so. Nothing is folded when all fit.
    """
    ranked = list(ranked)
    if len(ranked) <= max_levels:
        return tuple(ranked), ()
    return tuple(ranked[: max_levels - 1]), tuple(ranked[max_levels - 1 :])


# The scatter sample's size (stats.sample.SAMPLE_SIZE): above it a scatter shows only
# part of the rows, while counted bins show them all.
DENSITY_ROWS = 5000


def points_or_density(rows: int, threshold: int = DENSITY_ROWS) -> str:
    """A scatter of points up to ``threshold`` rows, binned counts (a 2-D histogram) above.

    Above the sample size a scatter would draw a sample, and thousands of points at
    print size overplot into a solid blot (Cleveland 1985 on overlap; Carr et al. 1987,
    "Scatterplot matrix techniques for large N", JASA 82, on binning). Counts from the
    engine show every row at a file size that does not grow with the rows.
    """
    return BINNED_DENSITY if rows > threshold else "points"


# Common practice, no published source: a dot plot of means with intervals reads with up
# to four series side by side in a row and about two dozen cells; past that the markers
# and their intervals crowd (seen on the fair data's 5 × 6 table: 30 overlapping
# intervals) and a heat map of the same means reads better.
MAX_DOT_SERIES = 4
MAX_DOT_CELLS = 24


def two_way_kind(rows: int, columns: int) -> str:
    """``dots`` (means with intervals) for a small two-way table, ``heat_map`` for a larger one.

    The series are the variable with fewer levels. A heat map with printed values is the
    table's own layout shaded (Wilkinson & Friendly 2009, "The history of the cluster heat
    map", Am. Stat. 63); it drops the intervals, which the table keeps.
    """
    series, lines = sorted((rows, columns))
    if series > MAX_DOT_SERIES or series * lines > MAX_DOT_CELLS:
        return HEAT_MAP
    return "dots"


# Common practice, no published source: three overlaid levels stay apart by colour, marker
# and dash; with more, lines cross and a panel per level reads better.
MAX_OVERLAID = 3


def overlay_or_multiples(levels: int, limit: int = MAX_OVERLAID) -> str:
    """``overlay`` for up to ``limit`` levels in one panel, ``small_multiples`` beyond.

    Tufte (1983, 1990 Envisioning Information): small multiples, one panel per level on
    shared scales, compare many series without a tangle of overlaid lines.
    """
    return SMALL_MULTIPLES if levels > limit else "overlay"


@dataclass(frozen=True, slots=True)
class ValueAxis:
    """How a value axis is drawn: ``linear``, ``clipped`` at ``top`` or ``log``.

    ``beyond`` counts the drawn values above ``top`` (shown at the edge, never dropped
    silently); ``quantile`` is the high quantile the clip sits at.
    """

    kind: str
    top: float | None = None
    beyond: int = 0
    quantile: float | None = None

    @property
    def rule(self) -> str | None:
        return {"clipped": CLIPPED_AXIS, "log": LOG_AXIS}.get(self.kind)


# Common practice, no published source: stop at the 99th percentile, so at most 1% of
# the points leave the frame; and only when the top 1% would take more of the axis than
# the other 99% (a tail that long squashes the bulk and the fitted line to the floor).
CLIP_QUANTILE = 0.99


def value_axis(low: float, high: float, clip_at: float, bulk_low: float) -> ValueAxis:
    """Linear, clipped or log axis for values from ``low`` to ``high``.

    ``clip_at`` is the ``CLIP_QUANTILE`` quantile of the values, ``bulk_low`` a low
    quantile (the 1st percentile). When the top tail above ``clip_at`` is longer than
    the span below it, the axis leaves the linear scale: a log axis when every value
    is positive and the bulk itself spans more than ``MAGNITUDE_RATIO``
    (``magnitudes_differ``; Cleveland 1985 on logs for skewed positive data), else a
    linear axis clipped at ``clip_at``; the caller counts the values beyond it
    (``ValueAxis.beyond``) so they are shown at the edge, not dropped.
    """
    if not high - clip_at > clip_at - low:
        return ValueAxis("linear")
    if low > 0 and magnitudes_differ([bulk_low, clip_at]):
        return ValueAxis("log")
    return ValueAxis("clipped", top=clip_at, quantile=CLIP_QUANTILE)
