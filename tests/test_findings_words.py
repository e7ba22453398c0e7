"""Sentences of the brief that must say each thing once, name things as the reader knows them,
and never round a real effect to nothing.

Reference data: statsmodels.datasets (statecrime, randhie), shipped offline with statsmodels;
reference values from pandas on those frames.
"""

from __future__ import annotations

import statsmodels.api as sm
from constructed import brief_for, findings_by_key


def _statecrime():
    # statsmodels.datasets.statecrime: 2009 violent crime per 100,000 for the 50 states and DC.
    return sm.datasets.statecrime.load_pandas().data.reset_index()


def test_overall_section_states_the_mean_once_and_leaves_no_it_to_guess(tmp_path):
    frame = _statecrime()
    # pandas: median 366.4, mean 411.48, sd 208.0; mean − median = 45.1 > 0.2 × sd = 41.6,
    # so the brief says why the mean sits above the median.
    assert frame.violent.mean() - frame.violent.median() > 0.2 * frame.violent.std()
    _, doc = brief_for(frame, tmp_path, target="violent")
    finding = findings_by_key(doc)["overall"]
    page2 = f"{finding.text} {finding.certainty}"
    assert page2.count("The mean is 411") == 1
    assert " it " not in f" {page2} " and " it;" not in page2
    assert "pull the mean up" in finding.certainty
    assert "typical violent is 366 (median)" in finding.text
