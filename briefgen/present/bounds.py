"""A mean's interval as the brief shows it: cut at 0 for a target that cannot be negative.

The Student t interval of a small group of counts can reach below 0 ("0.73, −0.17 to
1.63" doctor visits), a value the target cannot take; and a level whose values are all
equal has sd 0 and a zero-width interval ("0.00 to 0.00") that reads as certainty. Every
sentence, table and chart that shows a mean's interval goes through ``shown_interval``,
so they agree. stats.json keeps the Student t bounds as computed; its top-level
``interval_floor`` says where the brief cut them.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Protocol

from briefgen.numbers import fmt
from briefgen.stats import BriefStats

FLOOR = 0.0


class HasInterval(Protocol):
    """A summary with a Student t interval of its mean (Summary, CrossCell, PeriodStats)."""

    n: int
    sd: float | None
    ci_low: float | None
    ci_high: float | None


def interval_floor(stats: BriefStats) -> float | None:
    """0 when the data show the target cannot be negative, else None (nothing is cut).

    The data show it when no value is below 0 (the overall minimum), as for counts and
    amounts. A config that sets ``scale: interval`` says 0 is no true zero (°C that
    happen to be positive), so a mean could be negative and nothing is cut. A 0/1 target
    shows Wilson intervals of shares, which never leave 0 to 1: nothing to cut.
    """
    kind = stats.target_kind
    if kind is not None and (kind.scale != "ratio" or kind.kind == "binary"):
        return None
    low = stats.overall.min
    return FLOOR if low is not None and low >= FLOOR else None


def shown_interval(summary: HasInterval, floor: float | None) -> tuple[float, float] | None:
    """(low, high) of a mean's interval as shown, or None when there is none to show.

    None with fewer than two values (no interval) or when every value is equal (sd 0: no
    spread to estimate one from, and "0.00 to 0.00" would read as certainty).
    """
    low, high = summary.ci_low, summary.ci_high
    if low is None or high is None or summary.sd is None or summary.sd == 0:
        return None
    if floor is None:
        return low, high
    # Truncating a confidence interval to the parameter space keeps its coverage: the true
    # mean lies in the space, so the cut interval holds it exactly when the uncut one does
    # (Mandelkern 2002, "Setting confidence intervals for bounded parameters", Statistical
    # Science 17(2); cited from memory). Common practice for means of counts and amounts.
    return max(low, floor), max(high, floor)


def drawn_interval(summary: HasInterval, mean: float, floor: float | None) -> tuple[float, float]:
    """(low, high) for a chart: the shown interval, or a bare point at the mean without one."""
    return shown_interval(summary, floor) or (mean, mean)


def cut_note(summaries: Iterable[HasInterval], floor: float | None) -> str:
    """A caption's sentence when some interval was cut at the floor, else ""."""
    if floor is None:
        return ""
    cut = any(shown_interval(s, None) is not None and s.ci_low < floor for s in summaries)
    return (
        f" Intervals stop at {fmt(floor, 0)}, the lowest value the target can take." if cut else ""
    )
