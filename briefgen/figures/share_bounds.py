"""A 0/1 target against a predictor: every fitted line and band stays inside 0%–100%.

A least-squares line through a yes/no outcome (a linear probability model) is not
bounded: its fitted values can pass 0 or 1 inside the data's own range (Wooldridge,
Introductory Econometrics, the section on the linear probability model; from memory).
A share cannot, so on a chart each line is drawn only where it lies in [0, 1], ending
exactly on the edge, its confidence band is cut at 0 and 1, the vertical axis reads
0%–100%, and the caption says so whenever something was cut.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from briefgen.numbers import decimals_for, fmt

LOW, HIGH = 0.0, 1.0
# Room beyond 0 and 1 so points on the edges stay clear of the axis line; no tick goes there.
MARGIN = 0.04


@dataclass(frozen=True, slots=True)
class Exit:
    """Where a fitted line leaves [0, 1]: past ``edge`` (0 or 1) for x ``side`` ("under"/"over") ``x``."""

    edge: float
    x: float
    side: str


def line_inside(
    x_min: float, x_max: float, intercept: float, slope: float, points: int = 120
) -> tuple[np.ndarray, np.ndarray]:
    """(x grid, fitted values) with NaN where the line is outside [0, 1].

    The x where the line meets 0 or 1 is added to the grid, so the drawn line ends on
    the edge rather than one grid step short of it.
    """
    grid = np.linspace(x_min, x_max, points)
    grid = np.union1d(grid, [e.x for e in line_exits(x_min, x_max, intercept, slope)])
    line = intercept + slope * grid
    # A hair of tolerance: the crossing computed in floating point lands a rounding error out.
    inside = (line >= LOW - 1e-9) & (line <= HIGH + 1e-9)
    return grid, np.where(inside, np.clip(line, LOW, HIGH), np.nan)


def segment(binary: bool, x_min: float, x_max: float, intercept: float, slope: float):
    """(xs, ys) of a line drawn end to end; for a 0/1 target only its part inside [0, 1]."""
    if binary:
        return line_inside(x_min, x_max, intercept, slope, points=2)
    ends = np.array([x_min, x_max])
    return ends, intercept + slope * ends


def line_exits(x_min: float, x_max: float, intercept: float, slope: float) -> list[Exit]:
    """Each edge the line passes strictly inside (x_min, x_max), with the side of x beyond it."""
    if not slope:
        return []
    exits = []
    for edge in (LOW, HIGH):
        x = (edge - intercept) / slope
        if x_min < x < x_max:
            # Below 0 lies where the line is lower: under the crossing when it rises.
            rising_side = "over" if edge == HIGH else "under"
            falling_side = "under" if edge == HIGH else "over"
            exits.append(Exit(edge, float(x), rising_side if slope > 0 else falling_side))
    return exits


def band_cut_edges(bands: np.ndarray) -> list[float]:
    """The edges (0, 1) an uncut band passes, in that order."""
    if bands.size == 0:
        return []
    edges = []
    if np.nanmin(bands) < LOW:
        edges.append(LOW)
    if np.nanmax(bands) > HIGH:
        edges.append(HIGH)
    return edges


def line_and_band(fit, confidence: float, binary: bool):
    """(x grid, line, band, edges the band was cut at) of a full-data fit, as drawn.

    For a 0/1 target the line is NaN outside [0, 1] and the band is cut at 0 and 1;
    otherwise both are the plain fit over 120 points and nothing is cut.
    """
    if binary:
        grid, line = line_inside(fit.x_min, fit.x_max, fit.intercept, fit.slope)
    else:
        grid = np.linspace(fit.x_min, fit.x_max, 120)
        line = fit.intercept + fit.slope * grid
    bands = np.array([fit.band(x, confidence) for x in grid])
    if not binary:
        return grid, line, bands, []
    return grid, line, np.clip(bands, LOW, HIGH), band_cut_edges(bands)


def fit_cut_sentence(fit, band_edges: list[float], x_lower: str) -> str:
    """``cut_sentence`` for one full-data fit drawn over its own x range."""
    exits = line_exits(fit.x_min, fit.x_max, fit.intercept, fit.slope)
    return cut_sentence(exits, band_edges, x_lower, fit.x_max - fit.x_min)


def share_axis(axes, ticks: tuple[float, ...] = (0.0, 0.25, 0.5, 0.75, 1.0)) -> None:
    """The vertical axis as shares: 0%–100% ticks, a small margin so edge points show."""
    axes.set_ylim(LOW - MARGIN, HIGH + MARGIN)
    axes.set_yticks(ticks, [f"{100 * t:.0f}%" for t in ticks])


def _edge(edge: float) -> str:
    return "0%" if edge == LOW else "100%"


def _edges(edges: list[float]) -> str:
    return " and ".join(_edge(e) for e in edges)


def cut_sentence(
    exits: list[Exit], band_edges: list[float], x_lower: str, x_spread: float | None
) -> str:
    """The caption's sentence when the line or its band was cut at 0% or 100%; else empty."""
    if not exits and not band_edges:
        return ""
    start = " A straight line through a yes/no outcome can run past 0% or 100%"
    if not exits:
        return f"{start}; this one stays inside, but its band does not and is cut at {_edges(band_edges)}."
    d = decimals_for(x_spread)
    where = " and ".join(
        f"{'below' if e.edge == LOW else 'above'} {_edge(e.edge)} for {x_lower} {e.side} {fmt(e.x, d)}"
        for e in exits
    )
    band = f", and its band is cut at {_edges(band_edges)}" if band_edges else ""
    return f"{start}, as this one does {where}; it is drawn only inside 0%–100%{band}."


def lines_sentence(any_cut: bool) -> str:
    """The caption's sentence for a chart of several lines (one per level), if any was cut."""
    if not any_cut:
        return ""
    return (
        " A straight line through a yes/no outcome can run past 0% or 100%; the lines here that "
        "do are drawn only inside 0%–100%."
    )


def slope_text(slope: float, decimals: int, binary: bool) -> str:
    """A slope as printed: in percentage points for a 0/1 target, the headline's unit."""
    if not binary:
        return fmt(slope, decimals)
    points = 100 * slope
    return f"{fmt(points, decimals_for(abs(points) or None))} percentage points"
