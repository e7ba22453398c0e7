"""Quantiles by narrowing: the engine's own exact type 7 quantiles in bounded memory.

Above a threshold set by the engine's memory limit the analyses count values in buckets instead of
handing the engine every value. These checks force narrowing on small data and require
the same numbers as the engine's quantile (DuckDB ``quantile_cont``, bit for bit) and
numpy's type 7 (``method="linear"``, Hyndman and Fan 1996 definition 7, to rounding),
and whole briefs byte-identical with and without it.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from palmerpenguins import load_penguins

from briefgen.config import EngineSpec, load_spec
from briefgen.pipeline import build_brief
from briefgen.stats.core import quantiles
from briefgen.stats.core.quantiles import narrowed_quantiles, narrowing, quantiles_for

PROBABILITIES = (0.01, 0.25, 0.5, 0.75, 0.99, 0.0, 1.0)


def _skewed(rows: int = 60_000) -> pd.DataFrame:
    """Constructed: lognormal values with a block of ties at 0, missing cells, a null key."""
    rng = np.random.default_rng(31)
    frame = pd.DataFrame(
        {
            "y": np.exp(rng.normal(0.0, 2.5, rows)),
            "g": rng.choice(["north", "south", "east", None], rows),
            "h": rng.choice(["day", "night"], rows),
        }
    )
    frame.loc[::9, "y"] = 0.0
    frame.loc[::13, "y"] = np.nan
    return frame


@pytest.mark.parametrize("fetch_up_to", [50_000, 40])  # 40: forces two or more narrowings
def test_narrowed_quantiles_equal_numpy_type_7(engine_table, monkeypatch, fetch_up_to):
    monkeypatch.setattr(quantiles, "FETCH_UP_TO", fetch_up_to)
    frame = _skewed()
    table = engine_table(frame)
    found = narrowed_quantiles(table, "y", PROBABILITIES, ["g", "h"])
    assert len(found) == 8
    for (g, h), values in found.items():
        level = frame[(frame.g.isna() if g is None else frame.g == g) & (frame.h == h)]
        # reference: numpy.quantile(method="linear"), type 7 of Hyndman and Fan (1996)
        expected = np.quantile(level.y.dropna(), PROBABILITIES, method="linear")
        assert values == pytest.approx(expected, rel=1e-14, abs=0.0)
    (overall,) = narrowed_quantiles(table, "y", (0.5,)).values()
    assert overall[0] == np.median(frame.y.dropna())  # an odd or even count's middle
    # Bounds the caller counted (here pandas) replace the first pass and change nothing;
    # a key counted 0 has no value.
    counted = (
        frame.dropna(subset=["y"]).groupby(["g", "h"], dropna=False).y.agg(["count", "min", "max"])
    )
    bounds = {(None if pd.isna(g) else g, h): tuple(row) for (g, h), row in counted.iterrows()} | {
        ("nowhere", "day"): (0, None, None)
    }
    assert narrowed_quantiles(table, "y", PROBABILITIES, ["g", "h"], bounds) == found


def test_narrowed_quantiles_are_duckdbs_bit_for_bit(monkeypatch):
    import ibis

    monkeypatch.setattr(quantiles, "FETCH_UP_TO", 40)
    frame = _skewed()
    frame["y"] = frame.y + 1e9  # a large offset, where the interpolation's rounding shows
    # Many small keys of one-decimal values: the interpolation between neighbours is where
    # DuckDB's fused multiply-add differs from the plain expression by one unit in the
    # last place (seen on 212 of 1,610 random samples before type7 followed it).
    rng = np.random.default_rng(32)
    small = pd.DataFrame(
        {"y": np.round(rng.gamma(2.0, 8.0, 20_000), 1), "g": rng.integers(0, 400, 20_000)}
    )
    small["g"] = small.g.astype(str)
    con = ibis.duckdb.connect()
    for name, data in (("offset", frame), ("small", small)):
        table = con.create_table(name, data)
        found = narrowed_quantiles(table, "y", PROBABILITIES, ["g"])
        present = table.filter(table.y.notnull())
        # reference: DuckDB quantile_cont, the quantile the analyses use below the threshold
        engine = present.group_by("g").aggregate(q=present.y.quantile(list(PROBABILITIES)))
        rows = engine.to_pyarrow().to_pylist()
        assert len(rows) == len(found)
        for row in rows:
            assert found[(row["g"],)] == tuple(row["q"]), row["g"]


def test_ties_and_a_single_value_need_no_fetch(engine_table):
    values = [2.0] * 1000 + [5.0] * 3
    table = engine_table(pd.DataFrame({"y": values, "g": ["a"] * 1003}))
    # 0.9975: h = 999.495 lies between the last 2.0 and the first 5.0
    found = narrowed_quantiles(table, "y", (0.5, 0.9975, 1.0), ["g"])
    # reference: numpy.quantile(method="linear")
    expected = np.quantile(values, (0.5, 0.9975, 1.0), method="linear")
    assert found[("a",)] == pytest.approx(expected, rel=1e-15)
    assert 2.0 < found[("a",)][1] < 5.0
    one = engine_table(pd.DataFrame({"y": [7.5], "g": ["b"]}))
    assert narrowed_quantiles(one, "y", PROBABILITIES, ["g"]) == {("b",): (7.5,) * 7}


def test_the_threshold_follows_the_memory_limit_and_the_predictors():
    # 100 bytes a target value with two predictors (four medians in one query), more with more
    assert quantiles.narrow_from("512MB") == 5_120_000
    assert quantiles.narrow_from(EngineSpec().memory_limit) == 1_920_000  # the default, 192MB
    assert quantiles.narrow_from("1GB") == 10_000_000
    assert quantiles.narrow_from("1GiB", predictors=5) == 2**30 // (16 * 10 + 36)
    assert quantiles.narrow_from(None) == quantiles.NARROW_FROM  # Spark: no limit to go by


def test_the_threshold_decides_within_the_block(monkeypatch):
    monkeypatch.setattr(quantiles, "NARROW_FROM", 100)
    assert not narrowing()
    with quantiles_for(99):
        assert not narrowing()
    with quantiles_for(100):
        assert narrowing()
    assert not narrowing()


def _penguins_config(folder: Path) -> Path:
    load_penguins().to_csv(folder / "penguins.csv", index=False)
    path = folder / "brief.yaml"
    path.write_text(
        "title: Penguins\ndata:\n  path: penguins.csv\n"
        "target: body_mass_g\ngroups: [species, island, sex]\n"
        "predictors: [flipper_length_mm, bill_depth_mm]\nlog_target: true\n",
        encoding="utf-8",
    )
    return path


@pytest.mark.parametrize("data", ["penguins", "demo"])
def test_a_brief_is_byte_identical_with_narrowed_quantiles(tmp_path, monkeypatch, data):
    # Palmer penguins (open dataset, palmerpenguins package): missing cells in the target,
    # the predictors and a group. The invented demo: weekly periods keyed by timestamps.
    # Every quantile the brief takes goes through narrowing.
    if data == "penguins":
        spec = load_spec(_penguins_config(tmp_path))
    else:
        spec = load_spec(Path(__file__).parents[1] / "briefgen" / "demo" / "demo.yaml")
    build_brief(spec, tmp_path / "engine", built_on="2026-12-02")
    monkeypatch.setattr(quantiles, "narrow_from", lambda *limit: 0)
    monkeypatch.setattr(quantiles, "FETCH_UP_TO", 5)
    calls = []
    original = quantiles.narrowed_quantiles

    def counted(*args, **kwargs):
        calls.append(args[1])
        return original(*args, **kwargs)

    for module in ("core.summary", "histogram", "density"):
        target = __import__(f"briefgen.stats.{module}", fromlist=["x"])
        monkeypatch.setattr(target, "narrowed_quantiles", counted)
    build_brief(spec, tmp_path / "narrowed", built_on="2026-12-02")
    # The target's quartiles per level; the fits and correlations shift by the middle of
    # the range, which needs no quantile.
    assert set(calls) == {"y"}
    for name in ("stats.json", "brief.html"):
        assert (tmp_path / "narrowed" / name).read_bytes() == (
            tmp_path / "engine" / name
        ).read_bytes(), name
