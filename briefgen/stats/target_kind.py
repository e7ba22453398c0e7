"""What kind of measure the target is, decided once, in the engine, before any analysis.

The kind decides the summaries a reader sees. A 0/1 outcome is read as a share
(percent, Wilson intervals, gaps in percentage points), never as a mean with a t
interval, a median or outliers. A count that is mostly zero is read by its
means and its share of zeros, since medians tie at 0. The scale decides whether
percentages of the target mean anything: only on a ratio scale, one with a true
zero (a temperature in °C has none, so "252% warmer" is meaningless).

One aggregate query counts what the rules need (values, zeros, ones, values that
are not whole numbers, negative values); the config keys ``target_kind`` and
``scale`` override the rules, and an override the values contradict is a config
error naming the key.
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.errors import ConfigError
from briefgen.stats.core.analysis import one_row

# Common practice, no published source: a count with at least a quarter zeros has a median
# at or near 0 in many groups, so medians stop telling levels apart.
ZERO_HEAVY = 0.25
KINDS = ("continuous", "binary", "count")
SCALES = ("ratio", "interval")


@dataclass(frozen=True, slots=True)
class ValueCounts:
    """What one query learnt about the target's non-missing values."""

    n: int
    zeros: int
    ones: int
    non_integers: int
    negatives: int

    @property
    def share_of_zeros(self) -> float | None:
        return self.zeros / self.n if self.n else None


@dataclass(frozen=True, slots=True)
class TargetKind:
    """The kind and scale of the target, and why.

    ``kind`` is ``continuous``, ``binary`` (every value 0 or 1) or ``count``
    (non-negative whole numbers with at least ``ZERO_HEAVY`` zeros); ``detected``
    is what the rules alone chose, ``kind`` what the brief uses (the config's
    ``target_kind`` when set). ``scale`` is ``ratio`` (a true zero: percentages of
    the target are written) or ``interval`` (none: they are not). ``kind_reason``
    and ``scale_reason`` say why, in a phrase. The counts are over non-missing
    target values.
    """

    kind: str
    detected: str
    kind_reason: str
    scale: str
    scale_reason: str
    n: int
    zeros: int
    ones: int
    non_integers: int
    negatives: int
    zero_heavy_threshold: float = ZERO_HEAVY

    @property
    def share_of_zeros(self) -> float | None:
        return self.zeros / self.n if self.n else None


def count_values(frame) -> ValueCounts:
    """One aggregate query over the frame's ``y``: the counts every rule reads."""
    y = frame.table.y
    row = one_row(
        frame.table,
        {
            "n": y.count(),
            "zeros": (y == 0).sum(),
            "ones": (y == 1).sum(),
            # fmod is exact in IEEE arithmetic, so this holds at any magnitude.
            "non_integers": (y % 1.0 != 0).sum(),
            "negatives": (y < 0).sum(),
        },
    )
    return ValueCounts(
        *(int(row[k] or 0) for k in ("n", "zeros", "ones", "non_integers", "negatives"))
    )


def detect(counts: ValueCounts) -> tuple[str, str]:
    """The kind the values suggest, and why, in a phrase."""
    if counts.n and counts.zeros + counts.ones == counts.n and counts.zeros and counts.ones:
        return "binary", "every value is 0 or 1, and both occur"
    zeros = counts.share_of_zeros or 0.0
    if counts.n and not counts.non_integers and not counts.negatives and zeros >= ZERO_HEAVY:
        return "count", (
            f"every value is a whole number of 0 or more and {100 * zeros:.0f}% are 0 "
            f"(at least {100 * ZERO_HEAVY:.0f}%)"
        )
    return "continuous", "the values are neither 0/1 nor a count with many zeros"


def _check_override(kind: str, counts: ValueCounts, target: str) -> None:
    """Refuse a configured kind that the values contradict, naming the key."""
    if kind == "binary" and counts.zeros + counts.ones != counts.n:
        other = counts.n - counts.zeros - counts.ones
        raise ConfigError(
            f"config key 'target_kind' is binary, but {other:,} of the {counts.n:,} values of "
            f"'{target}' are neither 0 nor 1; recode the column to 0/1 or set target_kind: auto."
        )
    if kind == "count" and (counts.non_integers or counts.negatives):
        raise ConfigError(
            f"config key 'target_kind' is count, but '{target}' has "
            f"{counts.non_integers:,} values that are not whole numbers and "
            f"{counts.negatives:,} below 0; set target_kind: continuous or auto."
        )


def _scale(kind: str, configured: str, counts: ValueCounts) -> tuple[str, str]:
    if configured != "auto":
        return configured, "set in the config (scale)"
    if kind in ("binary", "count"):
        return "ratio", f"a {kind} target has a true zero"
    if counts.negatives:
        return "interval", (
            f"{counts.negatives:,} values are below 0, so 0 is not a true zero and percentages "
            "of the target would mislead"
        )
    return "ratio", "no value is below 0; set scale: interval for a measure without a true zero"


def target_kind(frame, target_kind: str = "auto", scale: str = "auto") -> TargetKind:
    """Decide the target's kind and scale from one query and the config's overrides."""
    counts = count_values(frame)
    detected, reason = detect(counts)
    kind = detected
    if target_kind != "auto":
        _check_override(target_kind, counts, frame.target)
        kind, reason = target_kind, "set in the config (target_kind)"
    scale_used, scale_reason = _scale(kind, scale, counts)
    return TargetKind(
        kind=kind,
        detected=detected,
        kind_reason=reason,
        scale=scale_used,
        scale_reason=scale_reason,
        n=counts.n,
        zeros=counts.zeros,
        ones=counts.ones,
        non_integers=counts.non_integers,
        negatives=counts.negatives,
    )
