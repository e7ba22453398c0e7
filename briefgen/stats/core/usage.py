"""What each analysis did with the rows: how many it used, which it left out and why.

Every result carries one ``RowUsage``; the brief's accounting is assembled from
them, so no analysis's rows are counted twice or in a second place.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class Dropped:
    """Rows one analysis could not use, and the reason, in words a reader follows."""

    analysis: str
    reason: str
    rows: int


@dataclass(frozen=True, slots=True)
class RowUsage:
    """Rows an analysis used, and the rows with a target value it had to leave out.

    ``analysis`` names it in the accounting: ``target``, ``group:<column>``,
    ``cross:<row> × <column>``, ``trend``, ``fit:<column>`` or ``histogram``.
    """

    analysis: str
    rows_used: int
    left_out: tuple[Dropped, ...] = ()


def usage(analysis: str, used: int, description: str, reason: str, lacking: int) -> RowUsage:
    """A usage with at most one reason for leaving rows out (none when ``lacking`` is 0)."""
    left_out = (Dropped(description, reason, lacking),) if lacking else ()
    return RowUsage(analysis, used, left_out)
