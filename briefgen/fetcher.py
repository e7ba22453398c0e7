"""The URL fetcher WeasyPrint draws with: inlined data and the config's folder, nothing else.

WeasyPrint's default fetcher reads ``file:`` and network URLs. The brief inlines its
figures and logo, so any other URL in the HTML or CSS is a mistake or an attack; this
refuses it, names it in the log and lets WeasyPrint draw on without it. Imported only
when WeasyPrint is (render.render_pdf), so a machine without Pango still gets a clear error.
"""

from __future__ import annotations

import logging
from pathlib import Path
from urllib.parse import unquote, urlsplit

from weasyprint.urls import URLFetcher

log = logging.getLogger(__name__)


class LocalOnlyFetcher(URLFetcher):
    """WeasyPrint URL fetcher: ``data:`` URLs, and ``file:`` URLs under one folder; nothing else.

    Every refused URL is kept in ``refused`` (and logged), so tests and the build can see
    what the document tried to read.
    """

    def __init__(self, folder: Path | None = None) -> None:
        super().__init__(allowed_protocols={"data", "file"}, allow_redirects=False)
        self.folder = folder.resolve() if folder is not None else None
        self.refused: list[str] = []

    def _allowed(self, url: str) -> bool:
        parts = urlsplit(url)
        scheme = parts.scheme.lower()
        if scheme == "data":
            return True
        if scheme != "file" or self.folder is None or parts.netloc not in ("", "localhost"):
            return False
        try:
            path = Path(unquote(parts.path)).resolve(strict=True)
        except (OSError, RuntimeError):
            return False
        return path.is_relative_to(self.folder) and path.is_file()

    def fetch(self, url, headers=None):
        if not self._allowed(url):
            shown = url if url.lower().startswith(("file:", "http")) else url[:40]
            self.refused.append(url)
            log.warning("refused to read %s while drawing the PDF", shown[:200])
            raise ValueError(f"briefgen reads only inlined data while rendering: {shown[:200]}")
        return super().fetch(url, headers)
