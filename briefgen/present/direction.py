"""Whether "rises with" or "falls with" holds: the line, the ranks and the groups must agree.

Three ways a straight-line slope misleads, each checked here from results alone:

* the least-squares slope and Spearman's rank correlation disagree in sign (a few
  extreme points tilt the line against the bulk of the data);
* within the levels of a configured group variable the pooled slope has the
  opposite sign and is itself clear (Simpson's paradox: the groups differ in both
  the predictor and the target, and the overall line mostly compares groups);
* the overall slope is clear but within levels it is not, and is less than half as
  steep (the group explains the link).

A within-group slope is a further test beside the family, so it must meet the
family's Bonferroni level α/m to be stated as clear (see ``briefgen.present.family``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import GroupSlopes

VANISHING = 0.5  # common practice, no published source: a within slope under half the overall


@dataclass(frozen=True, slots=True)
class Confounding:
    """A group variable that reverses or removes the overall slope of one predictor.

    ``kind`` is "reverses" or "removes"; ``slopes`` the per-level results whose
    pooled (common) slope is the within-group relation.
    """

    kind: str
    group: str
    slopes: GroupSlopes


def within_clear(slopes: GroupSlopes, level: float) -> bool:
    return slopes.common_p_value is not None and slopes.common_p_value < level


def confounding(
    fit: RegressionFit,
    slopes: Sequence[GroupSlopes],
    alpha: float,
    bonferroni_alpha: float,
) -> Confounding | None:
    """The first configured group (reversals before removals) that changes the slope's story."""
    if fit.slope is None or not fit.slope:
        return None
    usable = [s for s in slopes if s.common_slope is not None and s.common_p_value is not None]
    for s in usable:
        if s.common_slope * fit.slope < 0 and within_clear(s, bonferroni_alpha):
            return Confounding("reverses", s.group, s)
    for s in usable:
        weaker = abs(s.common_slope) < VANISHING * abs(fit.slope)
        if weaker and not within_clear(s, alpha):
            return Confounding("removes", s.group, s)
    return None
