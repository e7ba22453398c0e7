"""The brief as a page model: findings, charts and formatted tables, ready for a template.

Pure: results in, plain objects out. The template only lays these out; it never
formats or computes a number. Reading order: key findings and cautions first
(page 1), one section per analysis, then detail tables and the method.
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.config import BriefSpec
from briefgen.figures.cross import cross_chart
from briefgen.figures.distribution import distribution_chart
from briefgen.figures.histogram import histogram_chart
from briefgen.figures.relationship import relationship_chart
from briefgen.figures.shares import share_chart
from briefgen.figures.theme import Chart
from briefgen.figures.trend import trend_chart
from briefgen.numbers import decimals_for, fmt_count, fmt_level
from briefgen.present.cautions import cautions
from briefgen.present.family import Family, build_family, family_sentence
from briefgen.present.finding import SETTLED, Finding
from briefgen.present.sections.cross import cross_finding
from briefgen.present.sections.fit import fit_finding
from briefgen.present.sections.groups import group_finding
from briefgen.present.sections.overall import kind_note, overall_finding
from briefgen.present.sections.trend import trend_finding
from briefgen.present.wording import Wording, wording_for
from briefgen.stats import BriefStats, CrossTable, RegressionFit, Trend
from briefgen.table_fit import fits_across
from briefgen.tables import (
    Table,
    accounting_table,
    cross_cells_table,
    cross_table_view,
    effects_table,
    fits_table,
    group_table,
    pairwise_table,
    share_pairs_table,
    slopes_table,
    trend_table,
)

MAX_KEY_FINDINGS = 8
MAX_MATRIX_COLUMNS = 7  # level columns that fit across A4 text width at 8.5 pt


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
    description: str | None
    built_on: str
    paper: str
    key_findings: tuple[Finding, ...]
    family_note: str
    cautions: tuple[str, ...]
    sections: tuple[Section, ...]
    appendix: tuple[Table, ...]
    method: tuple[str, ...]
    family: Family

    @property
    def findings(self) -> tuple[Finding, ...]:
        """Every finding the brief shows, in page order (each section's, once)."""
        return tuple(s.finding for s in self.sections if s.finding is not None)


def label_for(spec: BriefSpec, column: str) -> str:
    """A column's name as a heading: the configured label, else the name tidied and capitalised."""
    if column in spec.labels:
        return spec.labels[column]
    text = column.replace("_", " ").strip()
    return text[:1].upper() + text[1:]


def name_for(spec: BriefSpec, column: str) -> str:
    """A column's name inside a sentence: the configured label, else the name tidied."""
    return spec.labels.get(column, column.replace("_", " ").strip())


def method_notes(stats: BriefStats, spec: BriefSpec) -> tuple[str, ...]:
    level = fmt_level(stats.confidence)
    notes = [
        "All statistics were computed by the database engine over every row; charts are drawn from those "
        "results (scatter plots show a seeded random sample of at most 5,000 points).",
        "Quartiles and medians use linear interpolation (Hyndman & Fan 1996, type 7). Box plots follow "
        "Tukey (1977): the box spans the middle half of the values, whiskers reach the most extreme values "
        "within 1.5 × IQR of the box, values beyond are outliers. No value was removed.",
        f"Intervals are {level} Student t intervals. Groups are compared with Welch's t-test (two levels) or "
        "Welch's ANOVA (more), with pairwise Welch tests adjusted by Holm's method. When the target is "
        "strongly skewed (|skewness| > 1 within groups, after Bulmer 1979), Mann–Whitney or Kruskal–Wallis "
        "rank tests are run as well and the brief leans on them.",
        "Straight-line fits are ordinary least squares from centred sums; correlations are Pearson's r and "
        "Spearman's ρ. Whether a slope differs between groups is an F test of separate against parallel lines.",
        f"Every test behind a claim on page 1 (each group comparison, each two-way interaction, the trend, "
        f"each predictor's direction) is adjusted with the others by Holm's method at {fmt_level(1 - stats.confidence)}. "
        "A level is called highest or lowest only where Holm-adjusted pairwise tests (Welch's t, or Dunn's "
        "test on ranks) separate it from the next; a direction is claimed only where the straight line and "
        "the rank correlation agree and are both clear, and a group variable that reverses or removes the "
        "slope within its levels is named as the likely confounder.",
    ]
    if stats.target_kind is not None and stats.target_kind.kind == "binary":
        del notes[1:3]  # no boxes, t intervals or Welch tests: kind_note says what ran instead
    notes += [note] if (note := kind_note(stats)) else []
    if stats.crosses:
        notes.append(
            f"Two-way combinations with fewer than {spec.min_cell} rows are marked and not ranked."
        )
    if stats.trend is not None:
        notes.append(
            f"The trend uses one value per {stats.trend.period}"
            f"{' (ISO weeks start on Monday)' if stats.trend.period == 'week' else ''}; the overall change "
            "is the least-squares slope of the period means over time (one point per period, unweighted) "
            "multiplied by the span, so shocks shared within a period do not narrow its interval. A first or "
            "last period the data cover only in part is left out of the line unless fewer than 3 would remain."
        )
    return tuple(notes)


def _group_sections(
    stats: BriefStats, spec: BriefSpec, words: Wording, family: Family
) -> tuple[list[Section], list[Table]]:
    """One section per group, and the pairwise tests of each compared group for the appendix."""
    label, decimals, confidence = words.label, words.unit_decimals, stats.confidence
    sections: list[Section] = []
    pairwise: list[Table] = []
    for group in stats.groups:
        name = name_for(spec, group.variable)
        comparison = stats.comparison(group.variable)
        chart = (
            distribution_chart(group, stats.overall, label, decimals, confidence, name)
            if group.boxes
            else None
        )
        if group.share_comparison is not None:
            chart = share_chart(group, stats.overall_share, label, confidence, name)
        finding = group_finding(
            group,
            comparison,
            words,
            name,
            family,
            _adjusted_for_others(stats, spec, group.variable),
        )
        sections.append(
            Section(
                f"group-{group.variable}",
                f"{label} by {name}",
                finding,
                chart,
                group_table(group, words, name),
            )
        )
        if comparison is not None:
            pairwise.append(pairwise_table(comparison, words, name))
            pairwise.append(effects_table(comparison, words, name))
        elif group.share_comparison is not None:
            pairwise.append(share_pairs_table(group.share_comparison, words, name))
    return sections, pairwise


def _adjusted_for_others(stats: BriefStats, spec: BriefSpec, variable: str) -> list[tuple]:
    """(other column, its name, test of ``variable`` given it) for each two-way table with it."""
    found = []
    for cross in stats.crosses:
        if cross.row_variable == variable:
            other, test = cross.column_variable, cross.interaction.row_given_column
        elif cross.column_variable == variable:
            other, test = cross.row_variable, cross.interaction.column_given_row
        else:
            continue
        found.append((other, name_for(spec, other), test))
    return found


def _cross_section(cross: CrossTable, spec: BriefSpec, words: Wording, family: Family) -> Section:
    """The two-way means of one pair of groups."""
    label, decimals = words.label, words.unit_decimals
    names = (name_for(spec, cross.row_variable), name_for(spec, cross.column_variable))
    finding = cross_finding(cross, words, *names, family)
    return Section(
        f"cross-{cross.row_variable}-{cross.column_variable}",
        f"{label} by {names[0]} and {names[1]}",
        finding,
        cross_chart(cross, label, decimals, names),
        _cross_matrix(cross, words, names),
    )


def _cross_matrix(cross: CrossTable, words: Wording, names: tuple[str, str]) -> Table | None:
    """The two-way matrix with the variable of fewer levels across, if it fits the text block.

    A matrix that would run off the page is left out; the long form in the appendix has every cell.
    """
    transpose = len(cross.rows) < len(cross.columns)
    across = cross.rows if transpose else cross.columns
    table = cross_table_view(cross, words, names, transpose=transpose)
    return table if len(across) <= MAX_MATRIX_COLUMNS and fits_across(table) else None


def _trend_section(trend: Trend, words: Wording, confidence: float, family: Family) -> Section:
    """The target over time; its period-by-period table goes to the appendix."""
    return Section(
        "trend",
        f"{words.label} over time",
        trend_finding(trend, words, family),
        trend_chart(trend, words.label, words.unit_decimals, confidence),
        None,
    )


def _fit_section(
    stats: BriefStats,
    fit: RegressionFit,
    words: Wording,
    x_label: str,
    names: dict[str, str],
    family: Family,
) -> Section:
    """The straight-line fit on one predictor, with its correlation and per-group slopes."""
    label = words.label
    slopes = [(names[s.group], s) for s in stats.slopes_by_group if s.predictor == fit.predictor]
    finding = fit_finding(
        fit,
        stats.correlation(fit.predictor),
        stats.log_fit(fit.predictor),
        slopes,
        words,
        x_label,
        family,
    )
    chart = relationship_chart(
        fit,
        stats.sample,
        x_label,
        label,
        # The slope gets its own decimals: its scale is target units per predictor unit.
        decimals_for(abs(fit.slope or 0) or None),
        stats.confidence,
        *_confounder(stats, fit, finding, names),
    )
    return Section(f"fit-{fit.predictor}", f"{label} and {x_label}", finding, chart, None)


def _confounder(stats: BriefStats, fit: RegressionFit, finding, names: dict[str, str]) -> tuple:
    """(per-level slopes, group name) when the finding names a confounding group, else ()."""
    if finding is None or finding.test != "ols_common_slope_within_groups":
        return ()
    group = finding.variables[1]
    slopes = next(
        s for s in stats.slopes_by_group if s.predictor == fit.predictor and s.group == group
    )
    return slopes, names.get(group, group)


def _overall_section(stats: BriefStats, words: Wording) -> Section:
    """The target over all rows: the overall finding, and the histogram when there is one."""
    chart = (
        histogram_chart(stats.histogram, words.lower, words.unit_decimals)
        if stats.histogram is not None
        else None
    )
    finding = overall_finding(stats, words, figure="overall" if chart else None)
    return Section("overall", f"{words.label} over all rows", finding, chart, None)


def _sections(
    stats: BriefStats, spec: BriefSpec, words: Wording, family: Family
) -> tuple[list[Section], list[Table]]:
    """Every analysis as a section in reading order, and the detail tables for the appendix."""
    sections, appendix = _group_sections(stats, spec, words, family)
    sections.insert(0, _overall_section(stats, words))
    sections += [_cross_section(cross, spec, words, family) for cross in stats.crosses]
    appendix += [
        cross_cells_table(
            cross,
            words,
            (name_for(spec, cross.row_variable), name_for(spec, cross.column_variable)),
        )
        for cross in stats.crosses
    ]
    if stats.trend is not None:
        sections.append(_trend_section(stats.trend, words, stats.confidence, family))
        appendix.append(trend_table(stats.trend, words))
    labels = {p: label_for(spec, p) for p in spec.predictors}
    names = {g: name_for(spec, g) for g in spec.groups}
    sections += [
        _fit_section(stats, fit, words, labels[fit.predictor], names, family) for fit in stats.fits
    ]
    if stats.fits:
        appendix.append(fits_table(stats, labels, words))
    if stats.slopes_by_group:
        appendix.append(slopes_table(stats, labels, names))
    appendix.append(accounting_table(stats, labels))
    return sections, appendix


def _why_empty(key: str) -> str:
    if key == "trend":
        return "the usable dates fall in fewer than two periods, too few for a trend"
    return "the predictor takes a single value in the rows used (or too few rows have it), so no line can be fitted"


def build_document(stats: BriefStats, spec: BriefSpec, built_on: str, rows_label: str) -> Document:
    """Assemble findings, charts and tables into the page model."""
    words = wording_for(stats, label_for(spec, spec.target))
    family = build_family(stats)
    sections, appendix = _sections(stats, spec, words, family)
    # An analysis with neither a finding nor a chart has nothing to show; say why instead.
    empty = [s for s in sections if s.finding is None and s.chart is None and s.table is None]
    sections = [s for s in sections if s not in empty]
    not_shown = [f"{s.heading}: not shown, {_why_empty(s.key)}." for s in empty]
    found = [s.finding for s in sections if s.finding is not None]
    # Page 1 leads with clear results; "no clear …" and untested findings follow them.
    clear = [f for f in found if f.claim in SETTLED]
    unclear = [f for f in found if f.claim not in SETTLED]
    key = [*clear, *unclear][:MAX_KEY_FINDINGS]
    names = {g: name_for(spec, g) for g in spec.groups}
    subtitle = f"{words.label} · {rows_label} · {fmt_count(stats.accounting.rows_read)} rows"
    return Document(
        title=spec.title,
        subtitle=subtitle,
        description=spec.description,
        built_on=built_on,
        paper=spec.output.paper,
        key_findings=tuple(key),
        family_note=family_sentence(family),
        cautions=tuple(not_shown + cautions(stats, words, names)),
        sections=tuple(sections),
        appendix=tuple(appendix),
        method=method_notes(stats, spec),
        family=family,
    )
