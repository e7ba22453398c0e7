"""The brief's one family of claims: every test behind a page-1 claim, adjusted together.

A brief asks many questions at once (does each group matter, does each pair of
groups combine, is there a trend, does each predictor go with the target). Tested
one by one at 5%, pure noise yields some "finding" in most briefs. Holm's (1979)
step-down method adjusts the questions together so that, when none has a real
effect, the chance of any claim on page 1 is at most α = 1 − confidence (the
family-wise error rate), whatever the dependence between the tests.

Holm rather than Benjamini–Hochberg: a manager acts on each sentence of page 1,
not on a proportion of them, so every claim should carry its own guarantee; the
false discovery rate would let one in twenty claims be wrong once several real
effects are present. Holm is uniformly more powerful than Bonferroni.

Follow-up questions are asked only of questions that passed (closed testing in
spirit): which levels are apart (Holm within the group variable's pairs), and
whether a predictor's slope differs between groups (Holm over the group variables,
only for predictors with a claimed direction).

A direction question ("rises with") is one intersection–union test (Berger 1982):
the straight-line slope and the rank correlation must both be clear and agree in
sign, so its p-value is the larger of the two, or 1 when their signs differ.
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.stats import BriefStats
from briefgen.stats.groups import GroupResult
from briefgen.stats.welch import holm


@dataclass(frozen=True, slots=True)
class Question:
    """One test behind a possible page-1 claim: the finding it decides, its p and adjusted p.

    ``variables`` names the data columns a follow-up question is about (predictor, group).
    """

    key: str
    test: str
    p_value: float
    p_adjusted: float
    variables: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Family:
    """Every page-1 question of one brief with its Holm-adjusted p-value at level ``alpha``.

    ``slope_differences`` are the follow-up tests of slopes between groups, keyed
    (predictor, group), Holm-adjusted among themselves; only predictors whose
    direction passed are asked.
    """

    method: str
    alpha: float
    questions: tuple[Question, ...]
    slope_differences: tuple[Question, ...] = ()

    def question(self, key: str) -> Question | None:
        return next((q for q in self.questions if q.key == key), None)

    def adjusted(self, key: str) -> float | None:
        question = self.question(key)
        return None if question is None else question.p_adjusted

    def passes(self, key: str) -> bool:
        """True when the question was asked and its adjusted p-value is below ``alpha``."""
        p = self.adjusted(key)
        return p is not None and p < self.alpha

    @property
    def size(self) -> int:
        return len(self.questions)

    @property
    def bonferroni_alpha(self) -> float:
        """The level one extra check must meet to stay inside the family's guarantee."""
        return self.alpha / max(self.size, 1)

    def slopes_differ(self, predictor: str) -> tuple[str, ...]:
        """Group variables whose per-level slopes on ``predictor`` clearly differ."""
        return tuple(
            q.variables[1]
            for q in self.slope_differences
            if q.variables[0] == predictor and q.p_adjusted < self.alpha
        )


def verdict_test(group: GroupResult, kind: str) -> tuple[str, float | None]:
    """The test a group's verdict rests on and its p-value.

    Shares of a 0/1 target: the test on proportions. A count with many zeros: Welch's
    test on means (medians at 0 cannot tell levels apart). Otherwise the test the
    comparison leans on (Welch, or ranks when strongly skewed).
    """
    if group.share_comparison is not None:
        return group.share_comparison.test, group.share_comparison.p_value
    comparison = group.comparison
    if comparison is None:
        return "none", None
    if kind != "count" and comparison.leans_on == "rank" and comparison.rank_test is not None:
        return comparison.rank_test.test, comparison.rank_test.p_value
    return comparison.test, comparison.p_value


def direction_p(stats: BriefStats, predictor: str) -> float | None:
    """Intersection–union p of "the target rises (or falls) with ``predictor``"."""
    fit = next((f for f in stats.fits if f.predictor == predictor), None)
    if fit is None or fit.slope_p_value is None:
        return None
    correlation = stats.correlation(predictor)
    if correlation is None or correlation.spearman_p_value is None:
        return fit.slope_p_value
    rho = correlation.spearman_rho or 0.0
    if fit.slope * rho <= 0:
        return 1.0  # the line and the ranks disagree: no direction can be claimed
    return max(fit.slope_p_value, correlation.spearman_p_value)


Raw = tuple[str, str, float, tuple[str, ...]]


def _raw_questions(stats: BriefStats) -> list[Raw]:
    questions = []
    kind = stats.target_kind.kind if stats.target_kind is not None else "continuous"
    for group in stats.groups:
        test, p = verdict_test(group, kind)
        if p is not None:
            questions.append((group.key, test, p, (group.variable,)))
    for cross in stats.crosses:
        test = cross.interaction
        if test.p_value is not None:
            variables = (cross.row_variable, cross.column_variable)
            questions.append((cross.key, f"interaction_f_{test.scale}", test.p_value, variables))
    trend = stats.trend
    if trend is not None and trend.fit is not None and trend.fit.slope_p_value is not None:
        questions.append((trend.key, "ols_period_means", trend.fit.slope_p_value, ()))
    for fit in stats.fits:
        p = direction_p(stats, fit.predictor)
        if p is not None:
            questions.append(
                (f"fit-{fit.predictor}", "ols_slope_and_spearman", p, (fit.predictor,))
            )
    return questions


def _adjusted(raw: list[Raw]) -> tuple[Question, ...]:
    adjusted = holm([p for _, _, p, _ in raw]) if raw else ()
    return tuple(
        Question(key, test, p, q, variables)
        for (key, test, p, variables), q in zip(raw, adjusted, strict=True)
    )


def build_family(stats: BriefStats) -> Family:
    """Adjust every page-1 question of ``stats`` together (Holm at 1 − confidence)."""
    alpha = round(1 - stats.confidence, 12)  # 1 − 0.95 is 0.050000000000000044 in binary
    questions = _adjusted(_raw_questions(stats))
    passed = {q.key for q in questions if q.p_adjusted < alpha}
    follow_up = [
        (
            f"slopes-{s.predictor}-{s.group}",
            "f_separate_vs_parallel",
            s.p_value,
            (s.predictor, s.group),
        )
        for s in stats.slopes_by_group
        if f"fit-{s.predictor}" in passed and s.p_value is not None
    ]
    return Family("holm", alpha, questions, _adjusted(follow_up))


def family_sentence(family: Family, explained: int = 0, alike: str | None = None) -> str:
    """What page 1 says about how its claims were guarded against chance.

    ``explained`` counts passing questions page 1 does not claim, because another
    variable accounts for them: "k of m pass" alone would read as k claims. ``alike``
    names the period ("year") when successive periods are alike (``Trend.serially_dependent``):
    the guarantee assumes independent rows, so page 1 says it can fail.
    """
    level = f"{family.alpha * 100:.10g}%"
    if family.size == 0:
        return "No question on this page could be tested: the data allow no comparison."
    caveat = (
        f" But successive {alike}s in these data are alike, which the tests ignore, so that "
        "chance can be higher (see Read with care)."
        if alike
        else ""
    )
    if family.size == 1:
        return (
            f"This brief tests one question; a claim on this page would arise by chance alone "
            f"at most {level} of the time.{caveat}"
        )
    claimed = sum(1 for q in family.questions if q.p_adjusted < family.alpha)
    return (
        f"This brief tests {family.size} questions and adjusts them together (Holm's method): "
        f"if none had a real effect, the chance of any claim on this page would be at most {level}. "
        f"{claimed} of {family.size} {'passes' if claimed == 1 else 'pass'}"
        + (
            f"; {explained} of them {'is' if explained == 1 else 'are'} explained by another "
            "variable, so not claimed."
            if explained
            else "."
        )
        + caveat
    )
