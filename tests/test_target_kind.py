"""The kind and scale of the target, detected in the engine and overridden by the config.

Constructed cases from seeded generators; the reference for each count is numpy on
the same values. The 25% zero threshold is common practice, no published source.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.proportion import proportion_confint

from briefgen.config import parse_spec
from briefgen.errors import ConfigError
from briefgen.stats.core.frame import build_frame
from briefgen.stats.groups import GroupAnalysis
from briefgen.stats.histogram import Histogram
from briefgen.stats.overall import Overall
from briefgen.stats.target_kind import ZERO_HEAVY, target_kind

N = 600


def _frame(engine_table, y, groups=None, extra=""):
    data = {"y": y} | ({"g": groups} if groups is not None else {})
    spec = parse_spec(
        "title: t\ndata: {path: d.csv}\ntarget: y\n"
        + ("groups: [g]\n" if groups is not None else "")
        + extra
    )
    return build_frame(engine_table(pd.DataFrame(data)), spec, cache=False), spec


def _values(kind: str) -> np.ndarray:
    rng = np.random.default_rng(20261202)
    return {
        "binary": (rng.random(N) < 0.2).astype(float),
        "count": rng.poisson(0.6, N).astype(float),  # e^-0.6 ≈ 55% zeros
        "few_zeros": rng.poisson(6.0, N).astype(float),  # e^-6 ≈ 0.25% zeros
        "negative": rng.normal(1.0, 4.0, N),
        "positive": rng.lognormal(2.0, 0.6, N),
        "offset_binary": 1e12 + (rng.random(N) < 0.5),
    }[kind]


@pytest.mark.parametrize(
    ("values", "kind", "scale"),
    [
        ("binary", "binary", "ratio"),
        ("count", "count", "ratio"),
        ("few_zeros", "continuous", "ratio"),
        ("negative", "continuous", "interval"),
        ("positive", "continuous", "ratio"),
        # Whole numbers near 1e12 are neither 0/1 nor zero-heavy: the fmod test stays exact there.
        ("offset_binary", "continuous", "ratio"),
    ],
)
def test_detection_on_constructed_data(engine_table, values, kind, scale):
    y = _values(values)
    frame, _ = _frame(engine_table, y)
    decided = target_kind(frame)
    assert (decided.kind, decided.scale) == (kind, scale)
    assert decided.detected == kind and decided.kind_reason and decided.scale_reason
    # numpy on the same values is the reference for the counts the rules read.
    assert decided.n == N and decided.zeros == int((y == 0).sum())
    assert decided.negatives == int((y < 0).sum())
    assert decided.non_integers == int((y % 1 != 0).sum())


def test_zero_threshold_is_inclusive(engine_table):
    quarter = int(ZERO_HEAVY * 100)
    at = np.array([0.0] * quarter + [1.0, 2.0, 3.0] * 25)
    below = np.array([0.0] * (quarter - 1) + [1.0, 2.0, 3.0] * 25 + [4.0])
    assert target_kind(_frame(engine_table, at)[0]).kind == "count"
    assert target_kind(_frame(engine_table, below)[0]).kind == "continuous"


def test_missing_values_do_not_change_the_kind(engine_table):
    y = _values("binary")
    y[::11] = np.nan
    decided = target_kind(_frame(engine_table, y)[0])
    assert decided.kind == "binary" and decided.n == int((~np.isnan(y)).sum())


def test_overrides_are_used_and_checked(engine_table):
    frame, _ = _frame(engine_table, _values("few_zeros"))
    assert target_kind(frame, "count").kind == "count"
    assert target_kind(frame, "continuous", "interval").scale == "interval"
    with pytest.raises(ConfigError, match="'target_kind' is binary"):
        target_kind(frame, "binary")
    negative, _ = _frame(engine_table, _values("negative"))
    with pytest.raises(ConfigError, match="'target_kind' is count"):
        target_kind(negative, "count")


def test_config_refuses_unknown_kinds_and_log_fits_without_a_true_zero():
    base = "title: t\ndata: {path: d.csv}\ntarget: y\n"
    with pytest.raises(ConfigError, match="target_kind"):
        parse_spec(base + "target_kind: proportion\n")
    with pytest.raises(ConfigError, match="'scale'"):
        parse_spec(base + "log_target: true\nscale: interval\n")


def test_binary_target_has_shares_and_no_boxes(engine_table):
    rng = np.random.default_rng(1927)
    groups = rng.choice(["a", "b", "c"], N)
    y = (rng.random(N) < np.where(groups == "a", 0.4, 0.15)).astype(float)
    frame, spec = _frame(engine_table, y, groups)
    frame = replace(frame, kind=target_kind(frame))
    overall = Overall(0.95)(frame)
    assert overall.box is None
    assert overall.share.events == int(y.sum())
    (group,) = [analysis(frame) for analysis in GroupAnalysis.plan(spec, frame)]
    assert group.boxes == () and group.comparison is None
    assert group.share_comparison.test == "chi_square"
    for share in group.shares:
        values = y[groups == share.level]
        # statsmodels' Wilson interval on numpy's counts is the reference.
        assert share.events == int(values.sum())
        assert (share.ci_low, share.ci_high) == pytest.approx(
            proportion_confint(int(values.sum()), len(values), method="wilson")
        )


def test_count_target_has_the_share_of_zeros_per_level(engine_table):
    rng = np.random.default_rng(5)
    groups = rng.choice(["a", "b"], N)
    y = rng.poisson(np.where(groups == "a", 0.3, 1.2)).astype(float)
    frame, spec = _frame(engine_table, y, groups)
    frame = replace(frame, kind=target_kind(frame))
    (group,) = [analysis(frame) for analysis in GroupAnalysis.plan(spec, frame)]
    assert group.comparison is not None and group.boxes
    for share in group.shares:
        # numpy's count of zeros on the same rows is the reference.
        assert share.events == int((y[groups == share.level] == 0).sum())


def test_count_histogram_has_one_bin_per_whole_number(engine_table):
    y = _values("count")
    frame, spec = _frame(engine_table, y)
    frame = replace(frame, kind=target_kind(frame))
    (histogram,) = Histogram.plan(spec, frame)
    bins = histogram(frame)
    assert bins.rule == "whole_numbers"
    # numpy.histogram with edges at k ± 0.5 is the reference.
    expected, edges = np.histogram(y, bins=np.arange(y.min() - 0.5, y.max() + 1.0))
    assert bins.edges == tuple(edges) and bins.counts == tuple(expected)
    binary, spec = _frame(engine_table, _values("binary"))
    assert Histogram.plan(spec, replace(binary, kind=target_kind(binary))) == ()
