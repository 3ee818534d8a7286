"""The correlation report's charts, drawn from the stored correlation document alone.

(1) both series with the response the full-record link predicts; (2) the correlation in every window
against the band the simulated null gives; (3) how many weak windows the null produces, against the
count observed. Every line and band comes from ``app.correlation.serialize.correlation_document``;
the only arithmetic is turning histogram counts into shares.
"""

from __future__ import annotations

import textwrap
from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import PercentFormatter

from app.report import palette
from app.report.charts import LABEL_WRAP, ChartSpec, broken_at_gaps, observed_line, stored_array
from app.report.correlation_context import relationship, weakest_window
from app.report.figures import CHART_WIDTH, lay_out, new_figure, styled
from app.report.numbers import format_percent, format_time, is_number

CORRELATION_CHART_NAMES = ("series", "rolling", "null")


def _series(doc: dict[str, Any], role: str) -> dict[str, Any]:
    return (doc.get("inputs") or {}).get(role) or {}


def _label(doc: dict[str, Any], role: str) -> str:
    return str(_series(doc, role).get("label") or role.capitalize())


def _axis_label(doc: dict[str, Any], role: str) -> str:
    units = _series(doc, role).get("units") or ""
    return f"{_label(doc, role)} ({units})" if units else _label(doc, role)


def _time(doc: dict[str, Any], value: Any) -> str:
    return format_time(value, _series(doc, "response").get("sampling") or "")


def _years(doc: dict[str, Any]) -> str:
    return f"{float(doc.get('window_years') or 0):g}"


def _r(value: Any) -> str:
    return f"{value:.2f}".replace("-", "−") if is_number(value) else "undetermined"


# 1. Both series, and the response the link predicts.

@styled
def _series_chart(doc: dict[str, Any]) -> Figure:
    curves = doc["curves"]
    t = stored_array(curves.get("time"))
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    observed_line(ax, t, stored_array(curves.get("response")), label=f"{_label(doc, 'response')} (left axis)",
                  colour=palette.LONG_TERM)
    ax.plot(t, stored_array(curves.get("fitted")), color=palette.INK, linewidth=2.0,
            label=f"{_label(doc, 'response')} as the link predicts: {relationship(doc).text}")
    ax.set_ylabel(_series(doc, "response").get("units") or "Response")
    twin = ax.twinx()
    twin.spines["right"].set_visible(True)
    twin.grid(False)
    twin.plot(*broken_at_gaps(t, stored_array(curves.get("driver"))), color=palette.DRIVER, linewidth=1.6,
              linestyle=(0, (5, 2)), label=f"{_label(doc, 'driver')} (right axis)")
    twin.set_ylabel(_series(doc, "driver").get("units") or "Driver", color=palette.DRIVER)
    twin.tick_params(axis="y", colors=palette.DRIVER, labelcolor=palette.INK)
    title = textwrap.fill(f"{_axis_label(doc, 'response')} and {_axis_label(doc, 'driver')}", LABEL_WRAP)
    lay_out(fig, ax, plot_height=2.6, title=title, also_in_key=(twin,), right_axis=True)
    twin.set_position(ax.get_position())
    return fig


def _series_description(doc: dict[str, Any]) -> str:
    inputs = doc.get("inputs") or {}
    link = relationship(doc)
    conf = f"{100 * float(doc.get('confidence') or 0.95):.0f}%"
    return (f"Line chart of {_axis_label(doc, 'response')} on the left axis and {_axis_label(doc, 'driver')} on the "
            f"right axis, at {inputs.get('n')} shared times from {_time(doc, inputs.get('start'))} to "
            f"{_time(doc, inputs.get('end'))}. A dark line shows the response the full-record link predicts from "
            f"the driver: {link.text} ({conf} range {link.range}). The two series as they are correlate with "
            f"r = {_r(doc.get('r_levels'))}; once each series' trend is removed, r = {_r(doc.get('r_detrended'))}.")


def _series_caption(doc: dict[str, Any]) -> str:
    return ("The driver, the response, and the response the full-record link predicts. Where the data wander "
            "around the predicted line for a few years, short windows can show little co-movement even though the "
            "link holds over the whole record.")


# 2. The correlation in every window, against the null's band.

@styled
def _rolling_chart(doc: dict[str, Any]) -> Figure:
    rolling = (doc.get("curves") or {}).get("rolling") or {}
    stored = doc.get("rolling") or {}
    starts = stored_array(rolling.get("start"))
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    lower, upper = stored_array(rolling.get("lower")), stored_array(rolling.get("upper"))
    if lower.size == starts.size and starts.size:
        ax.fill_between(starts, lower, upper, color=palette.SIMULATED, alpha=0.55, linewidth=0,
                        label="Middle 90% of windows when the response follows the link exactly, with noise "
                              "like the data's")
        ax.plot(starts, stored_array(rolling.get("median")), color=palette.LONG_TERM, linewidth=1.2,
                linestyle=(0, (4, 2)), label="Middle of that range")
    threshold = float(stored.get("threshold", 0.5)) * (stored.get("sign") or 1)
    ax.axhline(threshold, color=palette.MARK, linewidth=1.3, linestyle=(0, (1, 1.5)),
               label=f"r = {_r(threshold)}: a window {'below' if threshold > 0 else 'above'} this is called weak")
    ax.plot(starts, stored_array(rolling.get("r")), color=palette.WINDOW, linewidth=1.8,
            label=f"Observed correlation in each {_years(doc)}-year window")
    span, weakest = weakest_window(doc)
    if span and is_number(weakest):
        index = int(np.nanargmin((stored.get("sign") or 1) * stored_array(rolling.get("r"))))
        ax.plot([starts[index]], [weakest], marker="o", markersize=6, color=palette.WINDOW, linestyle="none",
                label=f"Weakest window: r = {_r(weakest)}, {span}")
    ax.set_ylim(-1.02, 1.02)
    ax.set_xlabel("Start of the window")
    ax.set_ylabel("Correlation (r)")
    lay_out(fig, ax, plot_height=2.4)
    return fig


def _rolling_description(doc: dict[str, Any]) -> str:
    stored, null = doc.get("rolling") or {}, doc.get("null") or {}
    span, weakest = weakest_window(doc)
    band = null.get("share_below_half_band") or [None, None]
    return (f"Line chart of the correlation between {_label(doc, 'driver')} and {_label(doc, 'response')} in each of "
            f"{len(stored.get('r') or [])} windows of {_years(doc)} years, by the window's start, against a shaded "
            f"band holding the middle 90% of window correlations in {null.get('n_simulations')} simulated records "
            f"where the response follows the full-record link exactly, with noise like the data's. "
            f"{format_percent(stored.get('share_below_half'))} of the observed windows have a correlation below "
            f"{float(stored.get('threshold', 0.5)):g}; the simulations give {format_percent(band[0])} to "
            f"{format_percent(band[1])}. The weakest window, {span or 'undetermined'}, has r = {_r(weakest)}.")


def _rolling_caption(doc: dict[str, Any]) -> str:
    return (f"How closely the two series move together in every {_years(doc)}-year window. The shaded band is what a "
            "steady link with natural variability produces: observed windows inside it, however weak, are no "
            "evidence against the link.")


# 3. How many weak windows the null produces.

@styled
def _null_chart(doc: dict[str, Any]) -> Figure:
    null, stored = doc.get("null") or {}, doc.get("rolling") or {}
    histogram = null.get("share_histogram") or {}
    edges, counts = stored_array(histogram.get("edges")), stored_array(histogram.get("counts"))
    fig = new_figure(CHART_WIDTH)
    ax = fig.add_subplot()
    if edges.size > 1 and counts.sum() > 0:
        ax.stairs(counts / counts.sum(), edges, fill=True, color=palette.SIMULATED,
                  label=f"{null.get('n_simulations')} simulated records that follow the link exactly")
    band = null.get("share_below_half_band") or []
    for index, edge in enumerate(v for v in band if is_number(v)):
        ax.axvline(edge, color=palette.LONG_TERM, linewidth=1.2, linestyle=(0, (4, 2)),
                   label="Middle 90% of the simulations" if index == 0 else None)
    if is_number(stored.get("share_below_half")):
        ax.axvline(stored["share_below_half"], color=palette.WINDOW, linewidth=2.2,
                   label=f"Observed: {format_percent(stored['share_below_half'])} of windows")
    ax.set_xlim(0, 1)
    ax.set_ylim(bottom=0)
    ax.xaxis.set_major_formatter(PercentFormatter(1.0, decimals=0))
    ax.yaxis.set_major_formatter(PercentFormatter(1.0, decimals=0))
    ax.set_xlabel(f"Share of {_years(doc)}-year windows with a correlation below "
                  f"{float(stored.get('threshold', 0.5)):g}")
    ax.set_ylabel("Share of simulations")
    lay_out(fig, ax, plot_height=2.2)
    return fig


def _null_description(doc: dict[str, Any]) -> str:
    null, stored = doc.get("null") or {}, doc.get("rolling") or {}
    band = null.get("share_below_half_band") or [None, None]
    return (f"Histogram of the share of weak {_years(doc)}-year windows in each of {null.get('n_simulations')} "
            f"simulated records where the response follows the full-record link exactly, with noise like the "
            f"data's. The middle 90% runs from {format_percent(band[0])} to {format_percent(band[1])}, averaging "
            f"{format_percent(null.get('share_below_half'))}. The observed share, "
            f"{format_percent(stored.get('share_below_half'))}, was reached or exceeded in "
            f"{format_percent(null.get('probability_share'))} of the simulations.")


def _null_caption(doc: dict[str, Any]) -> str:
    return ("How many weak windows a steady link produces by chance. An observed share far to the right of the "
            "simulated ones would mean the two series co-move less than the link and the noise explain.")


CORRELATION_CHART_SPECS: dict[str, ChartSpec] = {spec.name: spec for spec in (
    ChartSpec("series", lambda d: "The two series and the link between them", _series_caption, _series_description,
              _series_chart),
    ChartSpec("rolling", lambda d: f"Correlation in every {_years(d)}-year window", _rolling_caption,
              _rolling_description, _rolling_chart),
    ChartSpec("null", lambda d: "How many weak windows to expect", _null_caption, _null_description, _null_chart),
)}
