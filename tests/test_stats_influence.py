"""The row that pulls a straight line most, by Cook's distance, against statsmodels.

References: statsmodels' ``OLSInfluence.cooks_distance`` and OLS refitted without the
row; scipy's F quantile for the cut-off; data from statsmodels.datasets.statecrime
(US states 2009, shipped offline with statsmodels) and Anscombe's quartet (Anscombe
1973, offline copy in vega_datasets).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.stats
import statsmodels.api as sm
from constructed import brief_for, findings_by_key
from statsmodels.stats.outliers_influence import OLSInfluence
from vega_datasets import local_data

from briefgen.present.sections.fit import influence_note
from briefgen.present.wording import Wording
from briefgen.stats.regression import fit_lines

PREDICTORS = ["poverty", "hs_grad", "single", "white", "urban"]


def statecrime() -> pd.DataFrame:
    """statsmodels.datasets.statecrime: violent crimes per 100k and five predictors, 51 rows."""
    data = sm.datasets.statecrime.load_pandas().data
    return data[["violent", *PREDICTORS]].astype(float).reset_index(names="state")


def reference(x: np.ndarray, y: np.ndarray) -> tuple[int, float, np.ndarray, float]:
    """(row of the largest D, D, all D, slope without that row) from statsmodels."""
    model = sm.OLS(y, sm.add_constant(x)).fit()
    distances = OLSInfluence(model).cooks_distance[0]  # reference: statsmodels OLSInfluence
    row = int(np.nanargmax(distances))
    keep = np.arange(len(x)) != row
    # reference: statsmodels OLS refitted on the data without that row
    without = sm.OLS(y[keep], sm.add_constant(x[keep])).fit().params[1]
    return row, float(distances[row]), distances, float(without)


def test_statecrime_largest_distance_matches_statsmodels(engine_table):
    data = statecrime()
    frame = data[PREDICTORS].rename(columns=lambda c: f"x{PREDICTORS.index(c)}")
    table = engine_table(frame.assign(y=data.violent))
    fits = fit_lines(table, list(frame.columns), 0.95, influence=True)
    # reference: scipy.stats.f.ppf, the median of F(2, n − 2) (Cook 1977's 50% region)
    cutoff = scipy.stats.f.ppf(0.5, 2, len(data) - 2)
    pulled = set()
    for name, fit in zip(PREDICTORS, fits, strict=True):
        x, y = data[name].to_numpy(), data.violent.to_numpy()
        row, distance, distances, without = reference(x, y)
        found = fit.influence
        assert found.cooks_distance == pytest.approx(distance, rel=1e-9), name
        assert (found.x, found.y) == (x[row], y[row]), name
        assert found.slope_without == pytest.approx(without, rel=1e-9), name
        assert found.cutoff == pytest.approx(cutoff, rel=1e-12)
        assert found.rows_over == int(np.sum(distances > cutoff)), name
        if found.pulls:
            pulled.add((name, data.state[row]))
    # The District of Columbia (violent 1,348.9) pulls single and urban; Hawaii (white
    # 26.9, violent 274.1) pulls white most, with DC second (statsmodels: D 3.69, 1.68).
    assert pulled == {
        ("single", "District of Columbia"),
        ("urban", "District of Columbia"),
        ("white", "Hawaii"),
    }


def test_statecrime_brief_notes_the_pulled_lines_only(tmp_path):
    data = statecrime()
    stats, doc = brief_for(
        data.drop(columns="state"), tmp_path, target="violent", predictors=PREDICTORS
    )
    findings = findings_by_key(doc)
    assert {fit.predictor for fit in stats.fits if fit.influence.pulls} == {
        "single",
        "white",
        "urban",
    }
    for name in PREDICTORS:
        certainty = findings[f"fit-{name}"].certainty
        if name in ("single", "white", "urban"):
            assert "pull the straight line" in certainty or "pulls the straight line" in certainty
        else:
            assert "straight line" not in certainty and "Cook" not in certainty, name
    single = findings["fit-single"].certainty
    # Values as the data write them; slopes as the finding prints them (statsmodels above:
    # 35.13 with DC, 29.99 without).
    assert "violent at 1,348.9 and single at 48," in single
    assert "the slope would be +30.0 per unit, not +35.1" in single
    white = findings["fit-white"].certainty
    assert white.startswith("The line") and "Two rows pull the straight line" in white
    assert "violent at 274.1 and white at 26.9" in white
    # Page 1 shows the same certainty beside each claim.
    assert any("pulls the straight line" in f.certainty for f in doc.settled_findings)


@pytest.mark.filterwarnings("ignore:invalid value encountered in sqrt")  # statsmodels at h = 1
def test_anscombe_outlier_pulls_and_a_lone_far_row_has_no_distance(engine_table):
    quartet = local_data.anscombe()  # offline copy shipped with vega_datasets
    frame = pd.DataFrame(
        {"series": quartet.Series.astype(object), "x0": quartet.X * 1.0, "y": quartet.Y * 1.0}
    )
    table = engine_table(frame)
    for series in ("III", "IV"):
        part = frame[frame.series == series]
        x, y = part.x0.to_numpy(), part.y.to_numpy()
        (fit,) = fit_lines(table.filter(table.series == series), ["x0"], 0.95, influence=True)
        row, distance, _, without = reference(x, y)
        # reference: statsmodels, as above. Series IV's row at x = 19 has leverage 1 and an
        # undefined D (statsmodels: nan); the largest D is among the other ten rows.
        assert fit.influence.cooks_distance == pytest.approx(distance, rel=1e-9)
        assert (fit.influence.x, fit.influence.y) == (x[row], y[row])
        assert fit.influence.slope_without == pytest.approx(without, rel=1e-9)
    # Anscombe (1973): series III lies on a line but for one point, (13, 12.74).
    (fit,) = fit_lines(table.filter(table.series == "III"), ["x0"], 0.95, influence=True)
    assert (fit.influence.x, fit.influence.y, fit.influence.rows_over) == (13.0, 12.74, 1)


def test_well_behaved_data_get_no_note(engine_table):
    # Constructed: seeded normal x and errors, no outlier; 1e9 and 1e12 offsets keep digits.
    rng = np.random.default_rng(20)
    n = 400
    x = rng.normal(0.0, 2.0, n)
    y = 3.0 + 1.5 * x + rng.normal(0.0, 1.0, n)
    (fit,) = fit_lines(
        engine_table(pd.DataFrame({"y": y + 1e12, "x0": x + 1e9})), ["x0"], 0.95, influence=True
    )
    # reference: statsmodels on the exact small parts (the offsets move each value by
    # at most 2^-14 and 2^-24 of its unit: far below the 1e-6 checked here)
    row, distance, _, without = reference((x + 1e9) - 1e9, (y + 1e12) - 1e12)
    assert fit.influence.cooks_distance == pytest.approx(distance, rel=1e-6)
    assert fit.influence.slope_without == pytest.approx(without, rel=1e-9)
    assert fit.influence.rows_over == 0 and not fit.influence.pulls
    words = Wording(label="Score", unit_decimals=1, confidence=0.95)
    assert influence_note(fit, words, "Hours") is None


def test_ties_go_to_the_smallest_x_then_y(engine_table):
    # Constructed: points symmetric about (0, 0), so (−3, −1) and (3, 1) have the same D
    # (to the bit in the engine: every term is mirrored exactly); the smaller x is named,
    # in any row order.
    x = np.array([-3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0])
    y = np.array([-1.0, -2.0, -1.5, 0.0, 1.5, 2.0, 1.0])
    _, distance, distances, _ = reference(x, y)
    # reference: statsmodels puts both ends on top (D 0.653), equal to 1e-12
    assert distances[0] == pytest.approx(distances[-1], rel=1e-12)
    assert distance == pytest.approx(max(distances[0], distances[-1]), rel=1e-12)
    for order in (np.arange(7), np.arange(7)[::-1]):
        table = engine_table(pd.DataFrame({"y": y[order], "x0": x[order]}))
        (fit,) = fit_lines(table, ["x0"], 0.95, influence=True)
        assert (fit.influence.x, fit.influence.y) == (-3.0, -1.0)
        assert fit.influence.cooks_distance == pytest.approx(distance, rel=1e-12)
