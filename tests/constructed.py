"""Build the findings of a brief from a constructed pandas DataFrame, without rendering files."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import yaml

from briefgen.config import load_spec
from briefgen.document import Document, build_document
from briefgen.source import open_source
from briefgen.stats import BriefStats, compute


def brief_for(frame: pd.DataFrame, folder: Path, **config) -> tuple[BriefStats, Document]:
    """Statistics and page model of a brief on ``frame``; ``config`` holds the YAML keys."""
    data = folder / "data.csv"
    frame.to_csv(data, index=False)
    settings = {"title": "Constructed case", "data": {"path": str(data)}} | config
    settings.setdefault("output", {"dir": str(folder / "out"), "formats": ["json"]})
    path = folder / "brief.yaml"
    path.write_text(yaml.safe_dump(settings), encoding="utf-8")
    spec = load_spec(path)
    stats = compute(open_source(spec), spec)
    return stats, build_document(stats, spec, "2026-12-02", rows_label="data.csv")


def findings_by_key(doc: Document) -> dict:
    return {f.key: f for f in doc.findings}
