"""The two-way finding: whether one combination stands out beyond its two parts."""

from __future__ import annotations

from briefgen.config import BriefSpec
from briefgen.figures.cross import cross_chart
from briefgen.figures.heatmap import heat_map_chart
from briefgen.figures.rules import HEAT_MAP, two_way_kind
from briefgen.numbers import (
    fmt_count,
)
from briefgen.present.family import Family
from briefgen.present.finding import Finding
from briefgen.present.section import Section
from briefgen.present.wording import (
    Wording,
    name_for,
    opening,
    points_text,
    share_text,
)
from briefgen.stats.core.frame import ShownLevels
from briefgen.stats.twoway import CrossTable
from briefgen.table_fit import fits_across
from briefgen.tables import (
    Table,
    cross_table_view,
)


def cross_finding(
    cross: CrossTable, words: Wording, row_name: str, column_name: str, family: Family
) -> Finding | None:
    """Whether one combination departs from what its two parts predict added together.

    The highest cell alone would mislead: it is high whenever its row and column are,
    and it is the largest of many noisy cells. A combination is claimed only when the
    interaction F test passes in the brief's family (on the log or rank scale for a
    strongly skewed target) and the cell's own interval, adjusted for the number of
    cells, excludes zero.
    """
    standout = getattr(cross, "standout", None)
    if standout is None:
        return None
    figure = cross.key
    data = {
        "key": cross.key,
        "kind": "cross",
        "variables": (cross.row_variable, cross.column_variable),
        "levels": (standout.row, standout.column),
        "estimate": standout.excess,
        "ci_low": standout.excess_ci_low,
        "ci_high": standout.excess_ci_high,
        "test": f"interaction_f_{cross.interaction.scale}",
        "p_value": cross.interaction.p_value,
        "p_adjusted": family.adjusted(cross.key),
    }
    pair = f"{standout.row} with {standout.column}"
    # A 0/1 target's cells are shares of 1s: their gaps are percentage points.
    binary = words.kind == "binary"
    if binary:
        excess = f"{points_text(standout.excess)} points"

        def interval_of(low, high):
            return f"{points_text(low)} to {points_text(high)} points"

        def value_of(v):
            return share_text(v)
    else:
        excess = words.value(standout.excess)
        excess = excess if excess.startswith("−") else f"+{excess}"
        interval_of, value_of = words.interval, words.value
    interval = (
        f"{interval_of(standout.excess_ci_low, standout.excess_ci_high)}, adjusted for the "
        f"{standout.cells_compared} combinations compared"
    )

    small = sum(
        1 for c in cross.cells if c.row is not None and c.column is not None and c.too_small
    )
    detail = (
        f"{small} combinations with fewer than {cross.min_cell} rows are marked and not compared."
        if small
        else ""
    )
    scale = {
        "log": " (tested on the log scale, as values are strongly skewed)",
        "rank": " (tested on ranks, as values are strongly skewed)",
    }.get(cross.interaction.scale, "")
    if standout.stands_out and family.passes(cross.key):
        text = (
            f"{opening(pair)} averages {value_of(standout.mean)} (n = {fmt_count(standout.n)}), {excess} against "
            f"the {value_of(standout.expected)} that its {row_name} and its {column_name} predict "
            f"added together ({words.level_name} interval of the difference {interval})."
        )
        return Finding(
            headline=f"{opening(pair)} stands out ({excess} beyond its parts)",
            text=text,
            certainty=(
                f"The combination itself matters, beyond each part{scale}; that says where, not why."
            ),
            figure=figure,
            detail=detail,
            claim="difference",
            **data,
        )
    text = (
        f"Each combination of {row_name} and {column_name} is close to what its two parts predict added "
        f"together. The largest departure, {pair}, is {excess} ({interval})."
    )
    return Finding(
        headline=f"No clear combination effect of {row_name} and {column_name}",
        text=text,
        certainty=(
            "No departure is larger than chance would produce across this many combinations"
            f"{scale}."
        ),
        figure=figure,
        detail=detail,
        claim="none",
        **data,
    )


MAX_MATRIX_COLUMNS = 7  # level columns that fit across A4 text width at 8.5 pt


def cross_section(
    cross: CrossTable,
    spec: BriefSpec,
    words: Wording,
    family: Family,
    shown: dict[str, ShownLevels] | None = None,
) -> Section:
    """The two-way means of one pair of groups: dots with intervals, or a heat map when large.

    ``shown`` (group variable ─► its shown levels) gives numeric variables their natural order.
    """
    label, decimals = words.label, words.unit_decimals
    names = (name_for(spec, cross.row_variable), name_for(spec, cross.column_variable))
    finding = cross_finding(cross, words, *names, family)
    levels = tuple((shown or {}).get(v) for v in (cross.row_variable, cross.column_variable))
    if two_way_kind(len(cross.rows), len(cross.columns)) == HEAT_MAP:
        chart = heat_map_chart(cross, words, names, levels)
    else:
        chart = cross_chart(cross, label, decimals, names, levels, words.floor)
    return Section(
        f"cross-{cross.row_variable}-{cross.column_variable}",
        f"{label} by {names[0]} and {names[1]}",
        finding,
        chart,
        _cross_matrix(cross, words, names),
    )


def _cross_matrix(cross: CrossTable, words: Wording, names: tuple[str, str]) -> Table | None:
    """The two-way matrix with the variable of fewer levels across, if it fits the text block.

    A matrix that would run off the page is left out; the long form in the appendix has every cell.
    """
    transpose = len(cross.rows) < len(cross.columns)
    across = cross.rows if transpose else cross.columns
    table = cross_table_view(cross, words, names, transpose=transpose)
    return table if len(across) <= MAX_MATRIX_COLUMNS and fits_across(table) else None
