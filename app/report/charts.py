"""The report's five charts, drawn from the stored audit document alone.

Each chart is a ``ChartSpec``: a builder that turns the document into a matplotlib Figure, and the
words around it (a title, a caption, and a text alternative that states the numbers the picture
shows). Nothing here computes a statistic: every line, band, bar and cell comes from the document
``app.audit.serialize.audit_document`` wrote; the only arithmetic is scaling slopes into the rate
unit and normalising histogram counts to shares.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import PercentFormatter

from app.report import palette
from app.report.figures import CHART_WIDTH, lay_out, new_figure, styled
from app.report.numbers import Rate, format_percent, format_probability, format_years, is_number, time_of, window_span

GAP_FACTOR = 1.5  # a step this many times the usual one means values are missing between
LABEL_WRAP = 60  # characters per line of a series name above a chart
CHART_NAMES = ("series", "null", "sensitivity", "segments", "detectability")


@dataclass(frozen=True)
class ChartSpec:
    name: str
    title: Callable[[dict[str, Any]], str]
    caption: Callable[[dict[str, Any]], str]
    description: Callable[[dict[str, Any]], str]
    build: Callable[[dict[str, Any]], Figure]


def stored_array(values: Any) -> np.ndarray:
    """A stored list as floats, with JSON nulls (NaN in the result) back as NaN."""
    if values is None:
        return np.empty(0)
    return np.array([math.nan if v is None else v for v in values], dtype=float)


def _value_axis_label(doc: dict[str, Any]) -> str:
    inputs = doc.get("inputs") or {}
    label, units = inputs.get("label") or "", inputs.get("units") or ""
    if label and units:
        return f"{label} ({units})"
    return label or units or "Value"


def name_values(ax, label: str, units: str) -> str:
    """Units on the axis, where there is room; returns the series' name, however long, wrapped for above the plot."""
    ax.set_ylabel(units or "Value")
    return textwrap.fill(label, LABEL_WRAP) if label else ""


def _name_document_values(ax, doc: dict[str, Any]) -> str:
    inputs = doc.get("inputs") or {}
    return name_values(ax, inputs.get("label") or "", inputs.get("units") or "")


def claim_span(doc: dict[str, Any]) -> str:
    return window_span(doc)


def confidence_text(doc: dict[str, Any]) -> str:
    return f"{100 * float(doc['options'].get('confidence', 0.95)):.0f}%"


def trend_band(ax, line: dict[str, Any], colour: str, label: str, linestyle: str) -> None:
    t = stored_array(line.get("time"))
    if t.size == 0:
        return
    if line.get("lower") is not None and line.get("upper") is not None:  # no band when the noise is nil
        ax.fill_between(t, stored_array(line["lower"]), stored_array(line["upper"]), color=colour, alpha=0.16,
                        linewidth=0)
    ax.plot(t, stored_array(line["value"]), color=colour, linewidth=2.0, linestyle=linestyle, label=label)


def broken_at_gaps(t: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The line interrupted where values are missing, so a gap is never drawn as if it had been measured."""
    if t.size < 3:
        return t, y
    steps = np.diff(t)
    gaps = np.flatnonzero(steps > GAP_FACTOR * np.median(steps)) + 1
    return np.insert(t, gaps, np.nan), np.insert(y, gaps, np.nan)


def observed_line(ax, t: np.ndarray, y: np.ndarray, label: str = "Data", colour: str = palette.OBSERVED) -> None:
    ax.plot(*broken_at_gaps(t, y), color=colour, linewidth=0.8 if t.size > 200 else 1.0, label=label, zorder=1)
    if t.size <= 200:
        ax.plot(t, y, linestyle="none", marker="o", markersize=2.2, color=colour, zorder=1)


# 1. The series with the reference trend, the window trend and their ranges.

@styled
def _series_chart(doc: dict[str, Any]) -> Figure:
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    curves = doc["curves"]
    claim = doc["claim"]
    ax.axvspan(claim["start"], claim["end"], color=palette.WINDOW, alpha=0.07, linewidth=0)
    observed_line(ax, stored_array(curves["time"]), stored_array(curves["value"]))
    ref = doc["reference"]
    trend_band(ax, curves["reference_line"], palette.LONG_TERM,
          f"Long-term trend, {time_of(doc, ref['start'])} to {time_of(doc, ref['end'])}, with its {confidence_text(doc)} range",
          "-")
    trend_band(ax, curves["window_line"], palette.WINDOW,
          f"Claimed window's trend, {claim_span(doc)}, with its {confidence_text(doc)} range", (0, (4, 2)))
    lay_out(fig, ax, plot_height=2.6, title=_name_document_values(ax, doc))
    return fig


def _series_description(doc: dict[str, Any]) -> str:
    rate = Rate.of(doc)
    inputs, ref, lt, win = doc["inputs"], doc["reference"], doc["long_term"], doc["window"]
    return (f"Line chart of {_value_axis_label(doc)}, {inputs.get('n')} points from {time_of(doc, inputs.get('start'))} "
            f"to {time_of(doc, inputs.get('end'))}. A straight long-term trend over {time_of(doc, ref['start'])} to "
            f"{time_of(doc, ref['end'])} has a slope of {rate.text(lt.get('slope'))} ({confidence_text(doc)} range "
            f"{rate.range_text(lt.get('ci'))}). The claimed window, {claim_span(doc)}, is shaded; its own trend is "
            f"{rate.text(win.get('slope'))} ({confidence_text(doc)} range {rate.range_text(win.get('ci'))}).")


# 2. Window trends under the no-change model, with the claimed window marked.

def _shares(histogram: dict[str, Any], factor: float) -> tuple[np.ndarray, np.ndarray]:
    edges = stored_array(histogram.get("edges")) * factor
    counts = stored_array(histogram.get("counts"))
    total = counts.sum()
    return edges, (counts / total if total > 0 else counts)


@styled
def _null_chart(doc: dict[str, Any]) -> Figure:
    rate = Rate.of(doc)
    spell = doc["spell"]
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    edges, shares = _shares(spell.get("histogram") or {}, rate.factor)
    if edges.size > 1:
        ax.stairs(shares, edges, fill=True, color=palette.SIMULATED,
                  label=f"One {spell.get('window_points')}-point window in a record with no change in trend")
    extreme_edges, extreme_shares = _shares(spell.get("extremes_histogram") or {}, rate.factor)
    if extreme_edges.size > 1:
        ax.stairs(extreme_shares, extreme_edges, color=palette.MARK, linewidth=1.4,
                  label="The most extreme such window anywhere in each simulated record")
    if is_number(spell.get("null_slope")):
        ax.axvline(rate.scaled(spell["null_slope"]), color=palette.LONG_TERM, linewidth=1.6, linestyle=(0, (5, 2)),
                   label=f"Long-term trend: {rate.text(spell['null_slope'])}")
    if is_number(spell.get("observed_slope")):
        ax.axvline(rate.scaled(spell["observed_slope"]), color=palette.WINDOW, linewidth=2.2,
                   label=f"Claimed window: {rate.text(spell['observed_slope'])}")
    ax.set_xlabel(f"Trend of the window ({rate.axis_unit})")
    ax.set_ylabel("Share of simulations")
    ax.yaxis.set_major_formatter(PercentFormatter(1.0, decimals=0))
    ax.set_ylim(bottom=0)
    lay_out(fig, ax, plot_height=2.3)
    return fig


def _null_description(doc: dict[str, Any]) -> str:
    rate = Rate.of(doc)
    spell = doc["spell"]
    return (f"Histogram of the trends of {spell.get('window_points')}-point windows in "
            f"{spell.get('n_simulations')} simulated records that follow the long-term trend "
            f"({rate.text(spell.get('null_slope'))}) with this series' noise. The claimed window's trend, "
            f"{rate.text(spell.get('observed_slope'))}, is marked. A window at least this extreme turned up somewhere "
            f"in {format_probability(spell.get('probability'))} of the simulated records, and in "
            f"{format_percent(spell.get('probability_single_window'), 1)} of single windows.")


# 3. Start/end sensitivity: the trend of every nearby window, ranked, with the claimed one marked.

def nearby_windows(doc: dict[str, Any]) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
    """Every nearby window with a trend, ranked from the flattest to the steepest: (trends in the rate unit,
    starts, ends, the claimed window's place in that order). The claimed window is the grid's middle cell."""
    cherry = doc["cherry_pick"]
    starts, ends = stored_array(cherry["start_times"]), stored_array(cherry["end_times"])
    slopes = np.array([stored_array(row) for row in cherry["slopes"]], dtype=float).reshape(starts.size, ends.size)
    start_grid, end_grid = np.meshgrid(starts, ends, indexing="ij")
    claimed = np.zeros(slopes.shape, dtype=bool)
    claimed[starts.size // 2, ends.size // 2] = True
    keep = np.isfinite(slopes)
    order = np.argsort(slopes[keep], kind="stable")
    ranked_claimed = np.flatnonzero(claimed[keep][order])
    trends = slopes[keep][order] * Rate.of(doc).factor
    return trends, start_grid[keep][order], end_grid[keep][order], int(ranked_claimed[0]) if ranked_claimed.size else -1


@styled
def _sensitivity_chart(doc: dict[str, Any]) -> Figure:
    rate = Rate.of(doc)
    trends, _, _, claimed = nearby_windows(doc)
    long_term = doc["long_term"]
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    ranks = np.arange(1, trends.size + 1)
    ci = long_term.get("ci") or []
    if len(ci) == 2 and all(is_number(v) for v in ci):
        ax.axhspan(rate.scaled(ci[0]), rate.scaled(ci[1]), color=palette.LONG_TERM, alpha=0.16, linewidth=0,
                   label=f"Long-term trend's {confidence_text(doc)} range")
    if is_number(long_term.get("slope")):
        ax.axhline(rate.scaled(long_term["slope"]), color=palette.LONG_TERM, linewidth=1.8,
                   label=f"Long-term trend: {rate.text(long_term['slope'])}")
    if trends.size and np.nanmin(trends) < 0 < np.nanmax(trends):
        ax.axhline(0.0, color=palette.MUTED, linewidth=0.8, linestyle=(0, (2, 2)))
    low, high = sensitivity_limits(trends, claimed, ci)
    inside = (trends >= low) & (trends <= high)
    ax.plot(ranks[inside], trends[inside], linestyle="none", marker="o", markersize=4.2, color=palette.OBSERVED,
            label="A nearby window (each end moved a little)")
    for beyond, edge, marker in ((trends < low, low, "v"), (trends > high, high, "^")):
        if beyond.any():  # windows far from the claimed one sit on the edge instead of setting the scale
            ax.plot(ranks[beyond], np.full(int(beyond.sum()), edge), linestyle="none", marker=marker, markersize=4.2,
                    color=palette.OBSERVED)
    if claimed >= 0:
        ax.plot([ranks[claimed]], [trends[claimed]], linestyle="none", marker="o", markersize=9,
                markerfacecolor=palette.WINDOW, markeredgecolor=palette.INK, markeredgewidth=1.0,
                label=f"The claimed window, {claim_span(doc)}: {rate.text(doc['cherry_pick'].get('claimed_slope'))}")
    ax.set_xlim(0, trends.size + 1)
    ax.set_ylim(low, high)
    ax.set_xticks([1, trends.size] if trends.size > 1 else [1], ["flattest", "steepest"] if trends.size > 1 else [""])
    ends_of_row = ax.get_xticklabels()
    ends_of_row[0].set_horizontalalignment("left")
    ends_of_row[-1].set_horizontalalignment("right")
    ax.set_xlabel("Nearby windows, ranked by their trend")
    ax.set_ylabel(rate.axis_unit)
    lay_out(fig, ax, plot_height=2.3)
    return fig


def sensitivity_limits(trends: np.ndarray, claimed: int, ci) -> tuple[float, float]:
    """The trend axis of the nearby-windows chart: set by the middle 80% of the windows, the claimed one and the
    long-term range, never by a few short windows' wild trends (those are drawn on the edge)."""
    finite = trends[np.isfinite(trends)]
    anchors = list(np.quantile(finite, [0.1, 0.9])) if finite.size else []
    if 0 <= claimed < trends.size and math.isfinite(trends[claimed]):
        anchors.append(float(trends[claimed]))
    anchors += [float(v) for v in (ci or []) if is_number(v)]
    if not anchors:
        return -1.0, 1.0
    low, high = min(anchors), max(anchors)
    pad = 0.08 * (high - low) or 0.08 * max(abs(high), 1e-12)
    return low - pad, high + pad


def _sensitivity_description(doc: dict[str, Any]) -> str:
    rate = Rate.of(doc)
    cherry = doc["cherry_pick"]
    trends, _, _, claimed = nearby_windows(doc)
    starts, ends = cherry["start_times"], cherry["end_times"]
    low, high = (float(trends[0]), float(trends[-1])) if trends.size else (math.nan, math.nan)
    place = (f"The claimed window ({rate.text(cherry.get('claimed_slope'))}) is number {claimed + 1} of "
             f"{trends.size}, counting from the flattest." if claimed >= 0 else "The claimed window has no trend.")
    return (f"Dot chart of the trends of {trends.size} windows starting between {time_of(doc, starts[0])} and "
            f"{time_of(doc, starts[-1])} and ending between {time_of(doc, ends[0])} and {time_of(doc, ends[-1])}, "
            f"ranked from the flattest ({low:.3g} {rate.axis_unit}) to the steepest ({high:.3g} {rate.axis_unit}). "
            f"{place} A band shows the long-term trend, {rate.text(doc['long_term'].get('slope'))}, with its "
            f"{confidence_text(doc)} range {rate.range_text(doc['long_term'].get('ci'))}.")


# 4. The segmented fit with its breakpoints and their ranges.

@styled
def _segments_chart(doc: dict[str, Any]) -> Figure:
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    curves, segments = doc["curves"], doc["segments"]
    t = stored_array(curves["time"])
    observed_line(ax, t, stored_array(curves["value"]))
    for index, (low, high) in enumerate(segments.get("breakpoint_ranges") or []):
        if is_number(low) and is_number(high):
            ax.axvspan(low, high, color=palette.SEGMENTS, alpha=0.13, linewidth=0,
                       label=f"Range of each break ({confidence_text(doc)})" if index == 0 else None)
    for index, when in enumerate(segments.get("breakpoints") or []):
        ax.axvline(when, color=palette.SEGMENTS, linewidth=1.1, linestyle=(0, (2, 2)),
                   label="Estimated break" if index == 0 else None)
    jumps = (segments.get("discontinuous") or {}).get("fitted")
    if jumps is not None and len(jumps) == t.size:
        ax.plot(t, stored_array(jumps), color=palette.MARK, linewidth=1.2, linestyle=(0, (1, 1.5)),
                label="Fit allowing jumps between segments")
    fitted = segments.get("fitted")
    if fitted is not None and len(fitted) == t.size:
        ax.plot(t, stored_array(fitted), color=palette.SEGMENTS, linewidth=2.2, label="Joined straight segments")
    claim = doc["claim"]
    ax.axvline(claim["start"], color=palette.WINDOW, linewidth=1.2, label=f"Claimed start: {time_of(doc, claim['start'])}")
    lay_out(fig, ax, plot_height=2.5, title=_name_document_values(ax, doc))  # one column: reads on a phone
    return fig


def _segments_description(doc: dict[str, Any]) -> str:
    rate = Rate.of(doc)
    segments = doc["segments"]
    breaks = [b for b in segments.get("breakpoints") or [] if is_number(b)]
    pieces = "; ".join(f"{time_of(doc, s['start'])} to {time_of(doc, s['end'])}: {rate.text(s.get('slope'))}"
                       for s in segments.get("segments") or [])
    found = ("no break, so one straight line" if not breaks else
             f"{len(breaks)} break{'s' if len(breaks) > 1 else ''}, at " + ", ".join(time_of(doc, b) for b in breaks))
    return (f"The series with a fit of joined straight segments. The search found {found}. "
            f"Segment trends: {pieces or 'none'}. The claimed start, {time_of(doc, doc['claim']['start'])}, is marked.")


# 5. How long a window must be to show the long-term trend, against the claimed window's length.

@styled
def _detectability_chart(doc: dict[str, Any]) -> Figure:
    detect = doc["detectability"]
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    curve = detect.get("curve") or []
    years = stored_array([point["years"] for point in curve])
    power = stored_array([point["power"] for point in curve])
    ax.plot(years, power, color=palette.LONG_TERM, linewidth=2.0,
            label="Chance a window this long shows the long-term trend")
    window_years = detect.get("window_years")
    if is_number(window_years):
        ax.axvline(window_years, color=palette.WINDOW, linewidth=1.8,
                   label=f"The claimed window: {format_years(window_years)} years")
        if is_number(detect.get("power")):
            ax.plot([window_years], [detect["power"]], marker="o", markersize=6, color=palette.WINDOW,
                    linestyle="none")
    needed = detect.get("years_to_detect")
    if is_number(needed):
        ax.axvline(needed, color=palette.MARK, linewidth=1.4, linestyle=(0, (4, 2)),
                   label=f"Years needed to detect the trend: {format_years(needed)}")
    ax.set_ylim(0, 1.02)
    ax.set_xlim(0, _detect_view_end(years, window_years, needed))
    ax.yaxis.set_major_formatter(PercentFormatter(1.0, decimals=0))
    ax.set_xlabel("Length of a window (years)")
    ax.set_ylabel("Chance of detecting the trend")
    lay_out(fig, ax, plot_height=2.2)
    return fig


def _detect_view_end(years: np.ndarray, window_years: Any, needed: Any) -> float:
    """Show the curve up to a little past both marks; beyond that it only sits at 100%."""
    marks = [v for v in (window_years, needed) if is_number(v)]
    longest = float(np.nanmax(years)) if years.size else 10.0
    return max(10.0, min(longest, 2.0 * max(marks))) if marks else longest


def _detectability_description(doc: dict[str, Any]) -> str:
    detect = doc["detectability"]
    return (f"Curve of the chance that a window of a given length shows the long-term trend as significant, "
            f"rising with the window's length. The claimed window spans {format_years(detect.get('window_years'))} "
            f"years, where that chance is {format_percent(detect.get('power'))}; about "
            f"{format_years(detect.get('years_to_detect'))} years are needed to detect the trend against this "
            f"series' noise.")


def _caption_series(doc):
    return ("The data, the long-term trend over the reference period and the trend of the claimed window, each "
            "with its range. Where the two shaded ranges overlap, the window's trend is not clearly different "
            "from the long-term one.")


def _caption_null(doc):
    return ("How steep or flat a window of the same length comes out by chance when the long-term trend simply "
            "continues with this series' year-to-year noise. The outline shows the most extreme window anywhere "
            "in each simulated record: the fair comparison when a claimant was free to choose the window.")


def _caption_sensitivity(doc):
    return ("Each dot is the trend of a window whose start and end lie near the claimed ones, ranked from the "
            "flattest to the steepest. A claimed window at the very end of the row, far from the rest, depends on "
            "exactly where it was cut; one among many similar dots does not.")


def _caption_segments(doc):
    return ("Where an automatic search, not told about the claim, would put changes in trend. Shaded spans give "
            "each break's range; a break far from the claimed start does not support the claim.")


def _caption_detectability(doc):
    return ("A trend is hard to see in a short window: the curve shows how often a window of each length would "
            "show the long-term trend as significant. Windows to the left of the dashed line usually cannot.")


CHARTS: dict[str, ChartSpec] = {spec.name: spec for spec in (
    ChartSpec("series", lambda d: "The series and its trends", _caption_series, _series_description, _series_chart),
    ChartSpec("null", lambda d: "How unusual is the window's trend?", _caption_null, _null_description, _null_chart),
    ChartSpec("sensitivity", lambda d: "Does the claim depend on the exact dates?", _caption_sensitivity,
              _sensitivity_description, _sensitivity_chart),
    ChartSpec("segments", lambda d: "Where the trend changes, if anywhere", _caption_segments, _segments_description,
              _segments_chart),
    ChartSpec("detectability", lambda d: "How long a record is needed to see the trend", _caption_detectability,
              _detectability_description, _detectability_chart),
)}


@styled
def preview_chart(time: np.ndarray, value: np.ndarray, label: str, units: str) -> Figure:
    """The small picture of what was read, shown before the audit runs."""
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    ax.plot(*broken_at_gaps(np.asarray(time, dtype=float), np.asarray(value, dtype=float)), color=palette.OBSERVED,
            linewidth=0.9)
    lay_out(fig, ax, plot_height=1.5, title=name_values(ax, label, units))
    return fig
