"""Figure stage: charts drawn from the statistics results only, never from rows."""

from __future__ import annotations

from briefgen.figures.theme import Chart

__all__ = ["Chart"]
