"""Since last time: the key numbers then and now, and whether each change is beyond normal variation.

Key numbers, chosen for a manager: the rows read (a count, stated, not tested), the
overall mean (for a 0/1 target the share of 1s), each shown level's mean of every
group both runs compare, and the latest period of the trend. A change is called beyond
normal variation only when the interval of the difference excludes zero:

- means: Welch's interval from the stored n, mean and sd of each run (Welch 1947; the
  same ``welch_pair`` the group comparisons use, checked against
  scipy.stats.ttest_ind_from_stats with ``equal_var=False`` in tests/test_history_change.py);
- shares: Newcombe's (1998) hybrid score interval, as for every share gap in the brief,
  since a Welch interval on 0/1 values misbehaves near 0% and 100%.

All intervals of one comparison are a family: each is at 1 − (1 − confidence)/m for m
numbers (Bonferroni, Dunn 1961), so they all hold together at the brief's confidence.
Bonferroni rather than Holm because the verdict is read off the interval shown, and
Holm's step-down has adjusted p-values but no matching intervals.

The two runs' rows are treated as independent samples. When the data grew by adding
rows, the runs share most of them and the true variation of the difference is smaller,
so the intervals are wider than need be: "beyond normal variation" errs towards caution.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from briefgen.history.previous import PreviousRun, value_at
from briefgen.history.record import RunRecord
from briefgen.stats import BriefStats
from briefgen.stats.core.summary import Summary
from briefgen.stats.proportions import newcombe_interval
from briefgen.stats.welch import welch_pair

# Config keys that change what the numbers mean; a change in output or delivery does not.
NUMBER_KEYS = (
    "data",
    "target",
    "groups",
    "predictors",
    "time",
    "cross",
    "target_kind",
    "scale",
    "confidence",
    "max_levels",
    "log_target",
)


@dataclass(frozen=True, slots=True)
class ColumnChange:
    """A column added, dropped or retyped (its kind changed) since the previous run."""

    column: str
    change: str
    type_then: str | None
    type_now: str | None


@dataclass(frozen=True, slots=True)
class KeyChange:
    """One key number then and now, the interval of its change and the verdict.

    ``measure`` is ``mean`` or ``share`` (a proportion, 0–1) or ``rows`` (a count, no
    interval). ``beyond`` is None when no interval could be formed (n < 2 or no spread).
    """

    key: str
    measure: str
    variable: str | None
    level: str | None
    period_then: str | None
    period_now: str | None
    n_then: int
    value_then: float
    n_now: int
    value_now: float
    difference: float
    ci_low: float | None
    ci_high: float | None
    beyond: bool | None


@dataclass(frozen=True, slots=True)
class SinceLastTime:
    """The comparison with the previous run, or why none was made (``unavailable``)."""

    previous: str
    previous_built_on: str | None
    unavailable: str | None
    same_data: bool | None
    config_changes: tuple[str, ...]
    columns_recorded: bool
    columns: tuple[ColumnChange, ...]
    rows: KeyChange | None
    changes: tuple[KeyChange, ...]
    method: str
    confidence: float
    adjusted_confidence: float

    @property
    def tested(self) -> tuple[KeyChange, ...]:
        return tuple(c for c in self.changes if c.beyond is not None)


def _number(value: object) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    return float(value) if math.isfinite(value) else None


def _count(value: object) -> int | None:
    return value if isinstance(value, int) and not isinstance(value, bool) and value >= 0 else None


@dataclass(frozen=True, slots=True)
class _Point:
    """One key number in one run: n and mean (and its anchor), or n and events."""

    n: int
    mean: float
    sd: float | None = None
    median: float | None = None
    mean_shift: float | None = None
    events: int | None = None

    def summary(self) -> Summary:
        return Summary(
            "", self.n, self.n, 0, self.mean, self.sd, None, None, None, None,
            self.median, None, None, self.mean_shift,
        )  # fmt: skip


def _stored_point(item: object, binary: bool) -> _Point | None:
    n, mean = _count(value_at(item, "n")), _number(value_at(item, "mean"))
    if binary:
        events = _count(value_at(item, "events"))
        share = _number(value_at(item, "share"))
        if events is None and n is not None and mean is not None:
            events = round(mean * n)  # a trend period stores the share as its mean
        if n is None or n == 0 or events is None or events > n:
            return None
        return _Point(n, share if share is not None else events / n, events=events)
    if n is None or n == 0 or mean is None:
        return None
    return _Point(
        n,
        mean,
        _number(value_at(item, "sd")),
        _number(value_at(item, "median")),
        _number(value_at(item, "mean_shift")),
    )


def _point(n: int, mean: float | None, sd=None, median=None, shift=None, events=None):
    if n == 0 or mean is None:
        return None
    return _Point(n, mean, sd, median, shift, events)


def _interval(
    now: _Point, then: _Point, confidence: float
) -> tuple[float, float | None, float | None]:
    """(now − then, low, high); the bounds are None when no interval can be formed."""
    if now.events is not None and then.events is not None:
        return newcombe_interval(now.events, now.n, then.events, then.n, confidence)
    if now.n < 2 or then.n < 2 or now.sd is None or then.sd is None:
        return now.mean - then.mean, None, None
    pair = welch_pair(now.summary(), then.summary(), confidence)
    return pair.difference, pair.ci_low, pair.ci_high


@dataclass(frozen=True, slots=True)
class _Pair:
    key: str
    variable: str | None
    level: str | None
    period_then: str | None
    period_now: str | None
    then: _Point
    now: _Point


def _overall_pair(stats: BriefStats, old: dict, binary: bool) -> list[_Pair]:
    if binary and stats.overall_share is not None:
        share = stats.overall_share
        now = _point(share.n, share.share, events=share.events)
        then = _stored_point(value_at(old, "stats", "overall_share"), True)
    else:
        o = stats.overall
        now = _point(o.n, o.mean, o.sd, o.median, o.mean_shift)
        then = _stored_point(value_at(old, "stats", "overall"), False)
    return [_Pair("overall", None, None, None, None, then, now)] if now and then else []


def _level_pairs(stats: BriefStats, old: dict, binary: bool) -> list[_Pair]:
    pairs = []
    stored = {
        g.get("variable"): g for g in value_at(old, "stats", "groups") or [] if isinstance(g, dict)
    }
    for group in stats.groups:
        before = stored.get(group.variable)
        if before is None:
            continue
        field = "shares" if binary else "summaries"
        then_items = {value_at(i, "level"): i for i in value_at(before, field) or []}
        # The fold holds different levels from run to run; it is never compared.
        folds = {group.shown.other_label, value_at(before, "shown", "other_label")} - {None}
        if binary:
            nows = [(s.level, _point(s.n, s.share, events=s.events)) for s in group.shares]
        else:
            nows = [
                (s.level, _point(s.n, s.mean, s.sd, s.median, s.mean_shift))
                for s in group.summaries
            ]
        for level, now in nows:
            then = _stored_point(then_items.get(level), binary)
            if level not in folds and now and then:
                pairs.append(
                    _Pair(f"group-{group.variable}", group.variable, level, None, None, then, now)
                )
    return pairs


def _trend_pair(stats: BriefStats, old: dict, binary: bool) -> list[_Pair]:
    trend = stats.trend
    if (
        trend is None
        or not trend.periods
        or value_at(old, "stats", "trend", "period") != trend.period
    ):
        return []
    last = trend.periods[-1]
    before = value_at(old, "stats", "trend", "periods", -1)
    events = round(last.mean * last.n) if binary and last.mean is not None else None
    now = _point(last.n, last.mean, last.sd, last.median, last.mean_shift, events)
    then = _stored_point(before, binary)
    start = value_at(before, "start")
    if not (now and then and isinstance(start, str)):
        return []
    return [_Pair("trend", None, None, start, last.start.isoformat(), then, now)]


def _column_changes(record: RunRecord, old: dict) -> tuple[bool, tuple[ColumnChange, ...]]:
    stored = value_at(old, "made_from", "schema")
    if not isinstance(stored, list):
        return False, ()
    then = {c["name"]: c for c in stored if isinstance(value_at(c, "name"), str)}
    now = {c.name: c for c in record.schema}
    changes = [ColumnChange(n, "added", None, now[n].kind) for n in now if n not in then]
    changes += [
        ColumnChange(n, "dropped", value_at(then[n], "kind"), None) for n in then if n not in now
    ]
    changes += [
        ColumnChange(n, "retyped", value_at(then[n], "kind"), now[n].kind)
        for n in now
        if n in then and value_at(then[n], "kind") != now[n].kind
    ]
    return True, tuple(changes)


def _config_changes(record: RunRecord, old: dict) -> tuple[str, ...]:
    stored = value_at(old, "made_from", "config")
    if not isinstance(stored, dict):
        return ()
    return tuple(k for k in NUMBER_KEYS if k in stored and stored[k] != record.config.get(k))


def _unavailable(previous: PreviousRun, reason: str, confidence: float, built_on=None):
    return SinceLastTime(
        previous.source, built_on, reason, None, (), False, (), None, (), "bonferroni",
        confidence, confidence,
    )  # fmt: skip


def _unmatched(stats: BriefStats, old: dict) -> str | None:
    """Why the previous run's numbers cannot be set beside these, or None."""
    if old["target"] != stats.target:
        return f"the last brief was about {old['target']}, this one is about {stats.target}"
    kind_then = value_at(old, "stats", "target_kind", "kind") or "continuous"
    kind_now = stats.target_kind.kind if stats.target_kind else "continuous"
    if kind_then != kind_now:
        return f"the last brief read the target as {kind_then}, this one as {kind_now}"
    return None


def compare_runs(stats: BriefStats, record: RunRecord, previous: PreviousRun) -> SinceLastTime:
    """The key numbers of this run beside the previous run's, with Bonferroni-adjusted intervals.

    A stats.json edited into a shape briefgen never writes is a reason, like a missing one.
    """
    try:
        return _compare(stats, record, previous)
    except (TypeError, ValueError, AttributeError, KeyError):
        reason = f"{previous.source} holds values briefgen does not write there"
        return _unavailable(previous, reason, stats.confidence)


def _compare(stats: BriefStats, record: RunRecord, previous: PreviousRun) -> SinceLastTime:
    confidence = stats.confidence
    old = previous.stats
    if old is None:
        return _unavailable(previous, previous.reason or "no earlier brief", confidence)
    built_on = value_at(old, "built_on") if isinstance(value_at(old, "built_on"), str) else None
    reason = _unmatched(stats, old)
    if reason is not None:
        return _unavailable(previous, reason, confidence, built_on)
    binary = stats.target_kind is not None and stats.target_kind.kind == "binary"
    pairs = _overall_pair(stats, old, binary) + _trend_pair(stats, old, binary)
    pairs += _level_pairs(stats, old, binary)
    testable = [p for p in pairs if _interval(p.now, p.then, confidence)[1] is not None]
    adjusted = 1 - (1 - confidence) / max(len(testable), 1)
    changes = tuple(_change(p, adjusted, binary) for p in pairs)
    rows_then = _count(value_at(old, "stats", "accounting", "rows_read"))
    rows = None
    if rows_then is not None:
        rows_now = stats.accounting.rows_read
        rows = KeyChange(
            "rows", "rows", None, None, None, None, rows_then, rows_then, rows_now, rows_now,
            rows_now - rows_then, None, None, None,
        )  # fmt: skip
    sha_then = value_at(old, "made_from", "data", "sha256")
    same = None if not isinstance(sha_then, str) else sha_then == record.data.sha256
    recorded, columns = _column_changes(record, old)
    return SinceLastTime(
        previous.source, built_on, None, same, _config_changes(record, old), recorded, columns,
        rows, changes, "bonferroni", confidence, adjusted,
    )  # fmt: skip


def _change(pair: _Pair, confidence: float, binary: bool) -> KeyChange:
    difference, low, high = _interval(pair.now, pair.then, confidence)
    beyond = None if low is None or high is None else (low > 0 or high < 0)
    return KeyChange(
        pair.key, "share" if binary else "mean", pair.variable, pair.level, pair.period_then,
        pair.period_now, pair.then.n, pair.then.mean, pair.now.n, pair.now.mean, difference,
        low, high, beyond,
    )  # fmt: skip


def beyond_normal(changes: Sequence[KeyChange]) -> tuple[KeyChange, ...]:
    return tuple(c for c in changes if c.beyond)
