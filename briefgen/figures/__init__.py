"""Figure stage: charts drawn from the statistics results only, never from rows.

``rules`` (chart-choice rules) is pure and light, so the statistics stage may ask it
how a figure will be drawn; importing it must not load matplotlib, hence no eager
import of ``theme`` here.
"""

from __future__ import annotations

__all__ = ["Chart"]


def __getattr__(name: str):
    if name == "Chart":
        from briefgen.figures.theme import Chart

        return Chart
    raise AttributeError(name)
