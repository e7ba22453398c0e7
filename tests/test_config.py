"""Config validation: every mistake gets one located sentence, never a traceback."""

from __future__ import annotations

import pytest

from briefgen.config import load_spec, parse_spec
from briefgen.errors import ConfigError

GOOD = """\
title: Test brief
data:
  path: data.csv
target: minutes
groups: [site]
predictors: [distance]
output:
  dir: out
  paper: letter
"""


def test_valid_config_parses_with_defaults():
    spec = parse_spec(GOOD, "brief.yaml")
    assert spec.target == "minutes"
    assert spec.output.paper == "letter"
    assert spec.output.formats == ["html", "pdf", "json"]
    assert spec.confidence == 0.95
    assert spec.time is None


def test_time_accepts_a_column_name_or_a_mapping():
    short = parse_spec(GOOD + "time: when\n")
    assert short.time.column == "when" and short.time.period == "auto"
    long = parse_spec(GOOD + "time:\n  column: when\n  period: week\n")
    assert long.time.period == "week"


@pytest.mark.parametrize("period", ["auto", "day", "week", "month", "quarter", "year"])
def test_every_period_is_accepted(period):
    spec = parse_spec(GOOD + f"time:\n  column: when\n  period: {period}\n")
    assert spec.time.period == period


@pytest.mark.parametrize("period", ["fortnight", "yearly", "Q"])
def test_unknown_period_names_the_key_and_the_choices(period):
    with pytest.raises(ConfigError) as caught:
        parse_spec(GOOD + f"time:\n  column: when\n  period: {period}\n", "brief.yaml")
    message = str(caught.value)
    assert "key 'time.period' is invalid" in message and "brief.yaml line 12" in message
    assert "'quarter' or 'year'" in message


def test_misspelled_key_names_line_and_suggests():
    text = GOOD.replace("predictors:", "predictor:")
    with pytest.raises(ConfigError) as caught:
        parse_spec(text, "brief.yaml")
    message = str(caught.value)
    assert message.startswith("brief.yaml line 6:")
    assert "unknown key 'predictor'" in message
    assert "did you mean 'predictors'?" in message


def test_misspelled_nested_key_suggests_within_its_section():
    text = GOOD.replace("  paper: letter", "  papr: letter")
    with pytest.raises(
        ConfigError, match=r"line 9: unknown key 'output.papr'; did you mean 'paper'\?"
    ):
        parse_spec(text, "brief.yaml")


def test_missing_required_key():
    text = GOOD.replace("target: minutes\n", "")
    with pytest.raises(ConfigError, match="required key 'target' is missing"):
        parse_spec(text, "brief.yaml")


def test_invalid_choice_names_key_and_line():
    text = GOOD.replace("paper: letter", "paper: a3")
    with pytest.raises(ConfigError) as caught:
        parse_spec(text, "brief.yaml")
    assert "line 9" in str(caught.value) and "output.paper" in str(caught.value)


def test_broken_yaml_gives_a_line():
    with pytest.raises(ConfigError, match="line"):
        parse_spec("title: [unclosed\ntarget: x\n", "brief.yaml")


def test_not_a_mapping():
    with pytest.raises(ConfigError, match="expected a mapping"):
        parse_spec("- just\n- a list\n", "brief.yaml")


def test_missing_file(tmp_path):
    with pytest.raises(ConfigError, match="config file not found"):
        load_spec(tmp_path / "nope.yaml")


def test_paths_resolve_against_the_config_folder(tmp_path):
    config = tmp_path / "sub" / "brief.yaml"
    config.parent.mkdir()
    config.write_text(GOOD)
    spec = load_spec(config)
    assert spec.data_path == tmp_path / "sub" / "data.csv"
    assert spec.output_dir() == tmp_path / "sub" / "out"


def test_cross_defaults_to_first_two_groups():
    spec = parse_spec(GOOD.replace("groups: [site]", "groups: [site, shift, team]"))
    assert spec.cross_pairs == [("site", "shift")]


def test_packaged_demo_config_matches_the_repository_copy():
    from pathlib import Path

    from briefgen.cli import demo_config_path

    packaged = load_spec(demo_config_path())
    repo = load_spec(Path(__file__).parents[1] / "configs" / "demo.yaml")
    assert packaged.data_path == repo.data_path
    same = {"data", "output", "source_file"}
    assert packaged.model_dump(exclude=same) == repo.model_dump(exclude=same)


def test_cross_pairs_must_name_two_different_groups():
    base = GOOD.replace("groups: [site]", "groups: [site, shift]")
    with pytest.raises(
        ConfigError, match=r"line 10: key 'cross' is invalid: 'team' is not listed in groups"
    ):
        parse_spec(base + "cross: [[site, team]]\n", "brief.yaml")
    with pytest.raises(ConfigError, match="two different groups"):
        parse_spec(base + "cross: [[site, site]]\n", "brief.yaml")
    assert parse_spec(base + "cross: [[shift, site]]\n").cross_pairs == [("shift", "site")]
