"""What the report shows about an audit's history, worked out from stored documents only: what changed since
the audit it revises, the verdict as each year was added, and a claim on several datasets side by side.

The two small charts here (a trend and its range per cut, per dataset) are a handful of marks, so they are
laid out as SVG geometry for the templates to draw inline (presentation attributes only, as the CSP wants)
rather than drawn by matplotlib.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

from app.report.context import VERDICT_LABELS
from app.report.numbers import Rate, format_p, is_number
from app.report.palette import GRID, INK, LONG_TERM, MUTED, WINDOW

CHART_WIDTH = 440  # narrow enough that its words stay readable on a phone, where it is drawn at full width
MAX_LISTED_PERIODS = 24  # a longer list of periods is cut, saying how many more


@dataclass(frozen=True)
class Mark:
    """One trend with its range on the chart: a dot and a whisker, in chart coordinates."""

    label: str
    at: float  # position along the category axis
    value: float
    low: float
    high: float
    tick: bool  # whether the category axis names this one
    title: str  # the mark's tooltip and accessible text


@dataclass(frozen=True)
class RangeChart:
    """Trends with ranges against a category axis (time for a timeline, datasets for a comparison)."""

    width: int
    height: int
    horizontal: bool  # True: categories are rows and the trend runs left to right
    marks: tuple[Mark, ...]
    zero: float | None  # where a trend of zero sits, when in view
    reference: tuple[float, float, float] | None  # a reference trend and its range (the long-term one)
    gridlines: tuple[tuple[float, str], ...]
    axis_label: str
    colours: dict[str, str]


def _nice_ticks(low: float, high: float, count: int = 5) -> list[float]:
    span = high - low if high > low else 1.0
    raw = span / count
    step = 10 ** math.floor(math.log10(raw))
    step *= next(m for m in (1, 2, 2.5, 5, 10) if raw <= m * step)
    first = math.ceil(low / step) * step
    return [round(first + i * step, 10) for i in range(int((high - first) / step) + 1)]


def range_chart(items: Sequence[dict[str, Any]], rate: Rate, *, horizontal: bool,
                reference: Sequence[float] | None = None) -> RangeChart | None:
    """``items``: label, slope, ci (per year) and title. Trends are drawn in the report's rate unit."""
    usable = [i for i in items if is_number(i.get("slope")) and i.get("ci") and all(is_number(v) for v in i["ci"])]
    if not usable:
        return None
    values = [rate.scaled(v) for i in usable for v in (i["slope"], *i["ci"])] + [0.0]
    ref = tuple(rate.scaled(v) for v in reference) if reference and all(is_number(v) for v in reference) else None
    values += list(ref or ())
    low, high = min(values), max(values)
    pad = 0.08 * (high - low or 1.0)
    low, high = low - pad, high + pad
    n = len(usable)
    if horizontal:
        left, right, row = 124.0, CHART_WIDTH - 16.0, 28.0
        top = 16.0
        height = int(top + row * n + 40)
        scale = lambda v: left + (v - low) / (high - low) * (right - left)  # noqa: E731
        place = lambda k: top + row * (k + 0.5)  # noqa: E731
    else:
        left, right, top, bottom = 64.0, CHART_WIDTH - 12.0, 14.0, 190.0
        height = 236
        scale = lambda v: bottom - (v - low) / (high - low) * (bottom - top)  # noqa: E731
        place = lambda k: left + (right - left) * ((k + 0.5) / n)  # noqa: E731
    every = max(1, math.ceil(n / 6))
    marks = tuple(Mark(label=str(i["label"]), at=place(k), value=scale(rate.scaled(i["slope"])),
                       low=scale(rate.scaled(i["ci"][0])), high=scale(rate.scaled(i["ci"][1])),
                       tick=horizontal or k % every == 0 or k == n - 1, title=str(i.get("title") or i["label"]))
                  for k, i in enumerate(usable))
    gridlines = tuple((scale(v), rate.number(v / rate.factor)) for v in _nice_ticks(low, high))
    return RangeChart(width=CHART_WIDTH, height=height, horizontal=horizontal, marks=marks,
                      zero=scale(0.0), reference=tuple(scale(v) for v in ref) if ref else None,
                      gridlines=gridlines, axis_label=f"Trend, {rate.axis_unit}",
                      colours={"ink": INK, "muted": MUTED, "grid": GRID, "window": WINDOW, "reference": LONG_TERM})


def verdict_label(code: Any) -> str:
    return VERDICT_LABELS.get(code, str(code or "undetermined").replace("_", " "))


def _periods(periods: Sequence[str]) -> str:
    shown = ", ".join(periods[:MAX_LISTED_PERIODS])
    more = len(periods) - MAX_LISTED_PERIODS
    return shown + (f" and {more} more" if more > 0 else "")


def _plural(count: int, noun: str) -> str:
    return f"{count} {noun}{'' if count == 1 else 's'}"


def changes_view(document: dict[str, Any], chain: dict[str, Any] | None = None) -> dict[str, Any] | None:
    """The "what changed" block of a revision: the data's changes, then the answer before and after."""
    changes = document.get("changes")
    if not changes:
        return None
    rate = Rate.of(document)
    added, removed, revised = changes["added"], changes["removed"], changes["revised"]
    lines = []
    if added["count"]:
        lines.append(f"{_plural(added['count'], 'point')} added: {_periods(added['periods'])}.")
    if revised["count"]:
        largest = revised["largest"]
        lines.append(f"{_plural(revised['count'], 'point')} revised: {_periods(revised['periods'])}. The largest "
                     f"revision is {largest['period']}, from {largest['before']:.4g} to {largest['after']:.4g} "
                     f"({largest['change']:+.3g}).")
    if removed["count"]:
        lines.append(f"{_plural(removed['count'], 'point')} removed: {_periods(removed['periods'])}.")
    if not lines:
        lines.append("The data are the same as before: no point was added, removed or revised.")
    before, after = changes["before"], changes["after"]
    rows = [("Verdict", verdict_label(before["code"]), verdict_label(after["code"])),
            ("Window trend", rate.text(before["window_slope"]), rate.text(after["window_slope"])),
            ("Window trend's range", rate.range_text(before["window_ci"]), rate.range_text(after["window_ci"])),
            ("Long-term trend", rate.text(before["long_term_slope"]), rate.text(after["long_term_slope"])),
            ("Change during the window (adjusted p)", format_p(before["change_p_adjusted"]),
             format_p(after["change_p_adjusted"])),
            ("Points", str(before["n"]), str(after["n"]))]
    return {"lines": lines, "rows": rows, "verdict_changed": changes.get("verdict_changed"),
            "revision_of": document.get("revision_of"), "chain": chain}


def chain_view(document: dict[str, Any], chain: dict[str, Any] | None) -> dict[str, Any] | None:
    """The audits this one revised and those revising it, for any audit in a chain."""
    if not chain or not (chain.get("earlier") or chain.get("later")):
        return None
    entry = lambda e: {**e, "verdict": verdict_label(e.get("code"))}  # noqa: E731
    return {"earlier": [entry(e) for e in chain["earlier"]], "later": [entry(e) for e in chain["later"]]}


def _timeline_row(row: dict[str, Any], rate: Rate) -> dict[str, Any]:
    return {"cut": row["cut_label"], "window": f"{row['window_first']}–{row['window_last']}",
            "verdict": verdict_label(row["code"]), "code": row["code"], "trend": rate.text(row["window_slope"]),
            "range": rate.range_text(row["window_ci"]), "long_term": rate.text(row["long_term_slope"]),
            "n": row["n"], "seed": row["seed"]}


def timeline_view(document: dict[str, Any]) -> dict[str, Any] | None:
    """The verdict as each year was added, and on the day the claim was made."""
    timeline = document.get("timeline")
    if timeline is None:  # computed just after the audit was stored, and not kept yet
        return {"pending": True}
    if len(timeline.get("rows") or []) < 2 and not timeline.get("at_the_time"):
        return None  # the window ends with the record: the timeline would only repeat the audit
    rate = Rate.of(document)
    rows = [_timeline_row(r, rate) for r in timeline.get("rows") or []]
    items = [{"label": r["cut_label"], "slope": r["window_slope"], "ci": r["window_ci"],
              "title": f"Data to {r['cut_label']}: {verdict_label(r['code'])}"} for r in timeline.get("rows") or []]
    long_term = (document.get("long_term") or {})
    chart = range_chart(items, rate, horizontal=False,
                        reference=[long_term.get("slope"), *(long_term.get("ci") or [None, None])])
    first_change = next((r for prev, r in zip(rows, rows[1:]) if r["code"] != prev["code"]), None)
    at_the_time = timeline.get("at_the_time")
    then = _timeline_row(at_the_time, rate) if at_the_time else None
    now = rows[-1] if rows else None
    sentence = None
    if then and now:
        sentence = (f"Said on {timeline['made_on']}, with the data then to {then['window'].split('–')[-1]}, the "
                    f"audit would have found: {then['verdict'].lower()} (window trend {then['trend']}). With the "
                    f"data to {now['cut']} it finds: {now['verdict'].lower()} (window trend {now['trend']}).")
    elif first_change:
        sentence = f"The verdict first changed with the data to {first_change['cut']}: {first_change['verdict'].lower()}."
    return {"pending": False, "rows": rows, "chart": chart, "at_the_time": then, "sentence": sentence, "made_on": timeline.get("made_on"),
            "first_change": first_change, "skipped": timeline.get("skipped") or [],
            "thinned": (timeline.get("cuts_available") or 0) > len(rows) + len(timeline.get("skipped") or []),
            "rate_unit": rate.axis_unit}


def comparison_view(document: dict[str, Any]) -> dict[str, Any]:
    """The comparison page: the datasets' verdicts side by side, their window trends on one chart."""
    datasets = document.get("datasets") or []
    units = next((d.get("units") for d in datasets if d.get("units")), "")
    rate = Rate((document.get("rate") or {}).get("factor", 10.0), (document.get("rate") or {}).get("unit",
                                                                                                   "per decade"), units)
    rows = [{"label": d["label"], "verdict": verdict_label(d["code"]), "code": d["code"],
             "window": rate.text(d["window_slope"]), "window_range": rate.range_text(d["window_ci"]),
             "long_term": rate.text(d["long_term_slope"]), "long_term_range": rate.range_text(d["long_term_ci"]),
             "p_change": format_p(d["change_p_adjusted"]), "n": d["n"]} for d in datasets]
    items = [{"label": d["label"], "slope": d["window_slope"], "ci": d["window_ci"],
              "title": f"{d['label']}: window trend, {verdict_label(d['code'])}"} for d in datasets]
    return {"rows": rows, "chart": range_chart(items, rate, horizontal=True),
            "sentence": (document.get("agreement") or {}).get("sentence", ""), "rate_unit": rate.axis_unit,
            "all_agree": (document.get("agreement") or {}).get("all_agree")}
