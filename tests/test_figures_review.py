"""The figure review: its colour measures against their published definitions, its rules on
constructed figures, the shipped palette measured, and a deliberately bad theme stopping a build."""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
import yaml
from matplotlib.figure import Figure

from briefgen.cli import demo_config_path, main
from briefgen.config import load_spec
from briefgen.errors import FigureReviewError
from briefgen.figures import colour, cross, relationship, review, theme
from briefgen.pipeline import build_brief

BUILT_ON = "2026-12-02"


# --- WCAG 2.1 contrast ------------------------------------------------------------------


def test_contrast_ratio_matches_wcag_definition():
    # WCAG 2.1, "contrast ratio": (L1 + 0.05) / (L2 + 0.05); white on black is the maximum, 21:1.
    assert colour.contrast_ratio("#000000", "#ffffff") == pytest.approx(21.0)
    assert colour.contrast_ratio("#ffffff", "#000000") == pytest.approx(21.0)
    assert colour.contrast_ratio("#3a7bd5", "#3a7bd5") == pytest.approx(1.0)
    # #777777 on white is 4.48:1, just short of 1.4.3's 4.5:1; #767676 is the lightest gray
    # that passes, at 4.54:1 (both values widely quoted for WCAG checks; from memory).
    assert colour.contrast_ratio("#777777", "#ffffff") == pytest.approx(4.48, abs=0.005)
    assert colour.contrast_ratio("#767676", "#ffffff") == pytest.approx(4.54, abs=0.005)


def test_relative_luminance_matches_wcag_formula():
    # WCAG 2.1, "relative luminance": sRGB channel c ≤ 0.03928 → c/12.92, else
    # ((c + 0.055)/1.055)^2.4; L = 0.2126 R + 0.7152 G + 0.0722 B.
    assert colour.relative_luminance("#ffffff") == pytest.approx(1.0)
    assert colour.relative_luminance("#000000") == pytest.approx(0.0)
    assert colour.relative_luminance("#ff0000") == pytest.approx(0.2126)
    assert colour.relative_luminance("#00ff00") == pytest.approx(0.7152)
    assert colour.relative_luminance("#0000ff") == pytest.approx(0.0722)
    gray = 128 / 255
    assert colour.relative_luminance("#808080") == pytest.approx(((gray + 0.055) / 1.055) ** 2.4)
    # Below the threshold the segment is linear: #050505 → (5/255)/12.92.
    assert colour.relative_luminance("#050505") == pytest.approx((5 / 255) / 12.92)


# --- colour-vision simulation -----------------------------------------------------------

# Machado, Oliveira & Fernandes (2009), "A physiologically-based model for simulation of color
# vision deficiency", IEEE TVCG 15(6), supplementary table, severity 1.0 (dichromacy), applied
# to linear RGB. Typed from memory; they agree with the table colorspacious ships.
MACHADO_2009 = {
    "protanomaly": [
        [0.152286, 1.052583, -0.204868],
        [0.114503, 0.786281, 0.099216],
        [-0.003882, -0.048116, 1.051998],
    ],
    "deuteranomaly": [
        [0.367322, 0.860646, -0.227968],
        [0.280085, 0.672501, 0.047413],
        [-0.011820, 0.042940, 0.968881],
    ],
    "tritanomaly": [
        [1.255528, -0.076749, -0.178779],
        [-0.078411, 0.930809, 0.147602],
        [0.004733, 0.691367, 0.303900],
    ],
}


def _srgb_decode(c):
    # IEC 61966-2-1 (sRGB) transfer function.
    c = np.asarray(c, dtype=float)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def _srgb_encode(c):
    c = np.asarray(c, dtype=float)
    return np.where(
        c <= 0.0031308, 12.92 * c, 1.055 * np.power(np.clip(c, 0, None), 1 / 2.4) - 0.055
    )


@pytest.mark.parametrize("deficiency", colour.CVD_TYPES)
@pytest.mark.parametrize("hex_colour", list(theme.OKABE_ITO.values()) + ["#ff0000", "#808080"])
def test_simulation_applies_the_published_machado_matrix(deficiency, hex_colour):
    # An independent implementation: the published matrix on linear sRGB, encoded back.
    expected = np.clip(
        _srgb_encode(np.array(MACHADO_2009[deficiency]) @ _srgb_decode(colour.rgb(hex_colour))),
        0,
        1,
    )
    assert colour.simulate(hex_colour, deficiency) == pytest.approx(tuple(expected), abs=2e-3)


def test_simulation_behaves_as_colorspacious_documents():
    # colorspacious tutorial ("Simulating colorblindness"): pure red seen with deuteranomaly
    # keeps about the same lightness J but loses chroma C; severity 0 changes nothing.
    import colorspacious

    seen = colorspacious.cspace_convert(
        colour.simulate("#ff0000", "deuteranomaly", 50), "sRGB1", "JCh"
    )
    normal = colorspacious.cspace_convert([1, 0, 0], "sRGB1", "JCh")
    assert abs(seen[0] - normal[0]) < 0.1 * normal[0]
    assert seen[1] < normal[1]
    for deficiency in colour.CVD_TYPES:
        assert colour.simulate("#0072B2", deficiency, 0) == pytest.approx(colour.rgb("#0072B2"))
    # Gray stays gray: every Machado matrix's rows sum to 1 (Machado et al. 2009).
    assert colour.simulate("#808080", "protanomaly") == pytest.approx(
        colour.rgb("#808080"), abs=1e-3
    )


def test_distance_is_cam02_ucs():
    # colorspacious reference docs: deltaE([1, 0.5, 0.5], [0.5, 1, 0.5]) ≈ 55.3 (from memory).
    assert colour.distance((1, 0.5, 0.5), (0.5, 1, 0.5)) == pytest.approx(55.34, abs=0.01)
    assert colour.distance("#0072B2", "#0072B2") == pytest.approx(0.0)


def test_lightness_is_cie_lstar():
    # CIE 1976: L* of white 100, of black 0, of sRGB mid gray #777777 about 50 (L* 50.0 is
    # #777777, a value from memory; the test allows ±0.5).
    # (colorspacious's sRGB matrix and D65 white differ in the fifth digit: 99.998.)
    assert colour.lightness("#ffffff") == pytest.approx(100.0, abs=0.01)
    assert colour.lightness("#000000") == pytest.approx(0.0, abs=1e-3)
    assert colour.lightness("#777777") == pytest.approx(50.0, abs=0.5)


# --- the shipped palette, measured ------------------------------------------------------


def test_shipped_series_colours_pass_every_rule():
    """Measured: minimum CAM02-UCS distance under each simulation, and the L* gaps.

    Okabe-Ito orange, sky blue and yellow reach 2.25, 2.31 and 1.32:1 on white, below
    WCAG 1.4.11's 3:1, so the series use the other five and a dark gray.
    """
    colours = cross.SERIES_COLOURS
    measured = {t: colour.closest_pair_seen(colours, t)[0] for t in colour.CVD_TYPES}
    assert measured == pytest.approx(
        {"deuteranomaly": 14.8, "protanomaly": 14.0, "tritanomaly": 11.7}, abs=0.05
    )
    assert min(measured.values()) >= colour.MIN_CVD_DISTANCE
    assert all(colour.contrast_ratio(c, "#ffffff") >= colour.MARK_CONTRAST for c in colours)
    for name in ("orange", "sky_blue", "yellow"):
        assert colour.contrast_ratio(theme.OKABE_ITO[name], "#ffffff") < colour.MARK_CONTRAST
    # L*: blue 46.0, vermillion 54.2, black 0, reddish purple 61.0, bluish green 57.7, gray
    # 37.8. Several pairs sit closer than MIN_LIGHTNESS_GAP, so every series also has its own
    # marker (and filled or hollow) in cross.SERIES_MARKERS: the second channel.
    lightness = [round(colour.lightness(c), 1) for c in colours]
    assert lightness == pytest.approx([46.0, 54.2, 0.0, 61.0, 57.7, 37.8], abs=0.1)
    close = [
        (i, j)
        for i, j in itertools.combinations(range(len(colours)), 2)
        if abs(lightness[i] - lightness[j]) < colour.MIN_LIGHTNESS_GAP
    ]
    assert close, "the palette needs markers: some lightness gaps are small"
    assert len(set(cross.SERIES_MARKERS)) == len(colours)


def test_the_full_okabe_ito_palette_measured():
    # All eight Okabe-Ito colours stay apart under every simulated dichromacy (measured:
    # 14.8 deuteranomaly, 14.0 protanomaly, 11.0 tritanomaly, orange and reddish purple);
    # what rules three of them out of the series is contrast on white, not colour vision.
    eight = list(theme.OKABE_ITO.values())
    measured = {t: colour.closest_pair_seen(eight, t)[0] for t in colour.CVD_TYPES}
    assert measured == pytest.approx(
        {"deuteranomaly": 14.8, "protanomaly": 14.0, "tritanomaly": 11.0}, abs=0.05
    )


# --- the rules on constructed figures -----------------------------------------------------


def _figure(width: float = theme.TEXT_WIDTH_IN) -> tuple[Figure, object]:
    with theme.themed():
        figure = theme.new_figure(2.0, width)
        axes = figure.subplots()
    return figure, axes


def _rules(figure: Figure) -> set[str]:
    found = review.review_figure(figure, theme.TEXT_WIDTH_IN, theme.MIN_FONT_PT)
    return {p.rule for p in found.problems}


def test_small_text_fails_and_printed_size_counts():
    figure, axes = _figure()
    with theme.themed():
        axes.plot([0, 1], [0, 1], color=theme.LINE)
        axes.set_xlabel("distance", fontsize=7)
    assert "font size" in _rules(figure)
    # 9 pt on a figure 10 in wide prints at 9 × 6.7 / 10 = 6.0 pt on a 6.7 in text block.
    figure, axes = _figure(width=10.0)
    with theme.themed():
        axes.plot([0, 1], [0, 1], color=theme.LINE)
        axes.set_xlabel("distance", fontsize=9)
    details = [p.detail for p in review.review_figure(figure, 6.7, 8).problems]
    # The smallest text is named, the others counted (tick labels print at 8 × 0.67 = 5.4 pt).
    assert (
        details == [details[0]]
        and "prints at 5.4 pt and " in details[0]
        and "more texts below it" in details[0]
    )


def test_pale_marks_and_text_fail_contrast_and_an_outline_rescues_a_pale_fill():
    figure, axes = _figure()
    with theme.themed():
        axes.plot([0, 1], [0, 1], color=theme.OKABE_ITO["yellow"])
    assert _rules(figure) == {"contrast"}
    figure, axes = _figure()
    with theme.themed():
        axes.bar([0, 1], [1, 2], color=theme.BOX_FILL, edgecolor=theme.INK)
        axes.text(0, 1, "label", color="#999999")
    problems = review.review_figure(figure, 6.7, 8).problems
    assert [p.rule for p in problems] == ["contrast"]
    assert "text 'label'" in problems[0].detail and "1.4.3" in problems[0].detail


def test_translucent_points_are_measured_as_they_print():
    figure, axes = _figure()
    with theme.themed():
        axes.scatter([0, 1], [0, 1], color="#7f7f7f", alpha=0.35)
    assert _rules(figure) == {"contrast"}
    figure, axes = _figure()
    with theme.themed():
        axes.scatter([0, 1], [0, 1], color=theme.POINT, alpha=theme.POINT_ALPHA)
    assert _rules(figure) == set()


def test_categories_need_distinct_colours_and_a_grayscale_channel():
    figure, axes = _figure()
    with theme.themed():
        # A plain red and green (both pass 3:1): 6.5 L* apart, and 2.8 apart in CAM02-UCS
        # under simulated deuteranomaly (measured), the classic red-green confusion.
        axes.plot([0, 1], [0, 1], "o-", color="#cc0000", label="north")
        axes.plot([0, 1], [1, 0], "o-", color="#008800", label="south")
        axes.legend()
    found = review.review_figure(figure, 6.7, 8).problems
    assert {p.rule for p in found} == {"colour vision", "grayscale"}
    assert any("'north'" in p.detail and "'south'" in p.detail for p in found)
    figure, axes = _figure()
    with theme.themed():
        # Blue and black differ in lightness; the same two with other markers and dashes.
        axes.plot([0, 1], [0, 1], "o-", color="#0072B2", label="north")
        axes.plot([0, 1], [1, 0], "s--", color="#000000", label="south")
        axes.legend()
    assert _rules(figure) == set()


def test_colour_mapped_artists_are_noted_as_unseen_not_failed():
    figure, axes = _figure()
    with theme.themed():
        axes.imshow(np.arange(6).reshape(2, 3), cmap="cividis")
        axes.pcolormesh(np.arange(6).reshape(2, 3), cmap="cividis")
    found = review.review_figure(figure, 6.7, 8)
    assert found.passed and "2 colour-mapped artist(s)" in found.unseen[0]


# --- the build ----------------------------------------------------------------------------


def _demo_config(tmp_path: Path, mode: str | None) -> Path:
    """The demo's data with two groups only: a histogram, two box charts and the dot plot
    are enough to break every rule, in a third of the demo's drawing time."""
    raw = yaml.safe_load(demo_config_path().read_text(encoding="utf-8"))
    raw["data"]["path"] = str(demo_config_path().parent / raw["data"]["path"])
    raw["output"]["formats"] = ["html"]
    raw["groups"] = ["vehicle", "district"]
    for key in ("predictors", "time", "log_target"):
        raw.pop(key, None)
    if mode:
        raw["figures"] = {"review": mode}
    path = tmp_path / "brief.yaml"
    path.write_text(yaml.safe_dump(raw), encoding="utf-8")
    return path


@pytest.fixture
def bad_theme(monkeypatch):
    """Text at 6.5 pt and pale, close series colours: a theme the review must refuse."""
    for key in ("font.size", "xtick.labelsize", "ytick.labelsize", "axes.labelsize"):
        monkeypatch.setitem(theme.RC, key, 6.5)
    # Orange beside a near-orange, yellow, sky blue beside a near-sky-blue: pale and close.
    pale = ("#E69F00", "#E8A317", "#F0E442", "#56B4E9", "#5AB8EC", "#cccccc")
    monkeypatch.setattr(cross, "SERIES_COLOURS", pale)
    monkeypatch.setattr(relationship, "SERIES_COLOURS", pale)


def test_a_bad_theme_stops_the_build_naming_figure_and_rule(tmp_path, bad_theme, capsys):
    config = _demo_config(tmp_path, None)
    code = main(["build", str(config), "--out", str(tmp_path / "out")])
    err = " ".join(capsys.readouterr().err.split())
    # One sentence naming the figure and the rule, exit code 8, nothing written, no traceback.
    assert code == FigureReviewError.exit_code == 8
    assert "error: Figure '" in err and "rule:" in err
    assert "figures.review: warn" in err
    assert "Traceback" not in err
    assert not list((tmp_path / "out").rglob("brief.*"))


def test_warn_mode_builds_and_logs_every_problem(tmp_path, bad_theme, caplog):
    config = _demo_config(tmp_path, "warn")
    result = build_brief(load_spec(config), tmp_path / "out", BUILT_ON)
    assert any(p.name == "brief.html" for p in result.files)
    rules = {r.getMessage().split(" rule:")[0].rsplit(" ", 1)[-1] for r in caplog.records}
    warned = " ".join(r.getMessage() for r in caplog.records if r.levelname == "WARNING")
    for rule in ("font size", "contrast", "colour vision"):
        assert f"the {rule} rule" in warned, rules

    # The shipped theme passes on the demo: every demo build in the suite (test_render,
    # test_layout) runs with the default figures.review: stop.
