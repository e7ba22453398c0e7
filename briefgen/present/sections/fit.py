"""The relationship finding: a direction only where line, ranks and groups agree."""

from __future__ import annotations

from dataclasses import replace

from briefgen.figures.relationship import relationship_chart
from briefgen.numbers import (
    decimals_for,
    fmt,
    fmt_count,
    fmt_interval,
    fmt_share,
    fmt_step,
    p_text,
    readable_step,
)
from briefgen.present.direction import confounding
from briefgen.present.family import Family
from briefgen.present.finding import Finding
from briefgen.present.section import SHORT_HEIGHT_IN, Section
from briefgen.present.wording import (
    Wording,
    adjusted_phrase,
    in_sentence,
    opening,
)
from briefgen.stats import BriefStats
from briefgen.stats.correlation import Correlation
from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import GroupSlopes, LogFit


def _step_phrases(fit: RegressionFit, factor: float = 1.0) -> tuple[float, str, str]:
    """The step of the predictor slopes are stated per: (step, 'unit' or '1,000 units', 'per …').

    ``factor`` is how the slope is printed (100 for percentage points of a 0/1 target).
    """
    spread = None if fit.x_min is None or fit.x_max is None else fit.x_max - fit.x_min
    step = readable_step(fit.slope * factor, spread)
    if step == 1:
        return step, "unit", "per unit"
    return step, f"{fmt_step(step)} units", f"per {fmt_step(step)}"


def _signed_slope(value: float, decimals: int) -> str:
    return f"{'+' if value > 0 else '−'}{fmt(abs(value), decimals)}"


def fit_finding(
    fit: RegressionFit,
    correlation: Correlation | None,
    log_fit: LogFit | None,
    slopes: list[tuple[str, GroupSlopes]],
    words: Wording,
    x_label: str,
    family: Family,
) -> Finding | None:
    """Direction of the target with one predictor, and a row that pulls the line, if any.

    The row's note goes into the certainty, so page 1 carries it beside the claim.
    """
    finding = _direction(fit, correlation, log_fit, slopes, words, x_label, family)
    note = influence_note(fit, words, x_label)
    if finding is None or note is None:
        return finding
    return replace(finding, certainty=f"{finding.certainty} {note}")


def influence_note(fit: RegressionFit, words: Wording, x_label: str) -> str | None:
    """One sentence when a row's Cook's distance passes the cut-off: the slope without it."""
    row = fit.influence
    if row is None or not row.pulls or row.slope_without is None or fit.slope is None:
        return None
    factor = 100.0 if words.kind == "binary" else 1.0
    step, _, per = _step_phrases(fit, factor)
    scale = step * factor
    d = decimals_for(abs(fit.slope * scale))
    points = " points" if words.kind == "binary" else ""
    where = f"with {words.lower} at {_as_written(row.y)} and {in_sentence(x_label)} at {_as_written(row.x)}"
    who = (
        f"One row, {where}, pulls the straight line: without it"
        if row.rows_over == 1
        else f"{_count_words(row.rows_over)} rows pull the straight line; without the strongest, {where},"
    )
    return (
        f"{who} the slope would be {_signed_slope(row.slope_without * scale, d)}"
        f"{points} {per}, not {_signed_slope(fit.slope * scale, d)} (Cook's distance "
        f"{fmt(row.cooks_distance, 2)}, cut-off {fmt(row.cutoff, 2)})."
    )


_SMALL_COUNTS = ("Two", "Three", "Four", "Five", "Six", "Seven", "Eight", "Nine")


def _count_words(count: int) -> str:
    """A count that opens a sentence: in words up to nine, as style guides ask, else digits."""
    return _SMALL_COUNTS[count - 2] if 2 <= count <= 9 else fmt_count(count)


# A data value is written with the decimals it has, up to this many (else 4 significant digits).
_WRITTEN_DECIMALS = 6


def _as_written(value: float) -> str:
    """A data value as it was most likely written: 48.0 ─► "48", 1348.9 ─► "1,348.9"."""
    for decimals in range(_WRITTEN_DECIMALS + 1):
        if float(f"{value:.{decimals}f}") == value:
            return fmt(value, decimals)
    return fmt(value, decimals_for(abs(value), 4))


def _direction(
    fit: RegressionFit,
    correlation: Correlation | None,
    log_fit: LogFit | None,
    slopes: list[tuple[str, GroupSlopes]],
    words: Wording,
    x_label: str,
    family: Family,
) -> Finding | None:
    """Direction of the target with one predictor, only where line, ranks and groups agree."""
    if fit.slope is None or fit.slope_ci_low is None:
        return None
    key = f"fit-{fit.predictor}"
    # A 0/1 target's slope is a change in its share of 1s: said in percentage points.
    points = words.kind == "binary"
    factor = 100.0 if points else 1.0
    step, step_words, per = _step_phrases(fit, factor)
    scale = step * factor
    slope, low, high = fit.slope * scale, fit.slope_ci_low * scale, fit.slope_ci_high * scale
    d = decimals_for(abs(slope))
    amount = " percentage points" if points else ""
    measure = f"in the share of {words.lower} = 1" if points else words.lower
    x_lower = in_sentence(x_label)
    direction = "rises" if fit.slope > 0 else "falls"
    text = (
        f"The straight line {direction}: each extra {step_words} of {x_lower} goes with "
        f"{fmt(abs(slope), d)}{amount} {'more' if slope > 0 else 'less'} {measure} on average "
        f"({words.level_name} interval {fmt_interval(low, high, d)}), "
        f"and {x_lower} accounts for {fmt_share(fit.r_squared)} of the variation (R², {fmt_count(fit.n)} rows)."
    )
    rho = correlation.spearman_rho if correlation is not None else None
    if rho is not None:
        text += (
            f" Rank correlation ρ = {fmt(rho, 2)} (Pearson r = {fmt(correlation.pearson_r, 2)})."
        )
    if log_fit is not None and log_fit.percent_change_per_unit is not None:
        text += (
            f" In relative terms, each extra unit goes with a change of about "
            f"{fmt(log_fit.percent_change_per_unit, 1)}% in {words.lower} "
            f"({fmt_interval(log_fit.percent_ci_low, log_fit.percent_ci_high, 1, suffix='%')}, fit on the log scale)."
        )
    question = family.question(key)
    p_adjusted = family.adjusted(key)
    clear = family.passes(key)
    names = {s.group: name for name, s in slopes}
    found = (
        confounding(fit, [s for _, s in slopes], family.alpha, family.bonferroni_alpha)
        if clear
        else None
    )
    data = {
        "figure": key,
        "key": key,
        "kind": "fit",
        "variables": (fit.predictor,),
        "estimate": fit.slope,
        "ci_low": fit.slope_ci_low,
        "ci_high": fit.slope_ci_high,
        "test": "ols_slope_and_spearman",
        # The direction question's p: the larger of the line's and the ranks' (see family).
        "p_value": question.p_value if question is not None else fit.slope_p_value,
        "p_adjusted": p_adjusted,
    }
    verdict = adjusted_phrase(data["p_value"], p_adjusted, family)
    if found is not None:
        return _confounded_finding(found, fit, words, x_lower, names, text, data, scale, per)
    if clear:
        differing = [names.get(g, g) for g in family.slopes_differ(fit.predictor)]
        if differing:
            text += f" The slope is not the same everywhere: it differs by {', '.join(differing)} (F test, adjusted)."
        return Finding(
            headline=(
                f"{words.label} {direction} with {x_lower} "
                f"({_signed_slope(slope, d)}{' points' if points else ''} {per})"
            ),
            text=text,
            certainty=(
                f"The line and the rank correlation agree and both are clear ({verdict}). "
                "This is an association in these data, not proof of cause."
            ),
            claim="rise" if fit.slope > 0 else "fall",
            **data,
        )
    line_clear = fit.slope_p_value is not None and fit.slope_p_value < family.alpha
    rank_clear = correlation is not None and _rank_clear(correlation, family)
    # Opposite directions are a finding only when both are clear; a ρ of −0.01 beside a
    # clear line says nothing about "most values" (the next case covers it).
    if rho is not None and rho * fit.slope < 0 and line_clear and rank_clear:
        return Finding(
            headline=f"No consistent direction between {words.lower} and {x_lower}",
            text=text
            + (
                f" The straight line {direction} while the rank correlation points the other way "
                f"(ρ = {fmt(rho, 2)}): most values move one way while the largest move the other, "
                "so no single direction describes the data."
            ),
            certainty="Neither direction can be claimed while the two measures disagree.",
            claim="none",
            **data,
        )
    if rho is not None and line_clear != rank_clear:
        # One measure alone looks clear: "no clear relationship" would contradict the
        # interval printed beside it, so say which measure holds and why none is claimed.
        line_p, rank_p = p_text(fit.slope_p_value), p_text(correlation.spearman_p_value)
        clear_one, other = (
            (f"straight line ({line_p})", f"rank correlation ({rank_p})")
            if line_clear
            else (f"rank correlation ({rank_p})", f"straight line ({line_p})")
        )
        why = (
            "the line may rest on a few values"
            if line_clear
            else "values tend to rise or fall together in order, but not along a straight line"
        )
        return Finding(
            headline=f"No consistent link with {x_lower}",
            text=text,
            certainty=(
                f"The {clear_one} alone would be clear, the {other} is not: {why}. A direction "
                "is claimed only where both are clear, so none is claimed."
            ),
            claim="none",
            **data,
        )
    return Finding(
        headline=f"No clear link with {x_lower}",
        text=text,
        certainty=f"No clear straight-line or rank relationship ({verdict}).",
        claim="none",
        **data,
    )


def _rank_clear(correlation: Correlation, family: Family) -> bool:
    p = correlation.spearman_p_value
    return p is not None and p < family.alpha


def _confounded_finding(found, fit, words, x_lower, names, text, data, scale, per) -> Finding:
    """The within-group relation, with the group named as the likely confounder.

    ``scale`` turns a slope per unit into the printed one (the step, times 100 for points).
    """
    within = found.slopes
    group = names.get(found.group, found.group)
    slope = within.common_slope * scale
    low, high = within.common_ci_low * scale, within.common_ci_high * scale
    d = decimals_for(abs(slope))
    overall = "rises" if fit.slope > 0 else "falls"
    within_text = (
        f" Within each level of {group}, the slope is {_signed_slope(slope, d)} {per} "
        f"({words.level_name} interval {fmt_interval(low, high, d)})."
    )
    data = data | {
        "variables": (fit.predictor, found.group),
        "estimate": within.common_slope,
        "ci_low": within.common_ci_low,
        "ci_high": within.common_ci_high,
        "test": "ols_common_slope_within_groups",
        "p_value": within.common_p_value,
    }
    if found.kind == "reverses":
        direction = "rises" if slope > 0 else "falls"
        return Finding(
            headline=f"Within each {group}, {words.lower} {direction} with {x_lower} ({_signed_slope(slope, d)} {per})",
            text=text
            + within_text
            + (
                f" Overall the line {overall} only because the levels of {group} differ in both "
                f"{x_lower} and {words.lower}: {group} is the likely confounder."
            ),
            certainty=(
                f"The within-group slope is clear at the brief's adjusted level; the overall line "
                f"mixes levels of {group}. An association in these data, not proof of cause."
            ),
            claim="rise" if slope > 0 else "fall",
            **data,
        )
    return Finding(
        headline=f"Link with {x_lower} is explained by {group}",
        text=text
        + within_text
        + (
            f" The overall line {overall} mostly because the levels of {group} differ in both "
            f"{x_lower} and {words.lower}: within a level, no clear link remains."
        ),
        certainty=(
            f"{opening(group)} is the likely confounder, unless its levels are "
            f"themselves defined by {x_lower}; either way, read the levels separately."
        ),
        claim="explained",
        **data,
    )


def fit_section(
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
    by_group, group_label = _confounder(stats, fit, finding, names) or (None, None)
    common = (
        fit,
        stats.sample,
        x_label,
        label,
        # The slope gets its own decimals: its scale is target units per predictor unit.
        decimals_for(abs(fit.slope or 0) or None),
        stats.confidence,
        by_group,
        group_label,
    )
    claimed = finding is not None and finding.claim in ("rise", "fall")
    density = stats.density(fit.predictor)
    # A 0/1 target: lines and bands stay inside 0%–100%, slopes in percentage points.
    binary = words.kind == "binary"
    short = (
        relationship_chart(*common, height=SHORT_HEIGHT_IN, density=density, binary=binary)
        if claimed
        else None
    )
    return Section(
        f"fit-{fit.predictor}",
        f"{label} and {x_label}",
        finding,
        relationship_chart(*common, density=density, binary=binary),
        None,
        short,
    )


def _confounder(stats: BriefStats, fit: RegressionFit, finding, names: dict[str, str]) -> tuple:
    """(per-level slopes, group name) when the finding names a confounding group, else ()."""
    if finding is None or finding.test != "ols_common_slope_within_groups":
        return ()
    group = finding.variables[1]
    slopes = next(
        s for s in stats.slopes_by_group if s.predictor == fit.predictor and s.group == group
    )
    return slopes, names.get(group, group)
