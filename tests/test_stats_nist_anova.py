"""Classical one-way ANOVA against the NIST StRD certified values.

The eleven NIST Statistical Reference Datasets for one-way ANOVA ship with scipy
(scipy/stats/tests/data/nist_anova). Data and certified values are parsed from
the files themselves, loaded into the engine, summarised by
``summarise_levels`` and fed to ``classical_anova``.

Digits of agreement measured on this stack (F / residual SD / R²):
SiRstv 12.9 / 13.4 / 13.1, SmLs01 14.9 / 15.6 / 15.6, SmLs02 14.9 / 15.6 / 15.1,
SmLs03 13.7 / 14.0 / 14.0, AtmWtAg 11.7 / 11.2 / 11.8, SmLs04–06 9.3 / 10.6 / 9.6,
SmLs07–09 3.3 / 4.6 / 3.5.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction
from pathlib import Path

import pandas as pd
import pytest
import scipy

from briefgen.stats.compare import classical_anova
from briefgen.stats.groups import summarise_levels

NIST_FOLDER = Path(scipy.__file__).parent / "stats" / "tests" / "data" / "nist_anova"

# NIST's difficulty classes. Lower and average must agree to 9 significant digits.
LOWER_AND_AVERAGE = [
    "SiRstv",
    "SmLs01",
    "SmLs02",
    "SmLs03",
    "AtmWtAg",
    "SmLs04",
    "SmLs05",
    "SmLs06",
]
HIGHER = ["SmLs07", "SmLs08", "SmLs09"]


def _read_nist(name: str) -> tuple[pd.DataFrame, dict[str, float]]:
    """Data rows and certified F, residual SD and R² from one StRD ANOVA file."""
    text = (NIST_FOLDER / f"{name}.dat").read_text()
    certified = {
        # The "Between ..." row ends with the certified F statistic.
        "f": float(re.search(r"^Between.*\s(\S+)\s*$", text, re.MULTILINE).group(1)),
        "residual_sd": float(re.search(r"Standard Deviation\s+(\S+)", text).group(1)),
        "r_squared": float(re.search(r"Certified R-Squared\s+(\S+)", text).group(1)),
    }
    # The last "Data:" header starts the table: treatment number, response.
    body = text.split("Data:")[-1].splitlines()[1:]
    rows = [line.split() for line in body if line.strip()]
    frame = pd.DataFrame({"level": [r[0] for r in rows], "y": [float(r[1]) for r in rows]})
    return frame, certified


def _digits(value: float, reference: float) -> float:
    """Significant digits of agreement, −log10 of the relative error (16 when equal)."""
    if value == reference:
        return 16.0
    return -math.log10(abs(value - reference) / abs(reference))


def _anova(engine_table, frame: pd.DataFrame):
    summaries, _ = summarise_levels(engine_table(frame), 0.95)
    return classical_anova(summaries)


@pytest.mark.parametrize("name", LOWER_AND_AVERAGE)
def test_lower_and_average_difficulty_agree_to_nine_digits(name, engine_table):
    frame, certified = _read_nist(name)
    result = _anova(engine_table, frame)
    assert _digits(result.f, certified["f"]) >= 9  # NIST StRD certified F statistic
    assert _digits(result.residual_sd, certified["residual_sd"]) >= 9  # NIST certified residual SD
    assert _digits(result.r_squared, certified["r_squared"]) >= 9  # NIST certified R-squared


def _exact_anova(frame: pd.DataFrame) -> tuple[float, float]:
    """F and residual SD in exact rational arithmetic on the float64 values as stored.

    Reference: Python's fractions module (exact), i.e. the best any float64 input allows.
    """
    groups: dict[str, list[Fraction]] = {}
    for level, y in zip(frame["level"], frame["y"], strict=True):
        groups.setdefault(level, []).append(Fraction(y))
    total = sum(len(values) for values in groups.values())
    grand = sum(sum(values) for values in groups.values()) / total
    means = {level: sum(values) / len(values) for level, values in groups.items()}
    between = sum(len(values) * (means[level] - grand) ** 2 for level, values in groups.items())
    within = sum(sum((v - means[level]) ** 2 for v in values) for level, values in groups.items())
    mean_square_within = within / (total - len(groups))
    f = between / (len(groups) - 1) / mean_square_within
    return float(f), math.sqrt(float(mean_square_within))


@pytest.mark.parametrize("name", HIGHER)
def test_higher_difficulty_reaches_what_float64_allows(name, engine_table):
    # The responses are 1000000000000.x: 13 constant digits, spread 0.1. Near 1e12
    # float64 values are spaced 2**-13 ≈ 1.22e-4 apart, so reading "1000000000000.4"
    # already moves it by up to 6.1e-5, i.e. up to 6e-4 of the spread. No float64
    # computation can therefore reproduce the certified values (computed from the
    # exact decimals) beyond about 3–4 digits: exact arithmetic on the stored values
    # gives F = 21.0008 for SmLs07 (4.4 digits) and residual SD to 4.6 digits.
    # Each level mean, a float64 near 1e12, carries the same 6e-5 rounding into the
    # between-level differences (0.1–0.2), which costs F roughly one more digit: we
    # measure 3.3 digits for F and 4.6 for the residual SD, and assert 3 and 4.
    frame, certified = _read_nist(name)
    result = _anova(engine_table, frame)
    assert _digits(result.f, certified["f"]) >= 3  # NIST StRD certified F statistic
    assert _digits(result.residual_sd, certified["residual_sd"]) >= 4  # NIST certified residual SD
    exact_f, exact_sd = _exact_anova(frame)
    # The residual SD uses no mean at 1e12 directly (sums of deviations from the
    # median), so it matches exact arithmetic on the stored data almost to the last bit.
    assert _digits(result.residual_sd, exact_sd) >= 12  # reference: exact rational arithmetic
    assert _digits(result.f, exact_f) >= 3  # reference: exact rational arithmetic
