"""The chart a covariate adjustment adds: the series as measured and as adjusted, each with its long-term trend.

Both series and both trend lines come from the stored document: the raw audit's ``curves`` and the
adjusted audit's own ``curves`` (``adjustment.audit``), so nothing is refitted here.
"""

from __future__ import annotations

from typing import Any

from matplotlib.figure import Figure

from app.report import palette
from app.report.charts import (ChartSpec, claim_span, confidence_text, name_values, observed_line, stored_array,
                               trend_band)
from app.report.figures import CHART_WIDTH, lay_out, new_figure, stack_panels, styled
from app.report.numbers import Rate, time_of

ADJUSTED_CHART_NAME = "adjusted"


def factor_names(doc: dict[str, Any]) -> str:
    """'ocean_index', 'ocean_index and solar', 'a, b and c'."""
    names = [str(f.get("name", "")) for f in (doc.get("adjustment") or {}).get("factors") or []]
    if len(names) <= 1:
        return names[0] if names else "the factors"
    return ", ".join(names[:-1]) + " and " + names[-1]


def _trend_label(doc: dict[str, Any], which: str) -> str:
    ref = doc["reference"]
    return (f"Long-term trend {which}, {time_of(doc, ref['start'])} to {time_of(doc, ref['end'])}, "
            f"with its {confidence_text(doc)} range")


def _panel_label(ax, text: str) -> None:
    ax.text(0.01, 0.97, text, transform=ax.transAxes, ha="left", va="top", fontweight="bold", color=palette.INK,
            bbox={"facecolor": palette.PAPER, "edgecolor": "none", "alpha": 0.85, "pad": 1.5})


@styled
def _adjusted_chart(doc: dict[str, Any]) -> Figure:
    """Two panels on the same axes, so the spell and the trend can be compared by eye without overplotting."""
    adjusted = doc["adjustment"]["audit"]
    fig = new_figure(CHART_WIDTH)
    lower = fig.add_subplot()
    upper = fig.add_axes([0, 0, 1, 1], sharex=lower, sharey=lower)
    claim = doc["claim"]
    for ax in (upper, lower):
        ax.axvspan(claim["start"], claim["end"], color=palette.WINDOW, alpha=0.07, linewidth=0,
                   label=f"Claimed window, {claim_span(doc)}")
    observed_line(upper, stored_array(doc["curves"]["time"]), stored_array(doc["curves"]["value"]),
                  label="Data as measured")
    trend_band(upper, doc["curves"]["reference_line"], palette.LONG_TERM, _trend_label(doc, "as measured"), "-")
    observed_line(lower, stored_array(adjusted["curves"]["time"]), stored_array(adjusted["curves"]["value"]),
                  label=f"Data adjusted for {factor_names(doc)}", colour=palette.ADJUSTED_DATA)
    trend_band(lower, adjusted["curves"]["reference_line"], palette.ADJUSTED, _trend_label(adjusted, "adjusted"),
               (0, (5, 2)))
    _panel_label(upper, "As measured")
    _panel_label(lower, f"Adjusted for {factor_names(doc)}")
    upper.tick_params(labelbottom=False)
    inputs = doc.get("inputs") or {}
    title = name_values(lower, inputs.get("label") or "", inputs.get("units") or "")
    upper.set_ylabel(lower.get_ylabel())
    lay_out(fig, upper, plot_height=4.4, title=title, also_in_key=(lower,))
    stack_panels(upper, lower)
    return fig


def _adjusted_description(doc: dict[str, Any]) -> str:
    rate = Rate.of(doc)
    adjusted = doc["adjustment"]["audit"]
    conf = confidence_text(doc)

    def trends(d: dict[str, Any]) -> str:
        return (f"long-term trend {rate.text(d['long_term'].get('slope'))} ({conf} range "
                f"{rate.range_text(d['long_term'].get('ci'))}), trend in the claimed window "
                f"{rate.text(d['window'].get('slope'))} ({conf} range {rate.range_text(d['window'].get('ci'))})")

    return (f"Line chart of the series as measured, {doc['inputs'].get('n')} points, and of the same series with the "
            f"estimated effect of {factor_names(doc)} taken out, {adjusted['inputs'].get('n')} points. "
            f"As measured: {trends(doc)}. Adjusted: {trends(adjusted)}. The claimed window, {claim_span(doc)}, "
            f"is shaded.")


def _adjusted_caption(doc: dict[str, Any]) -> str:
    return (f"The same record with the estimated effect of {factor_names(doc)} removed. If the claimed spell "
            "came from those short-term factors, it shrinks or disappears in the adjusted series while the "
            "long-term trend stays.")


ADJUSTED_CHART = ChartSpec(ADJUSTED_CHART_NAME, lambda d: f"As measured and adjusted for {factor_names(d)}",
                           _adjusted_caption, _adjusted_description, _adjusted_chart)
