"""A section as the reader meets it: a finding, its chart, its table."""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.figures.theme import Chart
from briefgen.present.finding import Finding
from briefgen.tables import Table


@dataclass(frozen=True, slots=True)
class Section:
    """One analysis as the reader meets it: a finding, its chart, its table."""

    key: str
    heading: str
    finding: Finding | None
    chart: Chart | None
    table: Table | None
    # The same chart drawn short enough for page 1, where the section's own is too tall.
    short_chart: Chart | None = None


# Height of a chart drawn for page 1: text stays at print size, the plot is shorter.
SHORT_HEIGHT_IN = 2.3
