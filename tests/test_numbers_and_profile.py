"""Number formatting and chart-plan rules."""

from __future__ import annotations

import pandas as pd

from briefgen.numbers import decimals_for, fmt, fmt_count, fmt_p, fmt_percent
from briefgen.profile import has_natural_order, level_order
from briefgen.stats.core.frame import shown_levels
from briefgen.stats.core.summary import summarise_levels


def test_decimals_follow_the_spread_not_the_size():
    assert decimals_for(15.0) == 1  # three significant digits of a typical difference
    assert decimals_for(0.1) == 3
    assert decimals_for(2500.0) == 0
    # A value near 1e12 with spread 0.1 keeps the digits that differ.
    assert fmt(1e12 + 0.4, decimals_for(0.1)) == "1,000,000,000,000.400"
    assert decimals_for(None) == 2 and decimals_for(0.0) == 2


def test_formatting_conventions():
    assert fmt(-1234.5, 1) == "−1,234.5"  # typographic minus (Unicode U+2212)
    assert fmt(-0.0001, 2) == "0.00"  # never "−0.00"
    assert fmt(None, 2) == "–"
    assert fmt(float("nan"), 2) == "–"
    assert fmt_count(1234567) == "1,234,567"
    assert fmt_percent(0.684) == "68%"


def test_p_values_printed_as_journals_do():
    # APA style (7th ed., 6.36): exact p to two or three decimals, "< .001" below that.
    assert fmt_p(0.0004) == "< 0.001"
    assert fmt_p(0.0123) == "0.012"
    assert fmt_p(0.38) == "0.38"
    assert fmt_p(None) == "–"


def test_numbered_levels_keep_their_natural_order():
    assert has_natural_order(["07-10", "10-13", "16-19"])
    assert not has_natural_order(["van", "bicycle"])


def test_levels_sorted_by_median_and_small_levels_folded(engine_table):
    # Invented data: 12 levels of decreasing size; common practice (no published source) is to
    # show about 8 categories and fold the rest into "other".
    rows = []
    for i in range(12):
        rows += [{"level": f"site {chr(65 + i)}", "y": float(i + k % 3)} for k in range(40 - 3 * i)]
    table = engine_table(pd.DataFrame(rows))
    summaries, _ = summarise_levels(table, 0.95)
    assert len(summaries) == 12
    shown = shown_levels(table, "level", "level", 8)
    assert shown.other_label == "Other (5 levels)" and len(shown.folded) == 5
    folded = table.mutate(
        level=(table.level.isin(list(shown.kept))).ifelse(table.level, shown.other_label)
    )
    folded_summaries, _ = summarise_levels(folded, 0.95)
    levels = [s.level for s in folded_summaries]
    assert len(levels) == 8
    assert "Other (5 levels)" in levels
    other = next(s for s in folded_summaries if s.level.startswith("Other"))
    assert other.n == sum(40 - 3 * i for i in range(7, 12))
    order = level_order(folded_summaries, shown.other_label)
    assert order[-1].startswith("Other")  # the folded level goes last
    medians = [next(s.median for s in folded_summaries if s.level == level) for level in order[:-1]]
    assert medians == sorted(medians, reverse=True)


def test_tiny_units_switch_to_scientific_notation():
    spread = 1e-13
    d = decimals_for(spread)
    assert fmt(1.2345e-12, d) == "1.234e−12" or fmt(1.2345e-12, d) == "1.235e−12"
    assert fmt(1.2e-12 + 3e-13, d) != fmt(1.2e-12, d)  # the digits that differ survive
    assert fmt(0.0, d) == "0." + "0" * d or fmt(0.0, d).startswith("0")
