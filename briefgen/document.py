"""The brief as a page model: findings, charts and formatted tables, ready for a template.

Pure: results in, plain objects out. The template only lays these out; it never
formats or computes a number. Reading order: key findings and cautions first
(page 1), one section per analysis, then detail tables and the method.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from briefgen.config import BriefSpec
from briefgen.database import where_statistics_run
from briefgen.deliver.gate import GateResult
from briefgen.figures.theme import LEAD_HEIGHT_IN, Chart
from briefgen.history.change import SinceLastTime
from briefgen.numbers import fmt_count, fmt_level
from briefgen.present.bounds import interval_floor
from briefgen.present.cautions import cautions
from briefgen.present.family import Family, build_family, family_sentence
from briefgen.present.finding import SETTLED, Finding
from briefgen.present.section import Section
from briefgen.present.sections.cross import cross_section
from briefgen.present.sections.fit import fit_section
from briefgen.present.sections.groups import group_sections
from briefgen.present.sections.overall import kind_note, overall_section
from briefgen.present.sections.since import SinceSection, column_notice, since_section
from briefgen.present.sections.trend import trend_section
from briefgen.present.wording import Wording, in_sentence, label_for, name_for, opening, wording_for
from briefgen.stats import BriefStats
from briefgen.tables import (
    Table,
    accounting_table,
    cross_cells_table,
    fits_table,
    slopes_table,
    trend_table,
)

# Page 1 states at most this many claims one by one; more are counted, not dropped.
MAX_KEY_FINDINGS = 8
# Each of page 1's one-line lists (explained, not shown) names at most this many.
MAX_LISTED = 10
_SVG_HEIGHT = re.compile(r'<svg[^>]*\sheight="([0-9.]+)pt"')


@dataclass(frozen=True, slots=True)
class LeadFigure:
    """The one chart page 1 carries, and why it was picked."""

    key: str
    chart: Chart
    caption: str


@dataclass(frozen=True, slots=True)
class Document:
    title: str
    subtitle: str
    description: str | None
    coverage: str | None
    built_on: str
    paper: str
    key_findings: tuple[Finding, ...]
    family_note: str
    lead: LeadFigure | None
    cautions: tuple[str, ...]
    sections: tuple[Section, ...]
    appendix: tuple[Table, ...]
    method: tuple[str, ...]
    family: Family
    # Said first on page 1: a brief held by the publish gate, columns changed since last time.
    notices: tuple[str, ...] = ()
    since: SinceSection | None = None

    @property
    def charts(self) -> tuple[Chart, ...]:
        """Every chart the brief shows, page 1's first, each once."""
        placed = [self.lead.chart] if self.lead else []
        placed += [s.chart for s in self.sections if s.chart is not None]
        return tuple({chart.svg: chart for chart in placed}.values())

    @property
    def settled_findings(self) -> tuple[Finding, ...]:
        """Page 1's claims and summaries, each with its own line of certainty."""
        return self._settled[:MAX_KEY_FINDINGS]

    @property
    def settled_rest(self) -> tuple[Finding, ...]:
        """Claims past page 1's limit, named together on one line so none goes unsaid."""
        return self._settled[MAX_KEY_FINDINGS:][:MAX_LISTED]

    @property
    def settled_more(self) -> int:
        """Claims past page 1's limit, named or not."""
        return max(len(self._settled) - MAX_KEY_FINDINGS, 0)

    @property
    def settled_unnamed(self) -> int:
        return self.settled_more - len(self.settled_rest)

    @property
    def explained_findings(self) -> tuple[Finding, ...]:
        """Differences and links another variable accounts for, named together on one line.

        They passed their tests, so page 1 must not file them with what could be chance.
        """
        return self._of("explained")[:MAX_LISTED]

    @property
    def explained_more(self) -> int:
        return max(len(self._of("explained")) - MAX_LISTED, 0)

    @property
    def open_findings(self) -> tuple[Finding, ...]:
        """Page 1's "no clear …" and untested findings, named together on one line."""
        return self._of("none", "not_tested")[:MAX_LISTED]

    @property
    def open_more(self) -> int:
        return max(len(self._of("none", "not_tested")) - MAX_LISTED, 0)

    @property
    def _settled(self) -> tuple[Finding, ...]:
        return tuple(f for f in self.key_findings if f.claim in SETTLED)

    def _of(self, *claims: str) -> tuple[Finding, ...]:
        return tuple(f for f in self.key_findings if f.claim in claims)

    @property
    def findings(self) -> tuple[Finding, ...]:
        """Every finding the brief shows, in page order (each section's, once)."""
        return tuple(s.finding for s in self.sections if s.finding is not None)


def method_notes(stats: BriefStats, spec: BriefSpec) -> tuple[str, ...]:
    level = fmt_level(stats.confidence)
    notes = [
        "All statistics were computed by the database engine over every row; charts are drawn from those "
        "results. A relationship with more than 5,000 rows is drawn as rows counted in 2-D bins "
        "by the engine; scatter plots show every row up to 5,000, and a seeded random sample of "
        "5,000 when points are coloured by group.",
        "Quartiles and medians use linear interpolation (Hyndman & Fan 1996, type 7). Box plots follow "
        "Tukey (1977): the box spans the middle half of the values, whiskers reach the most extreme values "
        "within 1.5 × IQR of the box, values beyond are outliers. No value was removed.",
        f"Intervals are {level} Student t intervals. Groups are compared with Welch's t-test (two levels) or "
        "Welch's ANOVA (more), with pairwise Welch tests adjusted by Holm's method. When the target is "
        "strongly skewed (|skewness| > 1 within groups, after Bulmer 1979), Mann–Whitney or Kruskal–Wallis "
        "rank tests are run as well and the brief leans on them.",
        "Straight-line fits are ordinary least squares from centred sums; correlations are Pearson's r and "
        "Spearman's ρ. Whether a slope differs between groups is an F test of separate against parallel lines. "
        "For each line the row with the largest Cook's distance (Cook 1977) is found; where that distance "
        "exceeds the median of F(2, n − 2), leaving the row out would move the line beyond its 50% "
        "confidence region, and the section gives the slope without it.",
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
    if interval_floor(stats) is not None:
        notes.append(
            "No value of the target is below 0, so an interval of a mean that Student's t would "
            "take below 0 is cut at 0 (stats.json keeps the uncut bounds): the true mean cannot "
            "be negative, so the cut interval holds it just as often. Intervals of gaps between "
            "means are not cut."
        )
    if spec.data.url is not None:
        notes.insert(0, where_statistics_run(spec.data.url))
    if stats.accounting.covers is not None:
        notes = [note.replace("over every row;", "over every row it covers;") for note in notes]
        notes.insert(0, stats.accounting.covers)
    if stats.crosses:
        notes.append(
            f"Two-way combinations with fewer than {spec.min_cell} rows are marked and not ranked."
        )
    for nested in stats.nestings:
        inner, outer = name_for(spec, nested.inner), name_for(spec, nested.outer)
        notes.append(
            f"{opening(inner)} is nested in {outer}: a two-way table of the two "
            f"would have one filled cell per level of {inner}, so no table is drawn and no "
            "interaction is tested for that pair."
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


def _sections(
    stats: BriefStats, spec: BriefSpec, words: Wording, family: Family
) -> tuple[list[Section], list[Table]]:
    """Every analysis as a section in reading order, and the detail tables for the appendix."""
    sections, appendix = group_sections(stats, spec, words, family)
    sections.insert(0, overall_section(stats, words))
    shown = {g.variable: g.shown for g in stats.groups}
    sections += [cross_section(cross, spec, words, family, shown) for cross in stats.crosses]
    appendix += [
        cross_cells_table(
            cross,
            words,
            (name_for(spec, cross.row_variable), name_for(spec, cross.column_variable)),
        )
        for cross in stats.crosses
    ]
    if stats.trend is not None:
        sections.append(trend_section(stats.trend, words, stats.confidence, family))
        appendix.append(trend_table(stats.trend, words))
    labels = {p: label_for(spec, p) for p in spec.predictors}
    names = {g: name_for(spec, g) for g in spec.groups}
    sections += [
        fit_section(stats, fit, words, labels[fit.predictor], names, family) for fit in stats.fits
    ]
    if stats.fits:
        appendix.append(fits_table(stats, labels, words))
    if stats.slopes_by_group:
        appendix.append(slopes_table(stats, labels, names))
    appendix.append(accounting_table(stats, labels, names))
    return sections, appendix


def _why_empty(key: str) -> str:
    if key == "trend":
        return "the usable dates fall in fewer than two periods, too few for a trend"
    return "the predictor takes a single value in the rows used (or too few rows have it), so no line can be fitted"


def _height_in(chart: Chart) -> float:
    found = _SVG_HEIGHT.search(chart.svg)
    # Rounded: 172.8 pt / 72 is 2.4000000000000004 in floating point, not 2.4.
    return round(float(found.group(1)) / 72, 6) if found else float("inf")


def _short_enough(section: Section) -> Chart | None:
    """The section's chart if it fits page 1, else its short drawing, else None."""
    if section.chart is not None and _height_in(section.chart) <= LEAD_HEIGHT_IN:
        return section.chart
    return section.short_chart


def lead_figure(sections: list[Section]) -> LeadFigure | None:
    """Page 1's chart, by rule: the surest claim's chart, else the target's histogram.

    The surest claim is the difference, rise or fall with the smallest family-adjusted
    p-value (earlier on the page wins a tie) whose chart fits under the findings at
    print size; with no such claim, the distribution of the target over all rows.
    """
    claims = [
        s
        for s in sections
        if s.finding is not None
        and s.finding.claim in SETTLED[1:]
        and s.finding.p_adjusted is not None
    ]
    fitting = [s for s in claims if _short_enough(s) is not None]
    if fitting:
        chosen = min(fitting, key=lambda s: s.finding.p_adjusted)
        why = f"The surest of the claims above: {chosen.finding.headline}. Its section has the detail."
        return LeadFigure(chosen.key, _short_enough(chosen), why)
    overall = next((s for s in sections if s.key == "overall" and s.chart is not None), None)
    if overall is None or _height_in(overall.chart) > LEAD_HEIGHT_IN:
        return None
    why = (
        "How the target is spread; the charts behind the claims are in their sections."
        if claims
        else "No effect is claimed; this is how the target is spread."
    )
    return LeadFigure("overall", overall.chart, why)


def held_notice(gate: GateResult | None) -> str | None:
    """Page 1's first line in a brief the publish gate held."""
    if gate is None or gate.passed:
        return None
    reasons = " ".join(check.sentence for check in gate.failures)
    return f"Held: this brief was not published or emailed, because a check failed. {reasons}"


def _alike(stats: BriefStats) -> str | None:
    """The trend's period when successive periods are alike, for page 1's caveat."""
    trend = stats.trend
    return trend.period if trend is not None and trend.serially_dependent else None


def build_document(
    stats: BriefStats,
    spec: BriefSpec,
    built_on: str,
    rows_label: str,
    since: SinceLastTime | None = None,
    gate: GateResult | None = None,
) -> Document:
    """Assemble findings, charts and tables into the page model."""
    words = wording_for(stats, label_for(spec, spec.target))
    family = build_family(stats)
    sections, appendix = _sections(stats, spec, words, family)
    # An analysis with neither a finding nor a chart has nothing to show; say why instead.
    empty = [s for s in sections if s.finding is None and s.chart is None and s.table is None]
    sections = [s for s in sections if s not in empty]
    not_shown = [f"{s.heading}: not shown, {_why_empty(s.key)}." for s in empty]
    found = [s.finding for s in sections if s.finding is not None]
    # Page 1 leads with clear results; explained, "no clear …" and untested findings follow.
    clear = [f for f in found if f.claim in SETTLED]
    unclear = [f for f in found if f.claim not in SETTLED]
    key = [*clear, *unclear]
    explained = sum(1 for f in found if f.claim == "explained" and family.passes(f.key))
    # Groups and predictors as sentences name them: the configured label, else the column.
    names = {g: name_for(spec, g) for g in spec.groups}
    names |= {p: in_sentence(name_for(spec, p)) for p in spec.predictors}  # as fit sections say it
    accounting = stats.accounting
    rows = fmt_count(accounting.rows_read)
    if accounting.covers is not None:
        rows = f"{rows} of {fmt_count(accounting.rows_in_source)}"
    subtitle = f"{words.label} · {rows_label} · {rows} rows"
    return Document(
        title=spec.title,
        subtitle=subtitle,
        description=spec.description,
        coverage=accounting.covers,
        built_on=built_on,
        paper=spec.output.paper,
        key_findings=tuple(key),
        family_note=family_sentence(family, explained, _alike(stats)),
        lead=lead_figure(sections),
        cautions=tuple(not_shown + cautions(stats, words, names)),
        sections=tuple(sections),
        appendix=tuple(appendix),
        method=method_notes(stats, spec),
        family=family,
        notices=tuple(n for n in (held_notice(gate), column_notice(since)) if n),
        since=None
        if since is None
        else since_section(since, words, spec, stats.trend.period if stats.trend else None),
    )
