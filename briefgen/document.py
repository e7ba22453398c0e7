"""The brief as a page model: findings, charts and formatted tables, ready for a template.

Pure: results in, plain objects out. The template only lays these out; it never
formats or computes a number.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from briefgen.config import BriefSpec
from briefgen.figures.distribution import distribution_chart
from briefgen.figures.relationship import relationship_chart
from briefgen.figures.theme import Chart
from briefgen.findings import (
    Finding,
    Wording,
    cautions,
    fit_finding,
    group_finding,
    overall_finding,
    wording_for,
)
from briefgen.numbers import decimals_for, fmt, fmt_count
from briefgen.stats import BriefStats


@dataclass(frozen=True, slots=True)
class Table:
    """Header and rows of already formatted cells; ``numeric`` marks right-aligned columns."""

    caption: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    numeric: tuple[bool, ...]
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Section:
    """One analysis as the reader meets it: a finding, its chart, its table."""

    key: str
    heading: str
    finding: Finding | None
    chart: Chart | None
    table: Table | None


@dataclass(frozen=True, slots=True)
class Document:
    title: str
    subtitle: str
    built_on: str
    paper: str
    key_findings: tuple[Finding, ...]
    cautions: tuple[str, ...]
    sections: tuple[Section, ...]
    method: tuple[str, ...]
    accounting: Table
    extra: dict = field(default_factory=dict)


def label_for(spec: BriefSpec, column: str) -> str:
    """The reader's name for a column: from ``labels`` in the config, else tidied."""
    if column in spec.labels:
        return spec.labels[column]
    text = column.replace("_", " ").strip()
    return text[:1].upper() + text[1:]


def name_for(spec: BriefSpec, column: str) -> str:
    """A column's name inside a sentence: the configured label, else the name tidied."""
    return spec.labels.get(column, column.replace("_", " ").strip())


def _group_table(group, words: Wording) -> Table:
    rows = []
    for s in group.summaries:
        box = next((b for b in group.boxes if b.level == s.level), None)
        rows.append(
            (
                s.level,
                fmt_count(s.n),
                words.value(s.mean),
                words.interval(s.ci_low, s.ci_high) if s.ci_low is not None else "–",
                words.value(s.median),
                f"{words.value(s.q1)} – {words.value(s.q3)}" if s.q1 is not None else "–",
                fmt_count(box.outlier_count) if box else "–",
            )
        )
    notes = []
    if group.rows_without_level:
        notes.append(
            f"{fmt_count(group.rows_without_level)} rows have no {group.variable} and are not in this table."
        )
    return Table(
        caption=f"{words.label} by {group.variable}",
        header=(
            "Level",
            "n",
            "Mean",
            f"{words.level_name} interval",
            "Median",
            "Middle half (Q1 – Q3)",
            "Outliers",
        ),
        rows=tuple(rows),
        numeric=(False, True, True, True, True, True, True),
        notes=tuple(notes),
    )


def _fit_table(stats: BriefStats, spec: BriefSpec, words: Wording) -> Table:
    rows = []
    for fit in stats.fits:
        d = decimals_for(abs(fit.slope) if fit.slope else None)
        rows.append(
            (
                label_for(spec, fit.predictor),
                fmt_count(fit.n),
                fmt(fit.slope, d),
                f"{fmt(fit.slope_ci_low, d)} to {fmt(fit.slope_ci_high, d)}",
                words.value(fit.intercept),
                fmt(fit.r_squared, 2) if fit.r_squared is not None else "–",
            )
        )
    return Table(
        caption=f"Straight-line fits of {words.label.lower()}",
        header=(
            "Predictor",
            "n",
            "Slope per unit",
            f"{words.level_name} interval",
            "Intercept",
            "R²",
        ),
        rows=tuple(rows),
        numeric=(False, True, True, True, True, True),
    )


def _accounting_table(stats: BriefStats) -> Table:
    acc = stats.accounting
    rows = [("Rows read", fmt_count(acc.rows_read))]
    rows += [(f"Used: {name.replace(':', ' ')}", fmt_count(n)) for name, n in acc.used.items()]
    rows += [(f"Left out of {d.analysis}: {d.reason}", fmt_count(d.rows)) for d in acc.dropped]
    return Table(
        caption="Where every row went", header=("", "Rows"), rows=tuple(rows), numeric=(False, True)
    )


def method_notes(stats: BriefStats) -> tuple[str, ...]:
    level = f"{stats.confidence:.0%}"
    return (
        "All statistics were computed by the database engine over every row; charts are drawn from "
        "those results (scatter plots show a seeded random sample of at most 5,000 points).",
        "Quartiles and medians use linear interpolation (Hyndman & Fan 1996, type 7).",
        "Box plots follow Tukey (1977): the box spans the middle half of the values, whiskers reach the "
        "most extreme values within 1.5 × IQR of the box, values beyond are drawn as outliers. No value "
        "was removed.",
        f"Intervals of means are {level} Student t intervals. Straight-line fits are ordinary least "
        "squares, computed from centred sums for numerical accuracy.",
    )


def build_document(stats: BriefStats, spec: BriefSpec, built_on: str, rows_label: str) -> Document:
    """Assemble findings, charts and tables into the page model."""
    label = label_for(spec, spec.target)
    words = wording_for(stats, label)
    decimals = words.unit_decimals
    sections, key = [], [overall_finding(stats, words)]
    for group in stats.groups:
        name = name_for(spec, group.variable)
        finding = group_finding(group, words, name)
        chart = (
            distribution_chart(group, stats.overall, label, decimals, stats.confidence)
            if group.boxes
            else None
        )
        sections.append(
            Section(
                f"group-{group.variable}",
                f"{label} by {name}",
                finding,
                chart,
                _group_table(group, words),
            )
        )
        if finding:
            key.append(finding)
    for fit in stats.fits:
        x_label = label_for(spec, fit.predictor)
        finding = fit_finding(fit, words, x_label)
        chart = relationship_chart(
            fit,
            stats.sample,
            x_label,
            label,
            decimals_for(abs(fit.slope or 0) or None),
            decimals,
            stats.confidence,
        )
        sections.append(
            Section(f"fit-{fit.predictor}", f"{label} and {x_label.lower()}", finding, chart, None)
        )
        if finding:
            key.append(finding)
    if stats.fits:
        sections.append(
            Section("fits", "All straight-line fits", None, None, _fit_table(stats, spec, words))
        )
    subtitle = f"{label} · {rows_label} · {fmt_count(stats.accounting.rows_read)} rows"
    return Document(
        title=spec.title,
        subtitle=subtitle,
        built_on=built_on,
        paper=spec.output.paper,
        key_findings=tuple(key),
        cautions=tuple(cautions(stats, words)),
        sections=tuple(sections),
        method=method_notes(stats),
        accounting=_accounting_table(stats),
    )
