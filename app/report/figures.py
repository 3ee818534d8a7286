"""From a matplotlib Figure to an SVG that is safe to inline, or to a PNG.

Figures are built with ``matplotlib.figure.Figure`` directly (no pyplot), so nothing here touches global
state but the house style, set once (``use_house_style``), and rendering is safe in worker threads. User
text never goes through TeX or mathtext (``text.parse_math`` off), so a title such as ``$\\alpha$`` prints as typed; the SVG writer escapes
``<``, ``>`` and ``&``; comments, which echo every text, are dropped before inlining.
"""

from __future__ import annotations

import functools
import io
import re
import threading
from xml.sax.saxutils import escape, quoteattr

import matplotlib

matplotlib.use("Agg")  # before anything can pick an interactive backend

from matplotlib.figure import Figure  # noqa: E402
from matplotlib.ticker import MaxNLocator  # noqa: E402

from app.report import palette  # noqa: E402
from app.report.svg_attributes import presentation_attributes  # noqa: E402

PNG_DPI = 150

STYLE = {
    "svg.fonttype": "none",  # text stays text: smaller files, selectable, and escaping is checkable
    "svg.hashsalt": "trendaudit",  # stable element ids, so the same audit gives the same SVG
    "text.parse_math": False,
    "text.usetex": False,
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans", "Arial", "Helvetica"],
    "font.size": 9.5,
    "axes.edgecolor": palette.MUTED,
    "axes.labelcolor": palette.INK,
    "axes.titlesize": 10.0,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": palette.GRID,
    "grid.linewidth": 0.6,
    "xtick.color": palette.MUTED,
    "ytick.color": palette.MUTED,
    "xtick.labelcolor": palette.INK,
    "ytick.labelcolor": palette.INK,
    "legend.frameon": False,
    "legend.fontsize": 9.0,
    "figure.facecolor": palette.PAPER,
    "axes.facecolor": palette.PAPER,
    "savefig.facecolor": palette.PAPER,
    "path.simplify": True,
}

_PROLOGUE = re.compile(r"\A.*?(?=<svg\b)", re.S)
_COMMENT = re.compile(r"<!--.*?-->", re.S)
_METADATA = re.compile(r"<metadata>.*?</metadata>\s*", re.S)
_ID = re.compile(r'\bid="([^"]+)"')
_SVG_OPEN = re.compile(r"<svg\b[^>]*>")
_REFERENCE = re.compile(r"#([-\w.:]+)")
# An element's opening or closing tag; text and comments cannot match: their "<" is escaped or followed by "!".
_TAG = re.compile(r"<[A-Za-z/][^<>]*>")


# Fixed margins, in inches, instead of matplotlib's constrained layout: that solver measures every
# text twice and took about half of each chart's drawing time. These fit tick labels of up to six
# characters, one axis label, and a legend of short lines under the plot.
CHART_WIDTH = 5.4  # inches: scaled to a 300-pixel phone column, 9-point lettering stays about 7 pixels high
MARGIN_LEFT = 0.85
MARGIN_RIGHT = 0.2
MARGIN_TOP = 0.12
TITLE_LINE = 0.2
X_TICKS_SPACE = 0.3  # tick labels under the plot
X_LABEL_SPACE = 0.2  # the axis label under them, when there is one
LEGEND_ROW = 0.208  # measured for 8-point legend text (0.185) and scaled to 9 points
LEGEND_PAD = 0.14
LEGEND_FOOT = 0.05
COLORBAR_SPACE = 1.25  # the colour scale, its ticks and its label, right of the plot
MAX_TICKS = 7  # per axis: every tick is several artists to draw
RIGHT_AXIS_SPACE = 0.65  # a second value axis on the right: its ticks and its label


@functools.cache
def use_house_style() -> None:
    """Makes the house style this process's matplotlib settings, once, before the first drawing.

    Not ``rc_context`` around each drawing: that saves the process-wide settings and puts them back on the way
    out, so drawings running together on threads (report views, chart files, cards) undid each other's style
    mid-drawing, and a card came out with its words as outlines. Nothing else in the process draws."""
    matplotlib.rcParams.update(STYLE)


# Drawings allowed to run at once in this process. Matplotlib holds the GIL while it draws, so more threads
# drawing together finish no sooner; each one in flight holds its figure and renderer (tens of MB for a long
# record), and under 32 clients asking for chart files the server's memory stepped up by 80 MB and stayed there.
DRAWINGS_AT_ONCE = 2


@functools.cache
def drawing_slots() -> threading.BoundedSemaphore:
    """The process's drawing slots: every chart or card is built and rendered holding one (``with``)."""
    return threading.BoundedSemaphore(DRAWINGS_AT_ONCE)


def new_figure(width: float = 7.0) -> Figure:
    """A figure whose height ``lay_out`` sets once the chart knows its legend and title."""
    use_house_style()
    return Figure(figsize=(width, 3.0))


def lay_out(fig: Figure, ax, *, plot_height: float, legend_columns: int = 1, title: str = "",
            colorbar_mappable=None, also_in_key=(), right_axis: bool = False):
    """Sizes the figure around a plot of ``plot_height`` inches, with the key under it; returns the colour bar.

    ``title`` (already wrapped) goes above the plot at a fixed place: an Axes title would be
    positioned by measuring every tick label, a large share of the drawing time. The key lists
    ``ax``'s labelled artists, then those of the axes in ``also_in_key`` whose labels are new.
    ``right_axis`` leaves room for a twin value axis on the right.
    """
    handles, labels = ax.get_legend_handles_labels()
    for other in also_in_key:
        for handle, label in zip(*other.get_legend_handles_labels()):
            if label not in labels:
                handles.append(handle)
                labels.append(label)
    rows = -(-len(handles) // legend_columns) if handles else 0
    width = fig.get_figwidth()
    title_lines = title.count("\n") + 1 if title else 0
    top = MARGIN_TOP + title_lines * TITLE_LINE
    bottom = X_TICKS_SPACE + (X_LABEL_SPACE if ax.get_xlabel() else 0.0) + (
        rows * LEGEND_ROW + LEGEND_PAD + LEGEND_FOOT if rows else 0.0)
    height = plot_height + top + bottom
    right = MARGIN_RIGHT + (COLORBAR_SPACE if colorbar_mappable is not None else 0.0) + (
        RIGHT_AXIS_SPACE if right_axis else 0.0)
    fig.set_size_inches(width, height)
    ax.set_position([MARGIN_LEFT / width, bottom / height, (width - MARGIN_LEFT - right) / width,
                     plot_height / height])
    for axis in (ax.xaxis, ax.yaxis):
        locator = axis.get_major_locator()
        if isinstance(locator, MaxNLocator):
            locator.set_params(nbins=MAX_TICKS)  # every tick is several artists: draw no more than a reader needs
    if title:
        fig.text(MARGIN_LEFT / width, 1.0 - MARGIN_TOP * 0.5 / height, title, ha="left", va="top",
                 color=palette.MUTED, fontsize=STYLE["axes.titlesize"])
    if handles:
        fig.legend(handles, labels, loc="lower left", ncols=legend_columns, handlelength=2.4,
                   bbox_to_anchor=(MARGIN_LEFT / width * 0.35, LEGEND_FOOT / height), borderaxespad=0.0)
    if colorbar_mappable is None:
        return None
    bar_axes = fig.add_axes([(width - right + 0.25) / width, bottom / height, 0.16 / width, plot_height / height])
    return fig.colorbar(colorbar_mappable, cax=bar_axes)


def stack_panels(upper, lower, gap: float = 0.25) -> None:
    """Splits the plot area ``lay_out`` gave ``upper`` into two panels, ``lower`` below it, ``gap`` inches apart."""
    box = upper.get_position()
    gap_share = gap / upper.figure.get_figheight()
    panel = (box.height - gap_share) / 2
    lower.set_position([box.x0, box.y0, box.width, panel])
    upper.set_position([box.x0, box.y0 + panel + gap_share, box.width, panel])


def styled(build):
    """Runs a chart builder with the house style, so the rc settings apply to every artist it makes."""

    def wrapper(*args, **kwargs):
        use_house_style()
        return build(*args, **kwargs)

    wrapper.__name__ = build.__name__
    wrapper.__doc__ = build.__doc__
    return wrapper


def _raw_svg(fig: Figure) -> str:
    buffer = io.StringIO()
    use_house_style()
    fig.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
    return buffer.getvalue()


def _prefix_ids(svg: str, prefix: str) -> str:
    """Gives every id in the SVG a per-chart prefix, so several charts inlined in one page never clash.

    Only inside element tags: text and comments (where a label such as "Ref #patch_1" or 'id="a"' is drawn
    as the person wrote it) are never touched, so a chart never misquotes its input."""
    ids = {found for tag in _TAG.findall(svg) for found in _ID.findall(tag)}
    if not ids:
        return svg

    def in_tag(match: re.Match) -> str:
        tag = _ID.sub(lambda m: f'id="{prefix}-{m.group(1)}"', match.group(0))
        # Every '#name' is looked up among the ids, rather than matched against one pattern listing them all:
        # that alternation took a third of the post-processing. References end where an id's characters end.
        return _REFERENCE.sub(lambda m: f"#{prefix}-{m.group(1)}" if m.group(1) in ids else m.group(0), tag)

    return _TAG.sub(in_tag, svg)


def _label(svg: str, prefix: str, title: str, description: str) -> str:
    """Adds role="img", <title> and <desc> (the text alternative) to the root element."""
    match = _SVG_OPEN.search(svg)
    if match is None:
        raise ValueError("matplotlib returned no <svg> element")
    title_id, desc_id = f"{prefix}-title", f"{prefix}-desc"
    opening = match.group(0)[:-1] + (f' role="img" aria-labelledby={quoteattr(title_id)} '
                                     f'aria-describedby={quoteattr(desc_id)} focusable="false">')
    labels = f'<title id={quoteattr(title_id)}>{escape(title)}</title><desc id={quoteattr(desc_id)}>{escape(description)}</desc>'
    return svg[:match.start()] + opening + labels + svg[match.end():]


def _responsive(svg: str) -> str:
    """Drops the fixed pt size so CSS scales the chart to its column (the viewBox keeps the shape)."""
    match = _SVG_OPEN.search(svg)
    opening = re.sub(r'\s(width|height)="[^"]*"', "", match.group(0))
    return svg[:match.start()] + opening + svg[match.end():]


def labelled_svg(fig: Figure, name: str, title: str, description: str) -> str:
    """The bare <svg> element: no prologue, no comments, labelled, with ids unique to this chart.

    This is the form that is kept (in memory and in the store); the page's and the download's forms
    are made from it by ``as_inline`` and ``as_standalone`` without drawing again.
    """
    svg = _raw_svg(fig)
    svg = _PROLOGUE.sub("", svg, count=1)
    svg = _COMMENT.sub("", svg)
    svg = _METADATA.sub("", svg)
    prefix = f"chart-{name}"
    # Presentation attributes, not style: the pages' Content-Security-Policy allows no inline style.
    return presentation_attributes(_label(_prefix_ids(svg, prefix), prefix, title, description)).strip()


def as_inline(labelled: str) -> str:
    """A labelled chart as an <svg> element for an HTML page, scaled by CSS to its column."""
    return _responsive(labelled)


def as_standalone(labelled: str) -> str:
    """A labelled chart as a downloadable .svg file at its drawn size, with its own title and description."""
    return '<?xml version="1.0" encoding="utf-8" standalone="no"?>\n' + labelled + "\n"


def inline_svg(fig: Figure, name: str, title: str, description: str) -> str:
    return as_inline(labelled_svg(fig, name, title, description))


def png_bytes(fig: Figure, dpi: int = PNG_DPI) -> bytes:
    buffer = io.BytesIO()
    use_house_style()
    fig.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()
