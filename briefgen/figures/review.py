"""Figure review: every chart is checked as a matplotlib Figure before it becomes SVG.

Four rules, each from a published standard or a stated rule of common practice:

- **font size**: every visible text at least 8 pt at printed size (the figure is drawn at
  the print width; a wider figure is scaled down, and so is its text);
- **contrast**: data marks reach 3:1 against the background (WCAG 2.1, 1.4.11) through at
  least one of their colours (a light box with a dark edge passes), text 4.5:1 (1.4.3);
- **colour vision**: category colours (labelled series) keep a CAM02-UCS distance of at
  least ``colour.MIN_CVD_DISTANCE`` under simulated deuteranomaly, protanomaly and
  tritanomaly (Machado, Oliveira & Fernandes 2009, severity 100, via colorspacious);
- **grayscale**: two categories differ by ``colour.MIN_LIGHTNESS_GAP`` in CIE L*, or by a
  second channel (marker, line style, hollow or filled, hatch).

What walking the artists cannot see, and how it is handled: colour-mapped artists (an
image, a heat map's mesh, a binned density) are not checked cell by cell, the review notes
them in ``unseen``; text and marks are measured
against the axes or legend background, not against the marks they happen to overlap; two
marks are never compared with each other except as categories; path effects and clip
paths are ignored. Categories are the artists with a label, the ones a legend lists.
"""

from __future__ import annotations

import itertools
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass

from matplotlib.collections import Collection
from matplotlib.colors import to_hex, to_rgba
from matplotlib.figure import Figure
from matplotlib.image import AxesImage
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.text import Text

from briefgen.figures import colour
from briefgen.figures.colour import RGB


@dataclass(frozen=True, slots=True)
class Problem:
    """One broken rule: ``rule`` is one of RULES, ``detail`` a sentence naming the element."""

    rule: str
    detail: str


RULES = ("font size", "contrast", "colour vision", "grayscale")


@dataclass(frozen=True, slots=True)
class FigureReview:
    """The review of one figure: its problems, and what the review could not look at."""

    problems: tuple[Problem, ...]
    unseen: tuple[str, ...] = ()

    @property
    def passed(self) -> bool:
        return not self.problems


def review_figure(
    figure: Figure, print_width_in: float, min_font_pt: float, drawn: bool = False
) -> FigureReview:
    """Check a finished Figure against the four rules, as it will print at ``print_width_in``.

    Tick labels, legend entries and the constrained layout exist only after a draw;
    ``drawn`` says the caller has just drawn it (theme.to_svg reviews right after savefig,
    which saves a second draw of every figure).
    """
    if not drawn:
        figure.draw_without_rendering()
    scale = min(1.0, print_width_in / figure.get_figwidth())
    paper = colour.over(figure.get_facecolor())
    problems: list[Problem] = []
    problems += _font_sizes(figure, scale, min_font_pt)
    problems += _text_contrast(figure, paper)
    unseen: list[str] = []
    categories: list[_Category] = []
    for axes in figure.axes:
        background = colour.over(axes.get_facecolor(), paper)
        problems += _mark_contrast(axes, background)
        categories += _categories(axes)
        mapped = [a for a in axes.get_children() if _colour_mapped(a)]
        if mapped:
            unseen.append(
                f"{len(mapped)} colour-mapped artist(s) (image, heat map, density): each cell's "
                "contrast is not checked; the colour bar and the map's choice carry it"
            )
    problems += _category_colours(_unique(categories))
    return FigureReview(tuple(dict.fromkeys(problems)), tuple(unseen))


# --- text ------------------------------------------------------------------------------


def _visible_texts(figure: Figure) -> Iterator[Text]:
    for text in figure.findobj(Text):
        if text.get_visible() and text.get_text().strip() and _shown(text):
            yield text


def _shown(text: Text) -> bool:
    """Whether a text lies on the figure (tick labels outside the view are laid out but never drawn)."""
    box = text.get_window_extent()
    frame = text.get_figure(root=True).bbox
    return box.x1 >= frame.x0 and box.x0 <= frame.x1 and box.y1 >= frame.y0 and box.y0 <= frame.y1


def _quoted(text: Text) -> str:
    words = " ".join(text.get_text().split())
    return f"'{words[:40]}…'" if len(words) > 40 else f"'{words}'"


def _font_sizes(figure: Figure, scale: float, min_font_pt: float) -> list[Problem]:
    """One problem per figure, naming the smallest text and how many are too small."""
    small = sorted(
        ((text.get_fontsize() * scale, _quoted(text)) for text in _visible_texts(figure)),
        key=lambda found: found[0],
    )
    small = [(size, quoted) for size, quoted in small if size < min_font_pt - 1e-9]
    if not small:
        return []
    size, quoted = small[0]
    others = f" and {len(small) - 1} more texts below it" if len(small) > 1 else ""
    return [
        Problem(
            "font size",
            f"text {quoted} prints at {size:.1f} pt{others}; figure text needs "
            f"{min_font_pt:g} pt or more",
        )
    ]


def _text_background(text: Text, paper: RGB) -> RGB:
    """What a text sits on: its own box, its legend's frame, or its axes."""
    patch = text.get_bbox_patch()
    base = paper
    if text.axes is not None:
        base = colour.over(text.axes.get_facecolor(), paper)
        legend = text.axes.get_legend()
        if legend is not None and text in legend.get_texts() + [legend.get_title()]:
            base = colour.over(legend.get_frame().get_facecolor(), base)
    if patch is not None and patch.get_fill():
        base = colour.over(patch.get_facecolor(), base)
    return base


def _text_contrast(figure: Figure, paper: RGB) -> list[Problem]:
    problems = []
    for text in _visible_texts(figure):
        background = _text_background(text, paper)
        red, green, blue, alpha = to_rgba(text.get_color(), text.get_alpha())
        ink = colour.over((red, green, blue, alpha), background)
        ratio = colour.contrast_ratio(ink, background)
        if ratio < colour.TEXT_CONTRAST:
            problems.append(
                Problem(
                    "contrast",
                    f"text {_quoted(text)} in {to_hex(ink)} reaches {ratio:.2f}:1 on "
                    f"{to_hex(background)}; text needs {colour.TEXT_CONTRAST:g}:1 (WCAG 2.1, 1.4.3)",
                )
            )
    return problems


# --- marks -----------------------------------------------------------------------------


def _line_colours(line: Line2D) -> list:
    colours = []
    if line.get_linestyle() not in ("None", "", " ") and line.get_linewidth() > 0:
        colours.append(line.get_color())
    if line.get_marker() not in ("None", "", " ", None):
        if line.get_markeredgewidth() > 0:
            colours.append(line.get_markeredgecolor())
        if str(line.get_markerfacecolor()).lower() != "none":
            colours.append(line.get_markerfacecolor())
    return colours


def _patch_colours(patch: Patch) -> list:
    colours = [patch.get_facecolor()] if patch.get_fill() else []
    if patch.get_linewidth() > 0:
        colours.append(patch.get_edgecolor())
    return colours


def _collection_colours(collection: Collection) -> list:
    colours = list(collection.get_facecolors())
    if max(collection.get_linewidths(), default=0) > 0:
        colours += list(collection.get_edgecolors())
    return colours


def _colour_mapped(artist) -> bool:
    """An image, or a collection whose colours come from data through a colour map."""
    if isinstance(artist, AxesImage):
        return True
    return isinstance(artist, Collection) and artist.get_array() is not None


def _marks(axes) -> Iterator[tuple[object, list]]:
    """Data marks and their colours, alpha applied (lines, patches and collections).

    Colour-mapped collections (a heat map's cells, a binned density) are left out: their
    lightest cells stand for the smallest values and are meant to fade into the paper.
    """
    for artist in [*axes.lines, *axes.patches, *axes.collections]:
        if not artist.get_visible() or _colour_mapped(artist):
            continue
        # Patches and collections report their colours with the artist's alpha applied;
        # a line's come without it, matplotlib applies it when drawing.
        if isinstance(artist, Patch):
            found = [to_rgba(c) for c in _patch_colours(artist)]
        elif isinstance(artist, Collection):
            found = [to_rgba(c) for c in _collection_colours(artist)]
        else:
            found = [to_rgba(c, artist.get_alpha()) for c in _line_colours(artist)]
        found = [c for c in found if c[3] > 0]
        if found:
            yield artist, found


def _mark_name(artist) -> str:
    label = artist.get_label()
    kind = type(artist).__name__
    return f"{kind} '{label}'" if label and not label.startswith("_") else kind


def _mark_contrast(axes, background: RGB) -> list[Problem]:
    problems = []
    for artist, colours in _marks(axes):
        seen = [colour.over(c, background) for c in colours]
        best = max(seen, key=lambda c: colour.contrast_ratio(c, background))
        ratio = colour.contrast_ratio(best, background)
        if ratio < colour.MARK_CONTRAST:
            problems.append(
                Problem(
                    "contrast",
                    f"mark {_mark_name(artist)} in {to_hex(best)} reaches {ratio:.2f}:1 on "
                    f"{to_hex(background)}; marks need {colour.MARK_CONTRAST:g}:1 (WCAG 2.1, 1.4.11)",
                )
            )
    return problems


# --- categories ------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class _Category:
    """A labelled series: the colour that names it and its other channels (marker, dashes, fill)."""

    label: str
    colour: RGB
    channels: tuple


def _is_white(value) -> bool:
    return str(value).lower() == "none" or colour.rgb(value) == colour.WHITE


def _category(artist) -> _Category | None:
    label = artist.get_label()
    if isinstance(artist, Line2D):
        face = artist.get_markerfacecolor()
        marker = artist.get_marker()
        line_drawn = artist.get_linestyle() not in ("None", "", " ")
        if line_drawn:
            named = artist.get_color()
        elif marker not in ("None", "", " ", None) and not _is_white(face):
            named = face
        else:
            named = artist.get_markeredgecolor()
        # matplotlib keeps a custom dash tuple only here; get_linestyle() says "--" for all.
        dashes = getattr(artist, "_unscaled_dash_pattern", None) if line_drawn else None
        channels = (str(marker), repr(dashes), _is_white(face))
    elif isinstance(artist, Patch):
        named = artist.get_facecolor() if artist.get_fill() else artist.get_edgecolor()
        channels = ("patch", artist.get_hatch())
    elif isinstance(artist, Collection) and len(artist.get_facecolors()):
        named = artist.get_facecolors()[0]
        paths = artist.get_paths()
        shape = paths[0].vertices.round(2).tobytes() if paths else b""
        channels = ("collection", shape, repr(artist.get_linestyles()))
    else:
        return None
    return _Category(label, colour.over(named), channels)


def _categories(axes) -> list[_Category]:
    handles, _labels = axes.get_legend_handles_labels()
    return [c for c in (_category(h) for h in handles) if c is not None]


def _unique(categories: Iterable[_Category]) -> list[_Category]:
    return list({c.label: c for c in categories}.values())


def _pair_problems(first: _Category, second: _Category) -> list[Problem]:
    names = (
        f"'{first.label}' ({to_hex(first.colour)}) and '{second.label}' ({to_hex(second.colour)})"
    )
    problems = []
    other_channel = first.channels != second.channels
    gap = abs(colour.lightness(first.colour) - colour.lightness(second.colour))
    if gap < colour.MIN_LIGHTNESS_GAP and not other_channel:
        problems.append(
            Problem(
                "grayscale",
                f"categories {names} differ by {gap:.1f} in L* and share marker, line style and "
                f"fill; give one a second channel or a lightness gap of "
                f"{colour.MIN_LIGHTNESS_GAP:g}",
            )
        )
    if colour.distance(first.colour, second.colour) < 1:
        return problems  # one colour on purpose: the other channel must carry them (above)
    for deficiency in ("normal vision", *colour.CVD_TYPES):
        if deficiency == "normal vision":
            apart = colour.distance(first.colour, second.colour)
        else:
            apart = colour.distance(
                colour.simulate(first.colour, deficiency),
                colour.simulate(second.colour, deficiency),
            )
        if apart < colour.MIN_CVD_DISTANCE:
            problems.append(
                Problem(
                    "colour vision",
                    f"categories {names} are {apart:.1f} apart in CAM02-UCS under simulated "
                    f"{deficiency}; category colours need {colour.MIN_CVD_DISTANCE:g}",
                )
            )
    return problems


def _category_colours(categories: Sequence[_Category]) -> list[Problem]:
    problems = []
    for first, second in itertools.combinations(categories, 2):
        problems += _pair_problems(first, second)
    return problems


# --- recording reviews during a build --------------------------------------------------

_recorded: ContextVar[dict[str, FigureReview] | None] = ContextVar("figure_reviews", default=None)


@contextmanager
def recording() -> Iterator[dict[str, FigureReview]]:
    """Collect the review of every figure drawn inside the block, keyed by its SVG text.

    The build looks each placed chart's SVG up here, so a figure drawn and then not used
    is never held against the brief.
    """
    reviews: dict[str, FigureReview] = {}
    token = _recorded.set(reviews)
    try:
        yield reviews
    finally:
        _recorded.reset(token)


def active() -> bool:
    """Whether a build is recording reviews (figures drawn outside a build skip the review)."""
    return _recorded.get() is not None


def record(svg: str, review: FigureReview) -> None:
    reviews = _recorded.get()
    if reviews is not None:
        reviews[svg] = review


def failures(charts: Iterable, reviews: dict[str, FigureReview]) -> list[str]:
    """One sentence per broken rule of the placed ``charts``, naming the figure and the rule.

    ``charts`` carry ``key``, ``title`` and ``svg`` (figures.theme.Chart); a chart whose SVG
    was drawn outside the recording has no review and nothing to report.
    """
    sentences = []
    for chart in charts:
        found = reviews.get(chart.svg)
        for problem in found.problems if found else ():
            sentences.append(
                f"figure '{chart.title}' ({chart.key}) breaks the {problem.rule} rule: {problem.detail}"
            )
    return list(dict.fromkeys(sentences))


def unseen(charts: Iterable, reviews: dict[str, FigureReview]) -> list[str]:
    """What the review could not check in the placed ``charts``, one sentence each (for the log)."""
    return [
        f"figure '{chart.title}' ({chart.key}): {note}"
        for chart in charts
        for note in (reviews[chart.svg].unseen if chart.svg in reviews else ())
    ]
