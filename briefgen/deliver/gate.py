"""The publish gate: hold a brief whose data look wrong against the last run and the config's limits.

A nightly run that would mail a brief built on a half-loaded table is the failure this
prevents. The checks (config ``checks``) are: rows read within a ratio of the last
run's, no column of the last run gone or now empty in every row, and the share of rows
without a target value under a limit. A check that needs the last run and has none
is not run, and says so: a first run is not held for having no history.
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.config import ChecksSpec
from briefgen.history.previous import PreviousRun, value_at
from briefgen.numbers import fmt, fmt_count, fmt_percent
from briefgen.stats import BriefStats


@dataclass(frozen=True, slots=True)
class Check:
    """One check of the gate: its config key, limit, the measured value and the outcome.

    ``passed`` is None when the check could not run (no previous run to compare with).
    ``value`` is a ratio or a share (0–1); for ``columns_kept`` the number of columns lost.
    """

    name: str
    limit: float | None
    value: float | None
    passed: bool | None
    sentence: str


@dataclass(frozen=True, slots=True)
class GateResult:
    """Every configured check; ``passed`` is false, and the brief held, when any failed."""

    baseline: str | None
    passed: bool
    checks: tuple[Check, ...]

    @property
    def failures(self) -> tuple[Check, ...]:
        return tuple(check for check in self.checks if check.passed is False)


def _ratio_checks(spec: ChecksSpec, rows: int, previous: PreviousRun) -> list[Check]:
    limits = [
        ("min_rows_ratio", spec.min_rows_ratio, lambda r, lim: r >= lim, "below"),
        ("max_rows_ratio", spec.max_rows_ratio, lambda r, lim: r <= lim, "above"),
    ]
    limits = [item for item in limits if item[1] is not None]
    if not limits:
        return []
    stored = value_at(previous.stats, "stats", "accounting", "rows_read")
    if not isinstance(stored, int) or isinstance(stored, bool) or stored <= 0:
        why = previous.reason or "the last run recorded no row count"
        return [
            Check(name, limit, None, None, f"Rows not compared with the last run: {why}.")
            for name, limit, _, _ in limits
        ]
    ratio = rows / stored
    checks = []
    for name, limit, ok, side in limits:
        passed = ok(ratio, limit)
        verdict = "within" if passed else f"{side}"
        checks.append(
            Check(
                name,
                limit,
                ratio,
                passed,
                f"Rows read: {fmt_count(rows)}, {fmt(ratio, 2)} times the last run's "
                f"{fmt_count(stored)}; {verdict} the limit checks.{name}: {fmt(limit, 2)}.",
            )
        )
    return checks


def lost_columns(stats: BriefStats, previous: PreviousRun) -> list[str] | None:
    """Columns the last run had with values that are now gone or empty in every row."""
    then_missing = value_at(previous.stats, "stats", "accounting", "missing_by_column")
    then_rows = value_at(previous.stats, "stats", "accounting", "rows_read")
    if not isinstance(then_missing, dict) or not isinstance(then_rows, int):
        return None
    now = stats.accounting
    lost = []
    for column, missing in then_missing.items():
        had_values = isinstance(missing, int) and missing < then_rows
        if column not in now.missing_by_column:
            lost.append(f"{column} (gone)")
        elif had_values and now.rows_read and now.missing_by_column[column] == now.rows_read:
            lost.append(f"{column} (empty in every row)")
    return lost


def _columns_check(stats: BriefStats, previous: PreviousRun) -> Check:
    lost = lost_columns(stats, previous)
    if lost is None:
        why = previous.reason or "the last run recorded no columns"
        return Check("columns_kept", None, None, None, f"Columns not compared: {why}.")
    if not lost:
        return Check(
            "columns_kept", None, 0.0, True, "Every column of the last run still has values."
        )
    return Check(
        "columns_kept",
        None,
        float(len(lost)),
        False,
        f"Columns of the last run now missing: {', '.join(lost)}.",
    )


def _missing_check(limit: float, stats: BriefStats) -> Check:
    accounting = stats.accounting
    missing = accounting.target_missing + accounting.target_not_finite
    share = missing / accounting.rows_read if accounting.rows_read else 1.0
    passed = share <= limit
    return Check(
        "max_target_missing",
        limit,
        share,
        passed,
        f"Rows without a target value: {fmt_count(missing)} of {fmt_count(accounting.rows_read)} "
        f"({fmt_percent(share, 1)}); {'within' if passed else 'above'} the limit "
        f"checks.max_target_missing: {fmt_percent(limit, 1)}.",
    )


def run_checks(spec: ChecksSpec, stats: BriefStats, previous: PreviousRun) -> GateResult:
    """Every check the config sets, against this run's results and the last run's stats.json."""
    checks = _ratio_checks(spec, stats.accounting.rows_read, previous)
    if spec.columns_kept:
        checks.append(_columns_check(stats, previous))
    if spec.max_target_missing is not None:
        checks.append(_missing_check(spec.max_target_missing, stats))
    baseline = previous.source if previous.stats is not None else None
    return GateResult(baseline, all(c.passed is not False for c in checks), tuple(checks))
