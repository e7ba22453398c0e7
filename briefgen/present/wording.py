"""How the brief names the target and writes its numbers, verdicts and doubts: one place.

Every section words its findings through these helpers, so a p-value, an adjusted
p-value, a share or a widened interval level reads the same on every page.
"""

from __future__ import annotations

from dataclasses import dataclass

# Every test as the brief names it to a reader: one table, used by sentences and tables alike.
from briefgen.config import BriefSpec
from briefgen.numbers import (
    decimals_for,
    fmt,
    fmt_interval,
    fmt_level,
    fmt_p,
    fmt_share,
    p_text,
)
from briefgen.present.bounds import HasInterval, interval_floor, shown_interval
from briefgen.present.family import Family
from briefgen.stats import BriefStats

TEST_NAMES = {
    "welch_t": "Welch's t-test",
    "welch_anova": "Welch's ANOVA",
    "mann_whitney": "Mann–Whitney rank test",
    "kruskal_wallis": "Kruskal–Wallis rank test",
    "two_proportion_z": "two-proportion z test",
    "chi_square": "chi-square test",
    "student_t": "Student's t interval",
    "wilson_score": "Wilson score interval",
}


def test_name(code: str) -> str:
    """The reader's name of a test from its stats.json code."""
    return TEST_NAMES.get(code, code.replace("_", " "))


@dataclass(frozen=True, slots=True)
class Wording:
    """How the brief names the target and writes its numbers."""

    label: str
    unit_decimals: int
    confidence: float
    kind: str = "continuous"  # stats.target_kind.kind: continuous, binary or count
    scale: str = "ratio"  # percentages of the target only on a ratio scale
    floor: float | None = None  # bounds.interval_floor: where a mean's interval is cut

    def value(self, number: float | None) -> str:
        return fmt(number, self.unit_decimals)

    def interval(self, low: float | None, high: float | None) -> str:
        return fmt_interval(low, high, self.unit_decimals)

    def mean_interval(self, summary: HasInterval) -> str:
        """A mean's interval as shown (``bounds.shown_interval``); "–" when there is none."""
        shown = shown_interval(summary, self.floor)
        return "–" if shown is None else fmt_interval(*shown, self.unit_decimals)

    @property
    def level_name(self) -> str:
        return fmt_level(self.confidence)

    @property
    def lower(self) -> str:
        return in_sentence(self.label)


def in_sentence(label: str) -> str:
    """A label as it reads inside a sentence: first letter lower-cased unless it starts an acronym.

    "Body mass" ─► "body mass", but "LOWINC" and "GDP per head" stay as written.
    """
    first = label.split(" ", 1)[0]
    if len(first) > 1 and first.isupper():
        return label
    return label[:1].lower() + label[1:]


def wording_for(stats: BriefStats, label: str) -> Wording:
    kind = stats.target_kind
    return Wording(
        label=label,
        unit_decimals=decimals_for(stats.overall.sd),
        confidence=stats.confidence,
        kind=kind.kind if kind is not None else "continuous",
        scale=kind.scale if kind is not None else "ratio",
        floor=interval_floor(stats),
    )


def signed(value: float | None, words: Wording) -> str:
    text = words.value(value)
    return text if text.startswith("−") or text == "–" else f"+{text}"


def share_text(value: float | None) -> str:
    """A share (0–1) as a percent with one decimal: shares of rows read in tenths of a percent."""
    return fmt_share(value, 1)


def points_text(value: float | None) -> str:
    """A difference of shares in percentage points, signed."""
    text = fmt(None if value is None else 100 * value, 1)
    return text if text.startswith("−") or text == "–" else f"+{text}"


def widened_level(confidence: float) -> str:
    """A widened interval level to one decimal (98.3%), where fmt_level would print 98.33333333%."""
    text = fmt_level(confidence)
    return text if len(text) <= 6 else f"{fmt(100 * confidence, 1)}%"


def listed(levels: tuple[str, ...]) -> str:
    names = [str(level) for level in levels]
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def adjusted_phrase(p: float, p_adjusted: float | None, family: Family) -> str:
    """'p = 0.004, 0.03 after adjusting for the 9 questions tested' (or just the p)."""
    if p_adjusted is None or family.size <= 1:
        return p_text(p)
    if fmt_p(p) == fmt_p(p_adjusted):
        return f"{p_text(p)}, also after adjusting for the {family.size} questions this brief tests"
    return (
        f"{p_text(p)}, {fmt_p(p_adjusted)} after adjusting for the {family.size} questions "
        "this brief tests"
    )


def chance_phrase(name: str, verdict: str) -> str:
    return (
        f"Gaps this size could easily arise by chance ({verdict}): the data do not show "
        f"that {name} matters, which is not the same as showing that it does not."
    )


def label_for(spec: BriefSpec, column: str) -> str:
    """A column's name as a heading: the configured label, else the name tidied and capitalised."""
    if column in spec.labels:
        return spec.labels[column]
    return opening(column.replace("_", " ").strip())


def opening(text: str) -> str:
    """``text`` as a sentence's first word: its first letter capitalised, the rest as written."""
    return text[:1].upper() + text[1:]


def name_for(spec: BriefSpec, column: str) -> str:
    """A column's name inside a sentence: the configured label, else the name tidied."""
    return spec.labels.get(column, column.replace("_", " ").strip())


def labelled_analysis(analysis: str, names: dict[str, str]) -> str:
    """An analysis the row accounting names ("comparison by idp") with its columns' labels.

    The engine names analyses by column (``stats.core.usage``); the brief names columns as
    the config labels them. Only the engine's own phrasings are rewritten, whole.
    """
    for phrase in ("comparison by ", "relationship with ", "the table of "):
        if analysis.startswith(phrase):
            columns = analysis.removeprefix(phrase).split(" × ")
            return phrase + " × ".join(names.get(c, c) for c in columns)
    return analysis
