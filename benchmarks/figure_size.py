"""Figure and PDF size against the number of rows: the binned density must not grow with them.

For each row count the benchmark's pick jobs (``data.py``, Parquet) are generated and the
brief of ``run.py``'s config is built from them; printed per chart is its SVG size in KiB and the ratio to the same
chart at the smallest row count (the baseline from the same run), then the PDF's.
Above 5,000 rows the scatters are binned densities (``figures.rules.points_or_density``),
so their size depends on the bins, not the rows; a ratio near 1 is the target.

Run: ``.venv/bin/python benchmarks/figure_size.py --rows 10000,1000000``.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

from data import ensure_dataset
from run import CONFIG

KIB = 1024
BUILT_ON = "2026-12-02"


def sizes(rows: int) -> dict[str, float]:
    """KiB of each section chart's SVG and of the PDF, for the demo scaled to ``rows``."""
    from briefgen.config import load_spec
    from briefgen.document import build_document
    from briefgen.render import render_html, render_pdf
    from briefgen.source import open_source
    from briefgen.stats import compute

    with tempfile.TemporaryDirectory(prefix="briefgen-figsize-") as work:
        config = Path(work) / "brief.yaml"
        path = ensure_dataset(rows, "parquet")
        config.write_text(CONFIG.format(path=path, work=work), encoding="utf-8")
        spec = load_spec(config)
        stats = compute(open_source(spec), spec)
    doc = build_document(stats, spec, BUILT_ON, rows_label="pick jobs")
    result = {
        f"{s.chart.key} ({', '.join(r for r in s.chart.rules if r != 'continuous_axis')})": len(
            s.chart.svg.encode("utf-8")
        )
        / KIB
        for s in doc.sections
        if s.chart is not None
    }
    result["brief.pdf"] = len(render_pdf(render_html(doc, spec), BUILT_ON)) / KIB
    return result


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", default="10000,1000000")
    counts = [int(r) for r in parser.parse_args(argv).rows.split(",")]
    measured = {rows: sizes(rows) for rows in counts}
    base = measured[counts[0]]
    header = "| item | " + " | ".join(f"KiB at {r:,} | ratio" for r in counts) + " |"
    print(header)
    print("|---" * (1 + 2 * len(counts)) + "|")
    for item in base:
        cells = []
        for rows in counts:
            value = measured[rows].get(item)
            cells.append("–" if value is None else f"{value:.1f} | {value / base[item]:.2f}")
        print(f"| {item} | " + " | ".join(cells) + " |")
    return 0


if __name__ == "__main__":
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    sys.exit(main())
