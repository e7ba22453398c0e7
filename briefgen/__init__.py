"""briefgen: turn a dataset and a short YAML file into a print-ready brief."""

from __future__ import annotations

__version__ = "0.1.0"
