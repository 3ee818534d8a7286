"""The verdict card: one picture to embed beside a published piece, drawn by matplotlib from a ``CardFace``.

Wide (1200 x 675) or square (1080 x 1080) pixels: the figure is drawn at 100 dots to the inch, so the PNG has
those sizes and the SVG says them in its width and height. The design is ours: the claim in brief, the verdict
label and headline in the audit's own words, a small chart of the series with the claimed window shaded, the
report's short link and the software's name. No scale, meter or stamp: the words carry the verdict.
"""

from __future__ import annotations

import re
import textwrap

from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from app.report import palette
from app.report.charts import broken_at_gaps
from app.report.figures import drawing_slots, labelled_svg, png_bytes, styled
from app.errors import Location, NotFound
from app.report.chart_cache import kept
from app.report.sharing import (CARD_SIZES, SOFTWARE_NAME, CardFace, audit_card_face, card_alt_text,
                                correlation_card_face)

CARD_DPI = 100
SHAPES = tuple(CARD_SIZES)
LINE_STYLES = {"long_term": (palette.LONG_TERM, "-", "Long-term trend"),
               "window": (palette.WINDOW, (0, (4, 2)), "Claimed window's trend"),
               "link": (palette.INK, "-", "As the link predicts")}
HEADLINE_CHARACTERS = 170


def _wrapped(text: str, width: int, lines: int) -> str:
    wrapped = textwrap.wrap(" ".join(text.split()), width) or [""]
    if len(wrapped) > lines:
        wrapped = wrapped[:lines]
        wrapped[-1] = wrapped[-1][: width - 1].rstrip() + "…"
    return "\n".join(wrapped)


def _text_column(fig: Figure, face: CardFace, left: float, top_px: float, width_chars: int) -> None:
    """The words, top down: the claim, the verdict label and the headline (steps in pixels from the top)."""
    height = fig.get_figheight() * CARD_DPI
    y = top_px

    def put(text: str, step: float, **style) -> None:
        nonlocal y
        fig.text(left, 1 - y / height, text, va="top", **style)
        y += step

    put("THE CLAIM", 30, color=palette.MUTED, fontsize=13, fontweight="bold")
    claim = _wrapped(f"“{face.claim}”" if face.quoted else face.claim, int(width_chars * 1.25), 3)
    put(claim, (claim.count("\n") + 1) * 32 + 30, color=palette.INK, fontsize=18, family="serif", style="italic",
        linespacing=1.3)
    put("WHAT THE DATA SHOW", 30, color=palette.MUTED, fontsize=13, fontweight="bold")
    put(face.verdict_label, 42, color=palette.WINDOW, fontsize=19, fontweight="bold")
    put(_wrapped(face.headline, width_chars, 6), 0, color=palette.INK, fontsize=22, family="serif",
        fontweight="bold", linespacing=1.2)


def _chart(fig: Figure, face: CardFace, box: list[float]) -> None:
    ax = fig.add_axes(box)
    ax.grid(True, color=palette.GRID, linewidth=0.6)
    if face.window is not None:
        ax.axvspan(*face.window, color=palette.WINDOW, alpha=0.12, linewidth=0, label="Claimed window")
    ax.plot(*broken_at_gaps(face.time, face.value), color=palette.OBSERVED, linewidth=1.2, label="Data")
    for t, y, role in face.lines:
        colour, style, label = LINE_STYLES[role]
        ax.plot(t, y, color=colour, linestyle=style, linewidth=2.6, label=label)
    ax.tick_params(labelsize=11)
    ax.legend(loc="upper left", fontsize=10.5, frameon=False, ncols=2)
    ax.set_title(_wrapped(face.value_label, 48, 1), loc="left", fontsize=11.5, color=palette.MUTED)


@styled
def card_figure(face: CardFace, shape: str = "wide") -> Figure:
    width, height = CARD_SIZES[shape]
    fig = Figure(figsize=(width / CARD_DPI, height / CARD_DPI), dpi=CARD_DPI)
    fig.patch.set_facecolor(palette.PAPER)
    fig.add_artist(Rectangle((0, 1 - 54 / height), 1, 54 / height, transform=fig.transFigure,
                             facecolor=palette.INK, edgecolor="none"))
    fig.text(40 / width, 1 - 27 / height, SOFTWARE_NAME, color=palette.PAPER, fontsize=15, fontweight="bold",
             va="center")
    fig.text(1 - 40 / width, 1 - 27 / height, _wrapped(face.title, 60, 1), color=palette.PAPER, fontsize=13,
             va="center", ha="right")
    if shape == "square":
        _text_column(fig, face, 40 / width, 84, 44)
        _chart(fig, face, [80 / width, 110 / height, 1 - 120 / width, 420 / height])
    else:
        _text_column(fig, face, 40 / width, 84, 30)
        _chart(fig, face, [640 / width, 130 / height, 520 / width, 420 / height])
    fig.text(40 / width, 36 / height, face.link, color=palette.LONG_TERM, fontsize=14, family="monospace",
             va="center")
    fig.text(1 - 40 / width, 36 / height, face.software, color=palette.MUTED, fontsize=12, va="center", ha="right")
    return fig


_SIZE = re.compile(r'(<svg\b[^>]*?)\swidth="[^"]*"\sheight="[^"]*"')


def card_svg(face: CardFace, alt_text: str, shape: str = "wide") -> str:
    """The card as a standalone SVG file of the stated pixel size, labelled with its text alternative."""
    width, height = CARD_SIZES[shape]
    svg = labelled_svg(card_figure(face, shape), f"card-{shape}", f"{face.verdict_label}: {face.headline}",
                       alt_text)
    svg = _SIZE.sub(lambda m: f'{m.group(1)} width="{width}" height="{height}"', svg, count=1)
    return '<?xml version="1.0" encoding="utf-8" standalone="no"?>\n' + svg + "\n"


def card_png(face: CardFace, shape: str = "wide") -> bytes:
    return png_bytes(card_figure(face, shape), dpi=CARD_DPI)


CARD_FORMATS = {"svg": "image/svg+xml", "png": "image/png", "txt": "text/plain; charset=utf-8"}
FACES = {"audit": audit_card_face, "correlation": correlation_card_face}


def card_file(kind: str, record_id: str, title: str, document: dict, permalink: str, shape: str,
              fmt: str) -> bytes | str:
    """The record's card as 'svg', 'png' or its text alternative 'txt', made once per process and shape."""
    if shape not in SHAPES:
        raise NotFound(f"no card shape '{shape[:20]}'", location=Location(field="shape"),
                       fix="Use shape=wide (1200 x 675, the default) or shape=square (1080 x 1080)")
    if fmt not in CARD_FORMATS:
        raise NotFound(f"no card format '{fmt[:10]}'", location=Location(field="format"), fix="Use .svg, .png or .txt")

    def make() -> bytes | str:
        face = FACES[kind](record_id, title, document, permalink)
        alt = card_alt_text(face, document)
        if fmt == "txt":
            return alt + "\n"
        with drawing_slots():
            return card_svg(face, alt, shape) if fmt == "svg" else card_png(face, shape)

    return kept(("card", kind, record_id, permalink, shape, fmt), make)
