"""Where a brief's rows came from, in facts a provenance record can keep (never a password)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from briefgen.config import BriefSpec
from briefgen.database import safe_url, where_statistics_run

if TYPE_CHECKING:
    from briefgen.rows.scope import RowScope


def origin_of(spec: BriefSpec, scope: RowScope | None) -> tuple[tuple[str, str | None], ...]:
    """``Source.describe()``'s facts: the file or database, and the rows selected, in words."""
    data = spec.data
    if data.url is not None:
        facts = {
            "kind": "database",
            "url": safe_url(data.url),
            "table": data.table,
            "query": data.query,
            "statistics_run_in": where_statistics_run(data.url),
        }
    else:
        facts = {
            "kind": "file",
            "path": str(spec.data_path),
            "format": spec.data_format,
            "sheet": data.sheet,
        }
    facts["where"] = scope.where_words if scope is not None else None
    facts["window"] = scope.window_words if scope is not None else None
    return tuple(facts.items())
