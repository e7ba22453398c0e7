"""The additive row + column model of a two-way table, fitted to its cell means.

Shared by the standout search and the interaction test; works on cell summaries, so
its cost depends on the number of cells, never on rows.
"""

from __future__ import annotations

import numpy as np
from scipy import linalg as scipy_linalg


def components(row_of: np.ndarray, column_of: np.ndarray, rows: int) -> np.ndarray:
    """Connected component of every row and column level (linked when they share a cell)."""
    parent = list(range(rows + int(column_of.max()) + 1))

    def root(node: int) -> int:
        while parent[node] != node:
            parent[node] = parent[parent[node]]
            node = parent[node]
        return node

    for row, column in zip(row_of.tolist(), column_of.tolist(), strict=True):
        parent[root(rows + column)] = root(row)
    return np.array([root(node) for node in range(len(parent))])


def additive_fit(
    row_of: np.ndarray, column_of: np.ndarray, means: np.ndarray, weights: np.ndarray
) -> np.ndarray | None:
    """Row + column effects fitted to cell means by weighted least squares; the fitted means.

    ``row_of`` and ``column_of`` index each cell's levels from 0. Returns None when the
    fit leaves no residual degree of freedom (every cell fitted exactly).
    """
    rows = int(row_of.max()) + 1
    component = components(row_of, column_of, rows)
    # Row and column effects are defined only up to a constant within each connected
    # block of levels; pinning the block's first column effect at 0 makes the system
    # full rank.
    pinned, free = set(), []
    for node in range(len(component)):
        if node >= rows and int(component[node]) not in pinned:
            pinned.add(int(component[node]))
        else:
            free.append(node)
    if len(means) <= len(free):
        return None
    position = np.full(len(component), -1)
    position[free] = np.arange(len(free))
    row_at, column_at = position[row_of], position[rows + column_of]
    has_column = column_at >= 0
    # Normal equations built straight from the cells: (levels × levels), whatever the
    # number of cells or rows.
    normal = np.zeros((len(free), len(free)))
    right = np.zeros(len(free))
    np.add.at(normal, (row_at, row_at), weights)
    np.add.at(right, row_at, weights * means)
    columned = weights[has_column]
    np.add.at(normal, (column_at[has_column], column_at[has_column]), columned)
    np.add.at(normal, (row_at[has_column], column_at[has_column]), columned)
    np.add.at(normal, (column_at[has_column], row_at[has_column]), columned)
    np.add.at(right, column_at[has_column], columned * means[has_column])
    effects = scipy_linalg.solve(normal, right, assume_a="pos")
    return effects[row_at] + np.where(has_column, effects[np.maximum(column_at, 0)], 0.0)


def blocks(row_of: np.ndarray, column_of: np.ndarray) -> int:
    """Connected blocks of levels linked by shared cells; each pins one effect."""
    rows = int(row_of.max()) + 1
    return len(set(components(row_of, column_of, rows).tolist()))
