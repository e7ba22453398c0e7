"""Many levels and miscast columns: the fold rule, the reference level, and role flags.

Constructed cases (invented, seeded). The fold rule is the one stated in
``briefgen.stats.core.frame.shown_levels``; level means are checked against pandas,
Welch intervals against scipy.stats.ttest_ind(equal_var=False), Tukey outlier
counts against numpy quantiles (type 7, numpy's default, Hyndman & Fan 1996).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats as scipy_stats

from briefgen.config import parse_spec
from briefgen.datatext import clean
from briefgen.errors import ConfigError
from briefgen.present.cautions import cautions, level_cautions
from briefgen.present.family import build_family
from briefgen.present.sections.groups import group_finding
from briefgen.present.wording import wording_for
from briefgen.profile import column_roles
from briefgen.source import open_source, read_table
from briefgen.starter import propose
from briefgen.stats import compute
from briefgen.stats.core import frame as frame_module
from briefgen.stats.regression import EXACT_DISTINCT_UP_TO
from briefgen.tables import effects_table, fold_note, group_table


def _stats(frame: pd.DataFrame, folder, body: str):
    frame.to_parquet(folder / "data.parquet", index=False)
    spec = parse_spec(
        f"title: Levels\ndata:\n  path: data.parquet\ntarget: y\n{body}", folder / "brief.yaml"
    )
    return compute(open_source(spec), spec)


def _twelve_equal_levels(seed: int = 20261202, offset: float = 0.0) -> pd.DataFrame:
    """12 levels of 40 rows; the level last by name ("L12") lies farthest from the rest."""
    rng = np.random.default_rng(seed)
    frames = []
    for i in range(1, 13):
        shift = 3.0 if i == 12 else 0.15 * i
        frames.append(
            pd.DataFrame({"site": f"L{i:02d}", "y": offset + shift + rng.normal(0.0, 1.0, 40)})
        )
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def twelve(tmp_path_factory):
    frame = _twelve_equal_levels()
    stats = _stats(frame, tmp_path_factory.mktemp("twelve"), "groups: [site]\nmax_levels: 8\n")
    return stats, frame


def _expected_kept(frame: pd.DataFrame, keep: int) -> list[str]:
    # The stated rule, recomputed with pandas: size, then |mean − overall mean|, then name.
    sizes = frame.groupby("site").size()
    distance = (frame.groupby("site").y.mean() - frame.y.mean()).abs()
    table = pd.DataFrame({"n": sizes, "distance": distance}).reset_index()
    ranked = table.sort_values(["n", "distance", "site"], ascending=[False, False, True])
    return list(ranked.site[:keep])


def test_equal_sizes_keep_the_levels_farthest_from_the_mean(twelve):
    stats, frame = twelve
    shown = stats.groups[0].shown
    assert shown.other_label == "Other (5 levels)"
    assert "L12" in shown.kept  # the most extreme level is last by name, yet shown
    assert list(shown.kept) == _expected_kept(frame, 7)
    assert shown.rows == len(frame) and shown.folded_rows == 5 * 40


def test_other_is_not_the_reference_although_it_is_largest(twelve):
    stats, frame = twelve
    comparison = stats.groups[0].comparison
    assert comparison.reference_level != "Other (5 levels)"
    # Among equally large named levels the reference is the first by name (stated rule).
    assert comparison.reference_level == min(stats.groups[0].shown.kept)
    caption = effects_table(comparison, wording_for(stats, "y"), "site").caption
    assert caption.endswith("first by name of the equally largest levels")
    effect = next(e for e in comparison.effects if e.level == "L12")
    a = frame.y[frame.site == "L12"].to_numpy()
    b = frame.y[frame.site == comparison.reference_level].to_numpy()
    # Reference: scipy.stats.ttest_ind(equal_var=False), Welch's interval of mean(a) − mean(b).
    welch = scipy_stats.ttest_ind(a, b, equal_var=False)
    low, high = welch.confidence_interval(0.95)
    assert effect.difference == pytest.approx(a.mean() - b.mean(), rel=1e-9)
    assert (effect.ci_low, effect.ci_high) == pytest.approx((low, high), rel=1e-9)


def test_the_brief_says_what_was_folded(twelve):
    stats, frame = twelve
    group = stats.groups[0]
    note = fold_note(group.shown, "site")
    folded = sorted(set(frame.site) - set(group.shown.kept))
    assert note.startswith("Other (5 levels) holds 200 rows (42%): ")  # 200 / 480
    assert all(level in note for level in folded)
    words = wording_for(stats, "y")
    assert note in group_table(group, words, "site").notes


def test_fold_rule_holds_at_a_large_offset(tmp_path):
    # Means 0.01·k apart near 1e12: float64 spacing there is 1.2e-4, so unshifted sums
    # would blur the distances; the exact ranking is known from the construction.
    rng = np.random.default_rng(7)
    frames = []
    for k in range(12):
        noise = np.repeat(rng.uniform(0.01, 0.05, 10), 2) * np.tile([1.0, -1.0], 10)
        frames.append(pd.DataFrame({"site": f"s{k:02d}", "y": 1e12 + 0.01 * k + noise}))
    frame = pd.concat(frames, ignore_index=True)
    stats = _stats(frame, tmp_path, "groups: [site]\nmax_levels: 5\n")
    # Overall mean 1e12 + 0.055: farthest are s00 and s11 (0.055), then s01 and s10 (0.045).
    assert set(stats.groups[0].shown.kept) == {"s00", "s11", "s01", "s10"}


def test_levels_are_counted_after_cleaning_and_clean_columns_are_copied_once(tmp_path, monkeypatch):
    # "L01" and "L01" with a bidi mark, "L02" and "L02" with a trailing tab are one level
    # each once cleaned (datatext.clean, recomputed in pandas here), so the fold ranks
    # them with their merged sizes: 80 rows beat the other levels' 40.
    frame = _twelve_equal_levels()
    dirty = frame.site.map({"L03": "L01\u200e", "L04": "L02\t"}).fillna(frame.site)
    copies = []
    stored = frame_module.materialize
    monkeypatch.setattr(frame_module, "materialize", lambda t: copies.append(1) or stored(t))
    stats = _stats(frame.assign(site=dirty), tmp_path, "groups: [site]\nmax_levels: 8\n")
    cleaned = frame.assign(site=dirty.map(clean))
    shown = stats.groups[0].shown
    assert shown.levels_in_data == 10 and shown.rows == len(frame)
    assert list(shown.kept) == _expected_kept(cleaned, 7)
    assert shown.kept[:2] == ("L01", "L02")  # merged: 80 rows each
    sizes = {s.level: s.n for s in stats.groups[0].summaries}
    assert sizes["L01"] == sizes["L02"] == 80
    assert len(copies) == 2  # the typed copy, then the cleaned one

    copies.clear()
    _stats(frame, tmp_path, "groups: [site]\nmax_levels: 8\n")
    assert len(copies) == 1  # nothing to clean: no second copy


def test_ties_in_size_and_distance_fall_to_the_name_and_row_order_does_not_matter(tmp_path):
    # Nine levels of 30 rows with exactly symmetric noise: means are exactly 0, +2 and −2.
    noise = np.tile([-1.0, 0.0, 1.0], 10)
    means = {"a": 0.0, "b": 0.0, "c": 0.0, "d": 0.0, "e": 0.0, "f": 0.0, "g": 0.0}
    means |= {"y_high": 2.0, "z_low": -2.0}
    frame = pd.concat(
        [pd.DataFrame({"site": name, "y": m + noise}) for name, m in means.items()],
        ignore_index=True,
    )
    first = _stats(frame, tmp_path, "groups: [site]\nmax_levels: 8\n").groups[0].shown
    shuffled = frame.sample(frac=1.0, random_state=3).reset_index(drop=True)
    second = _stats(shuffled, tmp_path, "groups: [site]\nmax_levels: 8\n").groups[0].shown
    assert first.kept == ("y_high", "z_low", "a", "b", "c", "d", "e")
    assert first == second


def test_other_is_never_named_highest_or_lowest(tmp_path):
    # The three smallest levels are far above the rest, so the fold has the highest mean.
    rng = np.random.default_rng(11)
    frames = []
    for i in range(10):
        shift = 5.0 if i >= 7 else 0.1 * i
        frames.append(
            pd.DataFrame({"site": f"site {i}", "y": shift + rng.normal(0, 1, 60 - 4 * i)})
        )
    frame = pd.concat(frames, ignore_index=True)
    stats = _stats(frame, tmp_path, "groups: [site]\nmax_levels: 8\n")
    group = stats.groups[0]
    assert max(group.summaries, key=lambda s: s.mean).level == group.shown.other_label
    finding = group_finding(
        group, group.comparison, wording_for(stats, "y"), "site", build_family(stats)
    )
    assert group.shown.other_label not in finding.levels
    assert group.shown.other_label not in finding.headline
    named = frame[frame.site.isin(group.shown.kept)].groupby("site").y.mean()
    # pandas: the highest named level leads; the lowest closes (ties named between them).
    assert (finding.levels[0], finding.levels[-1]) == (named.idxmax(), named.idxmin())


@pytest.fixture(scope="module")
def numeric_group(tmp_path_factory):
    # The target rises steadily across 30 whole-number values of "hour".
    rng = np.random.default_rng(30)
    hour = np.repeat(np.arange(30), 20)
    dose = rng.integers(1, 4, hour.size)  # three codes used as a predictor
    frame = pd.DataFrame(
        {"hour": hour, "dose": dose, "y": 0.5 * hour + rng.normal(0, 2, hour.size)}
    )
    folder = tmp_path_factory.mktemp("numeric")
    stats = _stats(frame, folder, "groups: [hour]\npredictors: [dose]\n")
    return stats, frame, folder


def test_a_numeric_group_with_many_values_is_flagged(numeric_group):
    stats, frame, _ = numeric_group
    shown = stats.groups[0].shown
    assert shown.numeric and shown.levels_in_data == frame.hour.nunique() == 30
    assert shown.folded_share == pytest.approx(
        19 * 20 / len(frame)
    )  # 11 of 30 shown (max_levels 12)
    notes = level_cautions(stats, wording_for(stats, "y"), {"hour": "hour"})
    flagged = [n for n in notes if n.startswith("Hour holds numbers with 30 distinct values")]
    assert len(flagged) == 1 and "list hour under predictors" in flagged[0]
    assert "63% of rows" in flagged[0]


def test_a_predictor_with_three_values_is_flagged_as_codes(numeric_group):
    stats, frame, _ = numeric_group
    (fit,) = stats.fits
    assert fit.x_distinct == len(np.unique(frame.dose)) == 3
    words = wording_for(stats, "y")
    notes = cautions(stats, words, {"hour": "hour"})
    assert any(n.startswith("Dose takes only 3 distinct values") and "groups" in n for n in notes)


def test_a_text_group_and_a_measure_predictor_are_not_flagged(twelve):
    stats, _ = twelve
    assert level_cautions(stats, wording_for(stats, "y"), {"site": "site"}) == []


def test_init_proposes_the_numeric_column_as_predictor_and_codes_as_groups(tmp_path):
    rng = np.random.default_rng(5)
    n = 600
    frame = pd.DataFrame(
        {
            "hour": np.repeat(np.arange(30), 20),  # 30 whole numbers: a predictor
            "kind": rng.integers(1, 4, n),  # 3 whole numbers: codes, a group
            "grade": rng.choice([1.0, 2.5, 4.0], n),  # 3 decimals: codes as well
            "y": rng.normal(10, 2, n),
            "week": np.tile(np.arange(30), 20),  # 30 whole numbers after the outcome: an axis
        }
    )
    path = tmp_path / "data.csv"
    frame.to_csv(path, index=False)
    proposal = propose(column_roles(read_table(path, "csv", "data.csv")))
    assert proposal["target"] == "y"
    assert "hour" in proposal["predictors"] and "hour" not in proposal["groups"]
    assert "week" in proposal["predictors"]
    assert set(proposal["groups"]) == {"kind", "grade"}


def test_outlier_counts_say_which_box_they_use(tmp_path):
    rng = np.random.default_rng(17)
    # A long-tailed level beside a tight one: the box of all values and each level's box
    # mark different values.
    y = np.concatenate([rng.lognormal(0, 1, 200), rng.normal(0, 0.1, 200)])
    frame = pd.DataFrame({"site": np.repeat(["north", "south"], 200), "y": y})
    stats = _stats(frame, tmp_path, "groups: [site]\nmax_levels: 8\n")

    def tukey(values: np.ndarray) -> int:
        # Reference: numpy quantiles (linear, type 7) and Tukey's (1977) 1.5 × IQR fences.
        q1, q3 = np.quantile(values, [0.25, 0.75])
        return int(((values < q1 - 1.5 * (q3 - q1)) | (values > q3 + 1.5 * (q3 - q1))).sum())

    assert stats.overall_box.outlier_count == tukey(frame.y.to_numpy())
    per_level = {b.level: b.outlier_count for b in stats.groups[0].boxes}
    assert per_level == {s: tukey(g.y.to_numpy()) for s, g in frame.groupby("site")}
    assert sum(per_level.values()) != stats.overall_box.outlier_count  # the case that confused
    words = wording_for(stats, "y")
    (note,) = [n for n in cautions(stats, words, {"site": "site"}) if "far from the rest" in n]
    assert note.startswith(f"{stats.overall_box.outlier_count} values")
    assert "box of all values" in note and "each level's own box" in note
    table = group_table(stats.groups[0], words, "site")
    assert table.header[-1] == "Outliers in level"


def test_distinct_counts_are_exact_for_few_values_and_large_for_many(tmp_path):
    rng = np.random.default_rng(23)
    n = 2000
    frame = pd.DataFrame(
        {
            "steps": rng.integers(0, 20, n).astype(float),  # 20 values: counted exactly
            "load": rng.normal(0, 1, n),  # continuous: an estimate, far above the codes
            "y": rng.normal(0, 1, n),
        }
    )
    stats = _stats(frame, tmp_path, "predictors: [steps, load]\n")
    fits = {f.predictor: f for f in stats.fits}
    # Reference: numpy's np.unique.
    assert fits["steps"].x_distinct == len(np.unique(frame.steps)) == 20
    assert fits["load"].x_distinct > EXACT_DISTINCT_UP_TO
    assert fits["load"].x_distinct == pytest.approx(len(np.unique(frame.load)), rel=0.1)
    assert level_cautions(stats, wording_for(stats, "y"), {}) == []


def test_sizes_count_rows_with_a_target_so_every_count_agrees(tmp_path):
    # "a" has the most rows but most lack a target; by rows used it is the smallest.
    rng = np.random.default_rng(29)
    sizes = {"a": 60, "b": 40, "c": 35, "d": 30, "e": 25}
    frame = pd.concat(
        [pd.DataFrame({"site": k, "y": rng.normal(0, 1, n)}) for k, n in sizes.items()],
        ignore_index=True,
    )
    frame.loc[frame.index[:45], "y"] = np.nan  # 45 of a's 60 rows: 15 left with a value
    stats = _stats(frame, tmp_path, "groups: [site]\nmax_levels: 4\n")
    group = stats.groups[0]
    assert group.shown.kept == ("b", "c", "d")
    assert set(group.shown.folded) == {"a", "e"}
    other = next(s for s in group.summaries if s.level == group.shown.other_label)
    assert group.shown.folded_rows == other.n == 15 + 25
    assert group.shown.rows == sum(s.n for s in group.summaries) == int(frame.y.notna().sum())
    assert fold_note(group.shown, "site").startswith(f"{group.shown.other_label} holds 40 rows")


def test_max_levels_leaves_two_named_levels_beside_other(tmp_path):
    with pytest.raises(ConfigError, match="max_levels"):
        parse_spec(
            "title: t\ndata:\n  path: d.csv\ntarget: y\nmax_levels: 2\n", tmp_path / "b.yaml"
        )
