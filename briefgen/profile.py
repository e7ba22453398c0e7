"""Chart-plan rules: the order levels are shown in, and when small levels are folded.

Practice of statistical graphics: sort categories by value unless they have a
natural order; with more than about eight, show the largest and fold the rest
into one "other" level, and say so in the caption.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING

import ibis

if TYPE_CHECKING:
    import ibis.expr.types as ir

    from briefgen.stats.groups import Summary

MAX_LEVELS = 8
OTHER_PREFIX = "Other"
_ORDERED = re.compile(r"^\s*[-+]?\d")


def has_natural_order(levels: list[str]) -> bool:
    """Levels that all start with a number (time slots, sizes, years) keep their order."""
    return bool(levels) and all(_ORDERED.match(level) for level in levels)


def level_order(summaries: tuple[Summary, ...]) -> list[str]:
    """Natural order if the levels have one, else by median, highest first."""
    levels = [s.level for s in summaries]
    if has_natural_order(levels):
        return sorted(levels, key=_numeric_key)
    folded = [s for s in summaries if s.level.startswith(OTHER_PREFIX)]
    ranked = sorted(
        (s for s in summaries if not s.level.startswith(OTHER_PREFIX)),
        key=lambda s: (s.median is None, -(s.median or 0.0), s.level),
    )
    return [s.level for s in ranked + folded]


def _numeric_key(level: str) -> tuple[float, str]:
    match = re.match(r"^\s*([-+]?\d+(?:\.\d+)?)", level)
    return (float(match.group(1)) if match else float("inf"), level)


def fold_small_levels(rows: ir.Table, summaries: tuple[Summary, ...]) -> ir.Table:
    """Keep the MAX_LEVELS − 1 largest levels; relabel the rest as one 'Other (k levels)'."""
    by_size = sorted(summaries, key=lambda s: (-s.rows, s.level))
    keep = [s.level for s in by_size[: MAX_LEVELS - 1]]
    folded = len(summaries) - len(keep)
    label = f"{OTHER_PREFIX} ({folded} levels)"
    return rows.mutate(level=ibis.ifelse(rows.level.isin(keep), rows.level, label))
