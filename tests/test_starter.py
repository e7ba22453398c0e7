"""`briefgen init` on an open dataset: the proposal is sensible, valid, and builds."""

from __future__ import annotations

import palmerpenguins
import pytest

from briefgen.cli import main
from briefgen.config import load_spec


@pytest.fixture
def penguins_csv(tmp_path):
    # Palmer penguins (Horst, Hill & Gorman 2020), from the palmerpenguins package.
    path = tmp_path / "penguins.csv"
    palmerpenguins.load_penguins().to_csv(path, index=False)
    return path


def test_init_proposes_roles_from_the_columns(penguins_csv, tmp_path):
    config = tmp_path / "brief.yaml"
    assert main(["init", str(penguins_csv), "--config", str(config)]) == 0
    spec = load_spec(config)
    assert spec.target == "body_mass_g"  # the last numeric measure
    # Fewest levels first, then column order: sex (2), species, island (3 each); year (3) is left.
    assert spec.groups == ["sex", "species", "island"]
    assert spec.predictors == ["bill_length_mm", "bill_depth_mm", "flipper_length_mm"]
    assert spec.data_path.resolve() == penguins_csv.resolve()
    assert "Not used: year (category)" in config.read_text()


def test_init_refuses_to_overwrite(penguins_csv, tmp_path, capsys):
    config = tmp_path / "brief.yaml"
    config.write_text("keep me")
    assert main(["init", str(penguins_csv), "--config", str(config)]) == 2
    assert config.read_text() == "keep me"
    assert "already exists" in capsys.readouterr().err


def test_proposed_config_builds_a_brief(penguins_csv, tmp_path):
    config = tmp_path / "brief.yaml"
    assert main(["init", str(penguins_csv), "--config", str(config)]) == 0
    text = config.read_text().replace("formats: [html, pdf, json]", "formats: [html, json]")
    config.write_text(text)
    assert main(["build", str(config)]) == 0
    assert (tmp_path / "out" / "brief.html").exists()
