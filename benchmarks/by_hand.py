"""A careful hand-written pandas + matplotlib script drawing the brief's charts.

What an analyst who knows pandas would write instead of a brief, done the fast way:
read only the named columns (pyarrow's CSV parser, categories for the groups), one
groupby per group variable for count, mean, sd, min, max and quartiles, box plots
drawn by ``Axes.bxp`` from those precomputed statistics (whiskers from one masked
min/max), a two-way table of means, weekly means with t intervals, a histogram with
Freedman–Diaconis bins, and for each predictor the least-squares line over all rows
drawn over a sampled scatter of 5,000 points. No bootstrap, no rank tests, no text.
Charts go to SVG files and one PDF, the numbers to a JSON file.

Run ``python benchmarks/by_hand.py FILE OUTDIR``; it prints the seconds as JSON.
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.backends.backend_pdf import PdfPages  # noqa: E402
from scipy import stats  # noqa: E402

GROUPS = ["site", "shift", "product_line"]
TARGET = "pick_minutes"
PREDICTORS = ["items", "distance_m"]
TIME = "started_at"
SAMPLE = 5000


def read(path: str) -> pd.DataFrame:
    columns = [TIME, *GROUPS, *PREDICTORS, TARGET]
    if path.endswith(".parquet"):
        frame = pd.read_parquet(path, columns=columns)
    else:
        frame = pd.read_csv(
            path,
            usecols=columns,
            engine="pyarrow",
            dtype={g: "category" for g in GROUPS},
            parse_dates=[TIME],
        )
    for g in GROUPS:
        frame[g] = frame[g].astype("category")
    return frame


def box_stats(frame: pd.DataFrame, group: str) -> tuple[pd.DataFrame, list[dict]]:
    grouped = frame.groupby(group, observed=True)[TARGET]
    table = grouped.agg(["count", "mean", "std", "min", "max"])
    quartiles = grouped.quantile([0.25, 0.5, 0.75]).unstack()
    table[["q1", "median", "q3"]] = quartiles.to_numpy()
    iqr = table.q3 - table.q1
    low = (table.q1 - 1.5 * iqr).reindex(frame[group]).to_numpy()
    high = (table.q3 + 1.5 * iqr).reindex(frame[group]).to_numpy()
    y = frame[TARGET].to_numpy()
    inside = (y >= low) & (y <= high)
    within = frame.loc[inside].groupby(group, observed=True)[TARGET].agg(["min", "max"])
    boxes = [
        {
            "label": str(level),
            "q1": row["q1"],
            "med": row["median"],
            "q3": row["q3"],
            "whislo": within.loc[level, "min"],
            "whishi": within.loc[level, "max"],
            "mean": row["mean"],
            "fliers": [],
        }
        for level, row in table.iterrows()
    ]
    return table, boxes


def main() -> None:
    path, out = sys.argv[1], Path(sys.argv[2])
    out.mkdir(parents=True, exist_ok=True)
    started = time.perf_counter()
    frame = read(path)
    numbers: dict = {"rows": len(frame)}
    figures = []
    for group in GROUPS:
        table, boxes = box_stats(frame, group)
        numbers[group] = table.reset_index().astype({group: str}).to_dict("records")
        fig, ax = plt.subplots(figsize=(6.7, 3.5))
        ax.bxp(boxes, showmeans=True, showfliers=False)
        ax.set_title(f"{TARGET} by {group}")
        figures.append((f"box_{group}", fig))
    cells = frame.groupby(GROUPS[:2], observed=True)[TARGET].agg(["count", "mean", "std"])
    numbers["cells"] = cells.reset_index().astype({g: str for g in GROUPS[:2]}).to_dict("records")
    weekly = frame.groupby(frame[TIME].dt.to_period("W"))[TARGET].agg(["count", "mean", "std"])
    half = stats.t.ppf(0.975, weekly["count"] - 1) * weekly["std"] / np.sqrt(weekly["count"])
    fig, ax = plt.subplots(figsize=(6.7, 3.0))
    x = weekly.index.start_time
    ax.fill_between(x, weekly["mean"] - half, weekly["mean"] + half, alpha=0.3)
    ax.plot(x, weekly["mean"], marker="o")
    ax.set_title(f"{TARGET} by week")
    figures.append(("trend", fig))
    y = frame[TARGET].dropna().to_numpy()
    fig, ax = plt.subplots(figsize=(6.7, 3.0))
    ax.hist(y, bins="fd" if len(np.histogram_bin_edges(y, "fd")) <= 61 else 60)
    ax.set_title(f"{TARGET}: distribution")
    figures.append(("histogram", fig))
    sample = frame.sample(n=min(SAMPLE, len(frame)), random_state=1)
    for predictor in PREDICTORS:
        both = frame[[predictor, TARGET]].dropna()
        fit = stats.linregress(both[predictor], both[TARGET])
        numbers[f"fit_{predictor}"] = {
            "slope": fit.slope,
            "intercept": fit.intercept,
            "r": fit.rvalue,
        }
        fig, ax = plt.subplots(figsize=(6.7, 3.5))
        ax.scatter(sample[predictor], sample[TARGET], s=4, alpha=0.4)
        line = np.linspace(both[predictor].min(), both[predictor].max(), 2)
        ax.plot(line, fit.intercept + fit.slope * line, color="black")
        ax.set_title(f"{TARGET} against {predictor}")
        figures.append((f"scatter_{predictor}", fig))
    with PdfPages(out / "charts.pdf") as pdf:
        for name, fig in figures:
            fig.savefig(out / f"{name}.svg")
            pdf.savefig(fig)
            plt.close(fig)
    (out / "numbers.json").write_text(json.dumps(numbers, default=str))
    print(json.dumps({"seconds": time.perf_counter() - started}))


if __name__ == "__main__":
    main()
