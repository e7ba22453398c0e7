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
