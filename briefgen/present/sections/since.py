"""Since the last brief: the comparison's sentences, its table and page 1's column notice.

Every sentence says a number then and now and, for an estimate, the interval of its
change and the verdict: "beyond normal variation" only when that interval leaves out
zero, else "within normal variation". Counts (rows read) are stated, not tested.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from briefgen.config import BriefSpec
from briefgen.history.change import ColumnChange, KeyChange, SinceLastTime, beyond_normal
from briefgen.numbers import fmt_count, fmt_interval, fmt_level, fmt_percent
from briefgen.present.wording import (
    Wording,
    listed,
    name_for,
    points_text,
    share_text,
    signed,
    widened_level,
)
from briefgen.stats.periods import period_label
from briefgen.tables import Table

BEYOND = "beyond normal variation"
WITHIN = "within normal variation"
NOT_TESTED = "not tested"


@dataclass(frozen=True, slots=True)
class SinceSection:
    """The comparison as the reader meets it: a heading, a few sentences, one table."""

    heading: str
    lines: tuple[str, ...]
    table: Table | None


def verdict(change: KeyChange) -> str:
    return NOT_TESTED if change.beyond is None else BEYOND if change.beyond else WITHIN


def _value(change: KeyChange, value: float, words: Wording) -> str:
    return share_text(value) if change.measure == "share" else words.value(value)


def _difference(change: KeyChange, words: Wording) -> str:
    if change.measure == "share":
        return f"{points_text(change.difference)} percentage points"
    if change.difference == 0:
        return words.value(0.0)  # no sign on no change
    return signed(change.difference, words)


def _interval(change: KeyChange, words: Wording) -> str:
    if change.ci_low is None or change.ci_high is None:
        return "–"
    if change.measure == "share":
        return fmt_interval(100 * change.ci_low, 100 * change.ci_high, 1, sign=True) + " points"
    return fmt_interval(change.ci_low, change.ci_high, words.unit_decimals, sign=True)


def _judged(change: KeyChange, words: Wording, level: str) -> str:
    """'a change of +0.5 (99% interval −0.3 to +1.3): within normal variation'."""
    if change.beyond is None:
        return (
            f"a change of {_difference(change, words)}, not tested: too few rows or no spread "
            "for an interval"
        )
    return (
        f"a change of {_difference(change, words)} ({level} interval {_interval(change, words)}): "
        f"{verdict(change)}"
    )


def _label(change: KeyChange, spec: BriefSpec, period: str | None) -> str:
    if change.key == "overall":
        return "All rows"
    if change.key == "trend":
        return f"Latest {period} ({_named(change.period_now, period)})"
    return f"{name_for(spec, change.variable or '')}: {change.level}"


def column_notice(since: SinceLastTime | None) -> str | None:
    """Page 1's sentence on columns added, dropped or retyped since the last brief."""
    if since is None or not since.columns:
        return None
    parts = []
    for kind, verb in (("added", "added"), ("dropped", "dropped")):
        names = tuple(c.column for c in since.columns if c.change == kind)
        if names:
            parts.append(f"{verb} {listed(names)}")
    parts += [_retyped(c) for c in since.columns if c.change == "retyped"]
    when = f" (built {since.previous_built_on})" if since.previous_built_on else ""
    return f"The data's columns changed since the last brief{when}: {'; '.join(parts)}."


def _retyped(column: ColumnChange) -> str:
    return f"{column.column} was {column.type_then}, now {column.type_now}"


def _rows_line(rows: KeyChange) -> str:
    if rows.n_now == rows.n_then:
        return f"Rows read: {fmt_count(rows.n_now)}, as then."
    change = fmt_percent(rows.difference / rows.n_then, 1) if rows.n_then else "–"
    change = change if change.startswith(("−", "–")) else f"+{change}"
    return f"Rows read: {fmt_count(rows.n_now)} now, {fmt_count(rows.n_then)} then ({change})."


def _overall_line(change: KeyChange, words: Wording, level: str) -> str:
    what = "Share" if change.measure == "share" else "Mean"
    return (
        f"{what} of {words.lower} over all rows: {_value(change, change.value_now, words)} now, "
        f"{_value(change, change.value_then, words)} then, {_judged(change, words, level)}."
    )


def _named(start: str | None, period: str) -> str:
    return period_label(dt.date.fromisoformat(start), period) if start else "–"


def _trend_line(change: KeyChange, words: Wording, period: str, level: str) -> str:
    what = "share" if change.measure == "share" else "mean"
    now = f"{_value(change, change.value_now, words)} now"
    if change.period_now == change.period_then:
        when = (
            f"Latest {period} ({_named(change.period_now, period)}, the same {period} as then, "
            f"now {fmt_count(change.n_now)} rows, then {fmt_count(change.n_then)})"
        )
        then = f"{_value(change, change.value_then, words)} then"
    else:
        when = f"Latest {period} ({_named(change.period_now, period)})"
        then = (
            f"{_value(change, change.value_then, words)} in the latest {period} then "
            f"({_named(change.period_then, period)})"
        )
    return f"{when}: {what} {now}, {then}, {_judged(change, words, level)}."


def _levels_line(changes: tuple[KeyChange, ...], words: Wording, spec: BriefSpec) -> str | None:
    levels = [c for c in changes if c.key.startswith("group-") and c.beyond is not None]
    if not levels:
        return None
    moved = beyond_normal(levels)
    if not moved:
        names = tuple(dict.fromkeys(name_for(spec, c.variable or "") for c in levels))
        return (
            f"No level of {listed(names)} moved beyond normal variation "
            f"({fmt_count(len(levels))} levels compared)."
        )
    parts = [
        f"{c.level} ({name_for(spec, c.variable or '')}, {_difference(c, words)}, "
        f"interval {_interval(c, words)})"
        for c in moved
    ]
    return f"Beyond normal variation: {'; '.join(parts)}; every other level compared is within it."


def _method_line(since: SinceLastTime, binary: bool) -> str | None:
    count = len(since.tested)
    if count == 0:
        return None
    how = "Newcombe's hybrid score interval" if binary else "Welch's interval"
    level = fmt_level(since.confidence)
    together = (
        f"The {count} intervals hold together at {level}: each is a "
        f"{widened_level(since.adjusted_confidence)} interval (Bonferroni)."
        if count > 1
        else f"The interval is at {level}."
    )
    return (
        f"{together} A change is beyond normal variation when the interval of the difference "
        f"({how} from each run's n, mean and spread) leaves out zero. The two runs' rows are "
        "taken as separate samples; when the data grew by adding rows they share most of "
        "them, which makes the intervals wider than they need be."
    )


def _context_lines(since: SinceLastTime) -> list[str]:
    source = f" ({since.previous})"
    when = f" built on {since.previous_built_on}" if since.previous_built_on else ""
    lines = [f"Compared with the brief{when}{source}."]
    if since.same_data:
        lines.append("The data file is byte for byte the one it used (same SHA-256).")
    if since.config_changes:
        keys = listed(tuple(since.config_changes))
        lines.append(
            f"The config then differed in {keys}, so a number may differ for that reason "
            "as well as the data's."
        )
    if not since.columns_recorded:
        lines.append(
            "The last brief did not record its columns, so added, dropped or retyped "
            "columns cannot be said."
        )
    elif not since.columns:
        lines.append("The data have the same columns as then, each of the same kind.")
    else:
        lines.append(column_notice(since) or "")
    return lines


def since_table(since: SinceLastTime, words: Wording, spec: BriefSpec, period: str) -> Table:
    rows = []
    if since.rows is not None:
        r = since.rows
        rows.append(
            ("Rows read", fmt_count(r.n_then), fmt_count(r.n_now), f"{r.difference:+,}".replace("-", "−"), "–", NOT_TESTED)
        )  # fmt: skip
    for c in since.changes:
        rows.append(
            (
                _label(c, spec, period),
                _value(c, c.value_then, words),
                _value(c, c.value_now, words),
                _difference(c, words).removesuffix(" percentage points"),
                _interval(c, words).removesuffix(" points"),
                verdict(c),
            )
        )
    binary = any(c.measure == "share" for c in since.changes)
    unit = " (percentage points)" if binary else ""
    notes = ["Rows read is a count, stated and not tested."]
    if any(c.key == "trend" for c in since.changes):
        notes.append("Latest period: this run's last period against the last run's last period.")
    return Table(
        key="table-since",
        caption=f"{words.label}: the key numbers then and now",
        header=(
            "Number",
            "Then",
            "Now",
            f"Change{unit}",
            f"{widened_level(since.adjusted_confidence)} interval",
            "Verdict",
        ),
        rows=tuple(rows),
        numeric=(False, True, True, True, True, False),
        notes=tuple(notes),
    )


def since_section(
    since: SinceLastTime, words: Wording, spec: BriefSpec, period: str | None
) -> SinceSection:
    """The section: one line when no comparison could be made, else sentences and a table."""
    heading = "Since the last brief"
    if since.unavailable is not None:
        return SinceSection(
            heading, (f"No comparison with an earlier brief: {since.unavailable}.",), None
        )
    unit = period or "period"
    lines = _context_lines(since)
    lines += [_rows_line(since.rows)] if since.rows is not None else []
    level = widened_level(since.adjusted_confidence)
    lines += [_overall_line(c, words, level) for c in since.changes if c.key == "overall"]
    lines += [_trend_line(c, words, unit, level) for c in since.changes if c.key == "trend"]
    lines += [line] if (line := _levels_line(since.changes, words, spec)) else []
    binary = any(c.measure == "share" for c in since.changes)
    lines += [line] if (line := _method_line(since, binary)) else []
    return SinceSection(heading, tuple(lines), since_table(since, words, spec, unit))
