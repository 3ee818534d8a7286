"""The five report charts: drawn from the stored document alone, labelled for screen readers, safe to inline."""

from __future__ import annotations

import json
import re
import threading
import time
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from app.report import chart_cache
from app.report.chart_cache import chart_file, chart_views
from app.report.charts import CHART_NAMES, CHARTS, nearby_windows
from app.report.figures import as_standalone, inline_svg, labelled_svg
from app.report.numbers import Rate

SVG_NS = "{http://www.w3.org/2000/svg}"


@pytest.mark.parametrize("name", CHART_NAMES)
def test_each_chart_inlines_as_a_labelled_svg_element(document, name):
    svg = chart_file("audit-one", document, name, "inline")
    assert svg.startswith("<svg ")
    assert "<?xml" not in svg and "<!DOCTYPE" not in svg and "<!--" not in svg
    assert 'role="img"' in svg
    opening = svg[:svg.index(">")]
    assert not re.search(r'\s(width|height)="', opening)  # CSS sizes it to the column; the viewBox keeps its shape
    root = ET.fromstring(svg)
    title = root.find(f"{SVG_NS}title")
    desc = root.find(f"{SVG_NS}desc")
    assert title is not None and title.text == CHARTS[name].title(document)
    assert desc is not None and desc.text == CHARTS[name].description(document)
    assert root.get("aria-labelledby") == title.get("id")
    assert root.get("aria-describedby") == desc.get("id")


def test_ids_never_clash_between_the_charts_of_one_page(document):
    ids = []
    for view in chart_views("audit-one", document):
        ids += re.findall(r'\bid="([^"]+)"', str(view.svg))
    assert len(ids) == len(set(ids))
    for view in chart_views("audit-one", document):
        for reference in re.findall(r'url\(#([^)]+)\)|href="#([^"]+)"', str(view.svg)):
            target = reference[0] or reference[1]
            assert target.startswith(f"chart-{view.name}-")
            assert target in ids


@pytest.mark.parametrize("name", CHART_NAMES)
def test_downloads_are_a_standalone_svg_file_and_a_png(document, name):
    svg = chart_file("audit-one", document, name, "svg")
    assert svg.startswith('<?xml version="1.0"')
    root = ET.fromstring(svg.split("\n", 1)[1])
    assert root.tag == f"{SVG_NS}svg" and root.get("width", "").endswith("pt")
    png = chart_file("audit-one", document, name, "png")
    assert png[:8] == b"\x89PNG\r\n\x1a\n"


def test_the_same_document_draws_the_same_svg(document):
    first = chart_file("audit-a", document, "series", "inline")
    second = chart_file("audit-b", json.loads(json.dumps(document)), "series", "inline")
    assert first == second


def test_charts_are_cached_per_audit_and_chart(document):
    first = chart_file("audit-one", document, "null", "inline")
    changed = {**document, "spell": {**document["spell"], "observed_slope": 0.5}}
    assert chart_file("audit-one", changed, "null", "inline") is first  # a stored audit never changes
    assert chart_file("audit-two", changed, "null", "inline") != first


def test_the_series_chart_shows_the_data_and_both_trend_lines(document):
    svg = chart_file("audit-one", document, "series", "inline")
    ref = document["reference"]
    assert "Long-term trend" in svg and "Claimed window" in svg
    assert f"{ref['start'] - 0.5:.0f} to {ref['end'] - 0.5:.0f}" in svg  # the legend names the years (mid-year times)
    assert document["inputs"]["label"] in svg and "°C" in svg


def test_descriptions_state_the_numbers_in_the_rate_unit(document):
    rate = Rate.of(document)
    text = CHARTS["series"].description(document)
    assert rate.text(document["long_term"]["slope"]) in text
    assert rate.text(document["window"]["slope"]) in text
    assert "per decade" in text
    detect = CHARTS["detectability"].description(document)
    assert "years" in detect
    null = CHARTS["null"].description(document)
    assert str(document["spell"]["n_simulations"]) in null


def test_the_sensitivity_chart_draws_windows_outside_the_data_as_blanks(document):
    cherry = document["cherry_pick"]
    cherry["slopes"][0] = [None] * len(cherry["slopes"][0])  # as JSON stores NaN
    svg = chart_file("audit-blank", document, "sensitivity", "inline")
    assert "The claimed window" in svg


def test_a_segmentation_without_breaks_still_draws(document):
    document["segments"].update(breakpoints=[], breakpoint_ranges=[], n_breaks=0)
    svg = chart_file("audit-nobreak", document, "segments", "inline")
    assert "Estimated break" not in svg
    assert "no break" in CHARTS["segments"].description(document)


def test_user_text_reaches_the_svg_escaped_and_never_as_mathtext(document):
    hostile = '<script>alert(1)</script> "><img src=x onerror=alert(1)> $\\alpha$ &amp; ]]> -- -->'
    document["inputs"]["label"] = hostile
    document["inputs"]["units"] = "$x^2$"
    def standalone_svg(fig, name, title, description):
        return as_standalone(labelled_svg(fig, name, title, description))

    for make in (inline_svg, standalone_svg):
        svg = make(CHARTS["series"].build(document), "series", hostile, hostile)
        assert "<script" not in svg and "<img" not in svg
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg
        assert "$\\alpha$" in svg and "$x^2$" in svg  # typed text, not typeset
        assert "&amp;amp;" in svg and "]]&gt;" in svg
        assert "-->" not in svg  # comments, which echo text, are gone
        ET.fromstring(svg.split("\n", 1)[1] if svg.startswith("<?xml") else svg)


def test_unknown_chart_names_and_formats_are_not_found(document):
    from app.errors import NotFound

    with pytest.raises(NotFound):
        chart_file("audit-one", document, "pie", "svg")
    with pytest.raises(NotFound):
        chart_file("audit-one", document, "series", "gif")


def test_lines_break_where_values_are_missing():
    from app.report.charts import broken_at_gaps

    t = np.array([1990.5, 1991.5, 1992.5, 1995.5, 1996.5])
    y = np.arange(5.0)
    gap_t, gap_y = broken_at_gaps(t, y)
    assert np.isnan(gap_t[3]) and np.isnan(gap_y[3]) and gap_t.size == 6
    whole_t, _ = broken_at_gaps(t[:3], y[:3])
    assert not np.isnan(whole_t).any()


def test_nearby_windows_are_ranked_dots_with_the_claimed_one_among_them(document):
    cherry = document["cherry_pick"]
    trends, starts, ends, claimed = nearby_windows(document)
    finite = [v for row in cherry["slopes"] for v in row if v is not None]
    assert trends.size == len(finite) and np.all(np.diff(trends) >= 0)  # flattest first
    middle = (cherry["start_times"][len(cherry["start_times"]) // 2], cherry["end_times"][len(cherry["end_times"]) // 2])
    assert (starts[claimed], ends[claimed]) == middle
    assert trends[claimed] == pytest.approx(cherry["claimed_slope"] * Rate.of(document).factor)
    svg = chart_file("audit-dots", document, "sensitivity", "inline")
    assert "<image" not in svg  # dots and a band, no colour picture
    description = re.search(r"<desc [^>]*>(.*?)</desc>", svg, re.S).group(1)
    assert f"number {claimed + 1} of {trends.size}" in description


def test_an_uneven_grid_of_windows_still_ranks_every_window(document):
    cherry = document["cherry_pick"]
    starts = cherry["start_times"]
    cherry["start_times"] = starts[:-1] + [starts[-1] + 3 * (starts[-1] - starts[-2])]
    trends, _, _, claimed = nearby_windows(document)
    assert trends.size == sum(v is not None for row in cherry["slopes"] for v in row) and claimed >= 0
    ET.fromstring(chart_file("audit-uneven", document, "sensitivity", "inline"))


def test_a_property_declared_twice_becomes_one_attribute_with_the_last_value():
    from app.report.svg_attributes import presentation_attributes

    svg = presentation_attributes('<svg><image style="image-rendering:crisp-edges;image-rendering:pixelated"/></svg>')
    assert svg == '<svg><image image-rendering="pixelated"/></svg>'


def test_views_of_one_record_arriving_together_draw_its_charts_once(document, monkeypatch):
    calls = []
    real = chart_cache.labelled_svg

    def counted(*args, **kwargs):
        calls.append(args[1])
        time.sleep(0.02)  # long enough for the other views to arrive while the first draws
        return real(*args, **kwargs)

    monkeypatch.setattr(chart_cache, "labelled_svg", counted)
    results = []
    views = [threading.Thread(target=lambda: results.append(chart_cache.prepared_charts("together", document)))
             for _ in range(4)]
    for view in views:
        view.start()
    for view in views:
        view.join()
    assert sorted(calls) == sorted(CHART_NAMES)
    assert len(results) == 4 and all(result is results[0] for result in results)


def test_the_sensitivity_scale_is_set_by_the_windows_near_the_claim():
    from app.report.charts import sensitivity_limits

    trends = np.concatenate([np.linspace(0.9, 1.1, 98), [40.0, -35.0]])  # two short windows' wild trends
    low, high = sensitivity_limits(np.sort(trends), 50, (0.8, 1.2))
    assert -0.5 < low < 0.8 and 1.2 < high < 2.0


def test_drawings_on_many_threads_at_once_all_keep_the_house_style(document):
    """matplotlib's rc_context saves and restores the process-wide settings, so drawings running together on
    threads (report views, chart files and cards) could undo each other's style mid-drawing: a card then came
    out with its words as outlines, no text left. Every drawing here must keep its text as text."""
    from app.report.card import card_svg
    from app.report.sharing import audit_card_face, card_alt_text

    face = audit_card_face("card-race", "Has it stopped?", document, "https://audit.example.net/audits/x")
    alt = card_alt_text(face, document)
    start = threading.Barrier(4)
    drawn: list[str] = []

    def draw(number: int) -> None:
        start.wait()
        for _ in range(6):
            drawn.append(card_svg(face, alt) if number % 2 else labelled_svg(
                CHARTS["series"].build(document), "series", "t", "d"))

    threads = [threading.Thread(target=draw, args=(number,)) for number in range(4)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert len(drawn) == 24
    without_text = [svg[:80] for svg in drawn if "<text" not in svg or "DejaVu Sans" not in svg]
    assert not without_text


def test_chart_files_asked_for_together_draw_at_most_two_at_a_time(document, monkeypatch):
    """Each drawing in flight holds its figure and renderer; under 32 clients asking for chart files the
    server's memory stepped up by 80 MB and stayed there, with no drawing finished any sooner (matplotlib holds
    the GIL). Eight files of eight records asked for at once must be drawn at most DRAWINGS_AT_ONCE at a time."""
    from app.report.figures import DRAWINGS_AT_ONCE

    chart_cache.clear_chart_cache()
    crowd = threading.Condition()
    inside = [0]
    most = [0]
    label = chart_cache.labelled_svg

    def watched_label(*args):
        with crowd:
            inside[0] += 1
            most[0] = max(most[0], inside[0])
            crowd.notify_all()
            # Waits (briefly) for a drawing beyond the allowed number to join: it comes at once if unbounded.
            crowd.wait_for(lambda: inside[0] > DRAWINGS_AT_ONCE, timeout=0.3)
        try:
            return label(*args)
        finally:
            with crowd:
                inside[0] -= 1

    monkeypatch.setattr(chart_cache, "labelled_svg", watched_label)
    files: list[str] = []
    threads = [threading.Thread(target=lambda n=n: files.append(chart_file(f"crowd-{n}", document, "series", "svg")))
               for n in range(8)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    chart_cache.clear_chart_cache()
    assert len(files) == 8 and all("<svg" in svg for svg in files)
    assert most[0] == DRAWINGS_AT_ONCE
