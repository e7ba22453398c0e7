"""Axis helpers shared by chart kinds: log ticks written as plain numbers, a clipped top marked."""

from __future__ import annotations

from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter, NullLocator


def plain_log_ticks(axis) -> None:
    """Ticks at 1 and 3 per decade, written as plain numbers (10, 30, 100), not as powers.

    The theme turns math text off (level names are data), so matplotlib's default
    ``10^{2}`` labels would print as markup.
    """
    axis.set_major_locator(LogLocator(subs=(1.0, 3.0)))
    axis.set_minor_locator(NullLocator())
    axis.set_major_formatter(FuncFormatter(lambda value, _: f"{value:,.10g}"))
    axis.set_minor_formatter(NullFormatter())


def mark_above(axes, text: str, color: str | None = None) -> None:
    """Say at the top right corner what lies above a clipped axis ("▲ 54 rows above")."""
    axes.annotate(
        f"▲ {text} above",
        xy=(1.0, 1.0),
        xycoords="axes fraction",
        xytext=(0, 2),
        textcoords="offset points",
        ha="right",
        va="bottom",
        fontsize=8,
        **({"color": color} if color else {}),
    )
