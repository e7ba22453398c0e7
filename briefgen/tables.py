"""Results ─► tables of formatted cells, for the body of the brief and its appendix.

Every cell is written with the same formatter as the findings, so a number in a
table and the same number in a sentence always read alike.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from briefgen.numbers import (
    decimals_for,
    fmt,
    fmt_count,
    fmt_interval,
    fmt_p,
    fmt_percent,
    fmt_share,
    p_text,
)
from briefgen.present.bounds import HasInterval
from briefgen.present.wording import Wording, labelled_analysis, test_name
from briefgen.profile import natural_sorted
from briefgen.stats import BriefStats
from briefgen.stats.compare import GroupComparison
from briefgen.stats.core.frame import OTHER_PREFIX, ShownLevels
from briefgen.stats.groups import GroupResult
from briefgen.stats.periods import period_label
from briefgen.stats.proportions import ProportionComparison
from briefgen.stats.trend import PeriodStats, Trend
from briefgen.stats.twoway import CrossTable

SMALL_MARK = "†"


def no_interval_note(summaries: Iterable[HasInterval], words: Wording) -> list[str]:
    """Why a mean's interval shows "–", naming only the reasons these rows have."""
    missing = [s for s in summaries if words.mean_interval(s) == "–"]
    reasons = []
    if any(s.n < 2 for s in missing):
        reasons.append("fewer than two values")
    if any(s.n >= 2 for s in missing):
        reasons.append("all values equal (no spread to estimate one from)")
    if not reasons:
        return []
    return [f"An interval shown as – could not be given: {', or '.join(reasons)}."]


@dataclass(frozen=True, slots=True)
class Table:
    """Header and rows of already formatted cells; ``numeric`` marks right-aligned columns."""

    key: str
    caption: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    numeric: tuple[bool, ...]
    notes: tuple[str, ...] = ()


def group_table(group: GroupResult, words: Wording, name: str) -> Table:
    if group.shares:
        return share_table(group, words, name)
    rows = []
    boxes = {b.level: b for b in group.boxes}
    for s in group.summaries:
        box = boxes.get(s.level)
        rows.append(
            (
                s.level,
                fmt_count(s.n),
                words.value(s.mean),
                words.mean_interval(s),
                words.value(s.median),
                f"{words.value(s.q1)} – {words.value(s.q3)}" if s.q1 is not None else "–",
                fmt_count(box.outlier_count) if box else "–",
            )
        )
    notes = no_interval_note(group.summaries, words)
    if any(b.outlier_count for b in group.boxes):
        notes.append(
            "Outliers are counted against each level's own box (beyond 1.5 × IQR), so they need "
            "not add up to the count over all values."
        )
    fold = fold_note(group.shown, name)
    if fold:
        notes.append(fold)
    if group.rows_without_level:
        notes.append(
            f"{fmt_count(group.rows_without_level)} rows have no {name} and are not in this table."
        )
    return Table(
        key=f"table-group-{group.variable}",
        caption=f"{words.label} by {name}",
        header=(
            "Level",
            "n",
            "Mean",
            f"{words.level_name} interval",
            "Median",
            "Middle half (Q1 – Q3)",
            "Outliers in level",
        ),
        rows=tuple(rows),
        numeric=(False, True, True, True, True, True, True),
        notes=tuple(notes),
    )


MAX_FOLDED_LISTED = 12  # a longer list of names is not read; the count says the rest


def fold_note(shown: ShownLevels, name: str) -> str | None:
    """What "Other (k levels)" holds: its rows, their share, and the folded levels by name."""
    if shown.other_label is None:
        return None
    share = shown.folded_share or 0.0
    # Numbered levels (years, codes) read best in their order; others largest first.
    listed = ", ".join(natural_sorted(shown.folded)[:MAX_FOLDED_LISTED])
    more = len(shown.folded) - MAX_FOLDED_LISTED
    listed += f" and {more} more" if more > 0 else ""
    return (
        f"{shown.other_label} holds {fmt_count(shown.folded_rows)} rows "
        f"({fmt_share(share, 0 if share >= 0.1 else 1)}): {listed}. The {len(shown.kept)} levels "
        f"of {name} shown by name are the largest; levels of equal size are ranked by how far "
        "their mean lies from the overall mean."
    )


def _leaning(comparison: GroupComparison, words: Wording) -> str:
    """Which test the verdict rests on, as ``present.family.verdict_test`` decides it."""
    if words.kind == "count":  # medians tie at 0: the verdict compares means, whatever the skew
        return " The brief leans on the Welch test: with many values at 0, medians and ranks say little."
    test = "rank-based test" if comparison.leans_on == "rank" else "Welch test"
    return f" The brief leans on the {test}: {comparison.leans_on_reason}."


def pairwise_table(comparison: GroupComparison, words: Wording, name: str) -> Table:
    rows = []
    for pair in comparison.pairwise:
        rows.append(
            (
                f"{pair.level_a} − {pair.level_b}",
                words.value(pair.difference),
                words.interval(pair.ci_low, pair.ci_high) if pair.ci_low is not None else "–",
                fmt_p(pair.p_value),
                fmt_p(pair.p_holm),
            )
        )
    test = test_name(comparison.test)
    notes = [
        f"Overall: {test}, {p_text(comparison.p_value)}."
        + (
            f" Rank-based check ({test_name(comparison.rank_test.test)}): "
            f"{p_text(comparison.rank_test.p_value)}."
            if comparison.rank_test is not None
            else ""
        )
        + _leaning(comparison, words)
    ]
    notes += list(comparison.notes)
    return Table(
        key=f"table-pairs-{comparison.variable}",
        caption=f"Differences in mean {words.lower} between levels of {name}",
        header=(
            "Pair (first − second)",
            "Difference",
            f"{words.level_name} interval",
            "p",
            "p (Holm)",
        ),
        rows=tuple(rows),
        numeric=(False, True, True, True, True),
        notes=tuple(notes),
    )


def effects_table(comparison: GroupComparison, words: Wording, name: str) -> Table:
    """Each level against the reference level and the overall mean, in units and in percent."""
    rows = []
    for effect in comparison.effects:
        is_reference = effect.level == comparison.reference_level
        rows.append(
            _ratio_only(
                words,
                effect.level + (" (reference)" if is_reference else ""),
                fmt_count(effect.n),
                words.value(effect.mean),
                "–" if is_reference else words.value(effect.difference),
                "–"
                if is_reference or effect.ci_low is None
                else words.interval(effect.ci_low, effect.ci_high),
                "–" if is_reference else _percent(effect.percent_of_reference),
                _percent(effect.percent_vs_overall),
            )
        )
    return Table(
        key=f"table-effects-{comparison.variable}",
        caption=f"Each level of {name} against {comparison.reference_level}, {_reference_phrase(comparison)}",
        header=_ratio_only(
            words,
            "Level",
            "n",
            "Mean",
            "Difference from reference",
            f"{words.level_name} interval",
            "Relative",
            "Against overall mean",
        ),
        rows=tuple(rows),
        numeric=_ratio_only(words, False, True, True, True, True, True, True),
        notes=(
            f"Overall mean {words.value(comparison.overall_mean)}. Intervals are Welch intervals of the "
            "difference, not adjusted for the number of levels.",
        ),
    )


def _reference_phrase(comparison: GroupComparison) -> str:
    """Why this level is the reference: the largest, or first by name among equally large."""
    sizes = {e.level: e.n for e in comparison.effects}
    largest = sizes.get(comparison.reference_level)
    # The fold is never the reference, so it does not count as a tie.
    tied = sum(1 for level, n in sizes.items() if n == largest and not _is_fold_label(level))
    return "the largest level" if tied <= 1 else "first by name of the equally largest levels"


def _is_fold_label(level: str) -> bool:
    return level.startswith(f"{OTHER_PREFIX} (") and level.endswith(" levels)")


def _percent(value: float | None) -> str:
    """Percent values arrive already multiplied by 100; show a sign so direction reads at once."""
    if value is None:
        return "–"
    text = fmt(value, 1)
    return (text if text.startswith("−") or text == "0.0" else f"+{text}") + "%"


def _ratio_only(words: Wording, *cells):
    """The effect columns, without the two percentages when the target has no true zero."""
    return cells if words.scale == "ratio" else cells[:-2]


def share_table(group: GroupResult, words: Wording, name: str) -> Table:
    """Per level: the share of 1s (binary target), or the mean and share of 0s (count)."""
    level = words.level_name
    summaries = {s.level: s for s in group.summaries}
    rows = []
    for share in group.shares:
        s = summaries[share.level]
        share_cells = (
            fmt_percent(share.share, 1),
            f"{fmt_percent(share.ci_low, 1)} to {fmt_percent(share.ci_high, 1)}"
            if share.ci_low is not None
            else "–",
        )
        mean_cells = (
            words.value(s.mean),
            words.mean_interval(s),
        )
        cells = share_cells if words.kind == "binary" else (*mean_cells, *share_cells)
        rows.append((share.level, fmt_count(share.n), *cells))
    if words.kind == "binary":
        header = ("Level", "n", "Share of 1s", f"{level} interval (Wilson)")
    else:
        header = (
            "Level",
            "n",
            "Mean",
            f"{level} interval",
            "Share of 0s",
            f"{level} interval (Wilson)",
        )
    notes = [] if words.kind == "binary" else no_interval_note(group.summaries, words)
    if group.rows_without_level:
        notes.append(
            f"{fmt_count(group.rows_without_level)} rows have no {name} and are not in this table."
        )
    return Table(
        key=f"table-group-{group.variable}",
        caption=f"{words.label} by {name}",
        header=header,
        rows=tuple(rows),
        numeric=(False, *([True] * (len(header) - 1))),
        notes=tuple(notes),
    )


def share_pairs_table(comparison: ProportionComparison, words: Wording, name: str) -> Table:
    """Every pair of levels: gap in percentage points, Newcombe interval, z test, Holm."""

    def points(value: float | None) -> str:
        return fmt(None if value is None else 100 * value, 1)

    rows = tuple(
        (
            f"{pair.level_a} − {pair.level_b}",
            points(pair.difference),
            f"{points(pair.ci_low)} to {points(pair.ci_high)}",
            fmt_p(pair.p_value),
            fmt_p(pair.p_holm),
        )
        for pair in comparison.pairwise
    )
    test = test_name(comparison.test)
    return Table(
        key=f"table-pairs-{comparison.variable}",
        caption=f"Differences in the share of 1s between levels of {name}",
        header=(
            "Pair (first − second)",
            "Difference (percentage points)",
            f"{words.level_name} interval (Newcombe)",
            "p",
            "p (Holm)",
        ),
        rows=rows,
        numeric=(False, True, True, True, True),
        notes=(
            f"Overall: {test} of equal shares, {p_text(comparison.p_value)}. Pairs: two-proportion "
            "z tests, adjusted by Holm's method.",
        ),
    )


def cross_cells_table(cross: CrossTable, words: Wording, names: tuple[str, str]) -> Table:
    """Every combination with n, mean, interval and median; small ones marked."""
    rows = []
    for c in cross.cells:
        rows.append(
            (
                f"{c.row} · {c.column}",
                fmt_count(c.n) + (f" {SMALL_MARK}" if c.too_small else ""),
                words.value(c.mean),
                words.mean_interval(c),
                words.value(c.median),
            )
        )
    notes = (
        [f"{SMALL_MARK} fewer than {cross.min_cell} rows: too few to trust."]
        if any(c.too_small for c in cross.cells)
        else []
    )
    notes += no_interval_note(cross.cells, words)
    return Table(
        key=f"table-cells-{cross.row_variable}-{cross.column_variable}",
        caption=f"{words.label} for each combination of {names[0]} and {names[1]}",
        header=(f"{names[0]} · {names[1]}", "n", "Mean", f"{words.level_name} interval", "Median"),
        rows=tuple(rows),
        numeric=(False, True, True, True, True),
        notes=tuple(notes),
    )


def cross_table_view(
    cross: CrossTable, words: Wording, names: tuple[str, str], transpose: bool = False
) -> Table:
    """Mean (n) per cell, with margins; small cells carry a mark and a note.

    ``transpose`` puts the first variable across instead of down, so the variable
    with fewer levels can take the columns and the table stays inside the text block.
    """
    down, across = (cross.columns, cross.rows) if transpose else (cross.rows, cross.columns)
    down_name, across_name = (names[1], names[0]) if transpose else names

    def cell(row: str | None, column: str | None):
        return cross.cell(column, row) if transpose else cross.cell(row, column)

    def shown(c, mark: str = "") -> str:
        return f"{words.value(c.mean)} ({fmt_count(c.n)}){mark}" if c else "–"

    rows = []
    for row in down:
        cells = []
        for column in across:
            c = cell(row, column)
            cells.append(shown(c, SMALL_MARK if c is not None and c.too_small else ""))
        rows.append((row, *cells, shown(cell(row, None))))
    rows.append(("All", *[shown(cell(None, column)) for column in across], shown(cross.total)))
    notes = [f"Mean {words.lower} (n) per combination; rows: {down_name}, columns: {across_name}."]
    if any(c.too_small for c in cross.cells):
        notes.append(f"{SMALL_MARK} fewer than {cross.min_cell} rows: too few to trust.")
    header = (down_name, *across, "All")
    return Table(
        key=f"table-cross-{cross.row_variable}-{cross.column_variable}",
        caption=f"Mean {words.lower} by {names[0]} and {names[1]}",
        header=header,
        rows=tuple(rows),
        numeric=(False, *[True] * (len(header) - 1)),
        notes=tuple(notes),
    )


def _part_mark(period: PeriodStats) -> str:
    if not period.partial:
        return ""
    return " (part)" if period.in_fit else " (part, not in the trend)"


def trend_table(trend: Trend, words: Wording) -> Table:
    rows = []
    for p in trend.periods:
        rows.append(
            (
                period_label(p.start, trend.period) + _part_mark(p),
                fmt_count(p.n),
                words.value(p.mean),
                words.mean_interval(p),
                words.value(p.median),
            )
        )
    notes = no_interval_note(trend.periods, words)
    if trend.gaps:
        notes.append(f"{len(trend.gaps)} {trend.period}s in the span have no rows.")
    return Table(
        key="table-trend",
        caption=f"{words.label} per {trend.period} (period starting)",
        header=("Period", "n", "Mean", f"{words.level_name} interval", "Median"),
        rows=tuple(rows),
        numeric=(False, True, True, True, True),
        notes=tuple(notes),
    )


def fits_table(stats: BriefStats, labels: dict[str, str], words: Wording) -> Table:
    rows = []
    for fit in stats.fits:
        d = decimals_for(abs(fit.slope) if fit.slope else None)
        corr = stats.correlation(fit.predictor)
        log_fit = stats.log_fit(fit.predictor)
        rows.append(
            (
                labels.get(fit.predictor, fit.predictor),
                fmt_count(fit.n),
                fmt(fit.slope, d),
                fmt_interval(fit.slope_ci_low, fit.slope_ci_high, d),
                fmt(fit.r_squared, 2) if fit.r_squared is not None else "–",
                fmt(corr.pearson_r, 2) if corr and corr.pearson_r is not None else "–",
                fmt(corr.spearman_rho, 2) if corr and corr.spearman_rho is not None else "–",
                f"{fmt(log_fit.percent_change_per_unit, 1)}%" if log_fit else "–",
            )
        )
    notes = [
        "Slope: change in the target per unit of the predictor (least squares). ρ: Spearman rank correlation."
    ]
    if stats.log_fits is not None and not isinstance(stats.log_fits, tuple):
        notes.append(f"No log-scale fit: {stats.log_fits.reason}")
    elif stats.log_fits:
        notes.append("% per unit: relative change per unit from a fit on the log of the target.")
    return Table(
        key="table-fits",
        caption=f"Straight-line fits of {words.lower}",
        header=(
            "Predictor",
            "n",
            "Slope",
            f"{words.level_name} interval",
            "R²",
            "Pearson r",
            "ρ",
            "% per unit",
        ),
        rows=tuple(rows),
        numeric=(False, True, True, True, True, True, True, True),
        notes=tuple(notes),
    )


def slopes_table(stats: BriefStats, labels: dict[str, str], names: dict[str, str]) -> Table:
    rows = []
    for s in stats.slopes_by_group:
        slopes = [lv.slope for lv in s.levels if lv.slope is not None]
        d = decimals_for(max(abs(v) for v in slopes) if slopes else None)
        rows.append(
            (
                f"{labels.get(s.predictor, s.predictor)} by {names.get(s.group, s.group)}",
                f"{fmt(min(slopes), d)} to {fmt(max(slopes), d)}" if slopes else "–",
                fmt(s.f_statistic, 2) if s.f_statistic is not None else "–",
                f"{s.df_between}, {fmt_count(s.df_within)}" if s.df_between is not None else "–",
                fmt_p(s.p_value),
            )
        )
    return Table(
        key="table-slopes",
        caption="Does the slope differ between groups?",
        header=("Slope of", "Range of level slopes", "F", "df", "p"),
        rows=tuple(rows),
        numeric=(False, True, True, True, True),
        notes=(
            "F test of separate lines per level against parallel lines; small p: the slopes differ.",
        ),
    )


def accounting_table(
    stats: BriefStats, labels: dict[str, str], names: dict[str, str] | None = None
) -> Table:
    """Where every row went; ``labels`` names predictors and ``names`` groups, as configured."""
    acc = stats.accounting
    names = names or {}
    rows = []
    if acc.covers is not None:
        # The rows where and window left out are a choice, not a loss: shares of the source.
        rows.append(("Rows in the source", fmt_count(acc.rows_in_source), ""))
        rows += [
            (f"Left out of {d.analysis}: {d.reason}", fmt_count(d.rows), "") for d in acc.selection
        ]
    label = "Rows the brief covers" if acc.covers is not None else "Rows read"
    rows.append((label, fmt_count(acc.rows_read), fmt_percent(1.0)))

    def share(n: int) -> str:
        return fmt_percent(n / acc.rows_read, 1) if acc.rows_read else "–"

    for name, n in acc.used.items():
        kind, _, what = name.partition(":")
        title = {
            "target": "Used: overall summary",
            "group": f"Used: comparison by {names.get(what, what)}",
            "fit": f"Used: relationship with {labels.get(what, what)}",
            "cross": "Used: table of "
            + " × ".join(names.get(part, part) for part in what.split(" × ")),
            "trend": "Used: trend over time",
        }[kind]
        rows.append((title, fmt_count(n), share(n)))
    rows += [
        (
            f"Left out of {labelled_analysis(d.analysis, names | labels)}: {d.reason}",
            fmt_count(d.rows),
            share(d.rows),
        )
        for d in acc.dropped
    ]
    missing = [f"{column} {fmt_count(n)}" for column, n in acc.missing_by_column.items() if n]
    notes = [
        "Empty cells per column: " + ", ".join(missing) + "."
        if missing
        else "No column has empty cells."
    ]
    return Table(
        key="table-rows",
        caption="Where every row went",
        header=("", "Rows", "Share"),
        rows=tuple(rows),
        numeric=(False, True, True),
        notes=tuple(notes),
    )
