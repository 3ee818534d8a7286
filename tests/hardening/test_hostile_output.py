"""Hostile text on its way out: the correlation report and charts escape it (tests/web/test_hostile_strings.py
covers the pause audit's), and neither CSV export lets a spreadsheet run a cell as a formula.

OWASP's CSV Injection guidance: a cell that begins with =, +, -, @, tab or carriage return may be run as a
formula; the exports prefix such text with an apostrophe and leave plain numbers alone (-0.25 stays a number).
"""

from __future__ import annotations

import csv
import io
import re

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.service.csv_export import FORMULA_STARTS, PLAIN_NUMBER, audit_data_csv, correlation_data_csv
from app.service.payloads import series_payload
from app.errors import InputError
from app.ingest import IngestOptions, read_csv_text

from api.conftest import invented_series
from web.test_hostile_strings import ESCAPED_SCRIPT, HOSTILE

FORMULAS = ("=HYPERLINK(\"http://x\",\"y\")", "+1+cmd|' /C calc'!A0", "-2+3", "@SUM(A1:A9)", "\t=1+1", "\r=1+1",
            "=1998", "+1998", "-1998", "@1998")


def _runnable(cell: str) -> bool:
    """A cell a spreadsheet would take as a formula: a formula start, and not simply a number."""
    return cell.startswith(FORMULA_STARTS) and not PLAIN_NUMBER.fullmatch(cell)


def _cells(text: str) -> list[str]:
    return [cell for row in csv.reader(io.StringIO(text)) for cell in row]


PREFIXES = ("",) * 12 + ("+", "+", "-", "=", "@", "\t", "\r", " ", "'", "=HYPERLINK(")


def test_no_exported_cell_is_a_formula_whatever_the_time_column_held():
    exported = []

    # Years in order, each written with a prefix a spreadsheet might run: most tables are refused, those read
    # keep the time as written in time_label, which is where a formula could ride into the export.
    @settings(max_examples=200, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
    @given(st.lists(st.sampled_from(PREFIXES), min_size=8, max_size=30), st.sampled_from([",", ";"]))
    def export_any(prefixes, sep):
        rows = "".join(f"{p}{1950 + i}{sep}{0.1 * i + (i % 3) * 0.05:.3f}\n" for i, p in enumerate(prefixes))
        try:
            table = read_csv_text("time" + sep + "value\n" + rows, IngestOptions())
        except InputError:
            return
        payload = series_payload(table.series)
        cells = _cells(audit_data_csv({"series": payload, "claim": {}}, {})) + _cells(
            correlation_data_csv({"response": payload}, {}))
        assert not [cell for cell in cells if _runnable(cell)]
        exported.append(sorted({label[:1] for label in payload["time_labels"]}))

    export_any()
    assert len(exported) >= 10 and any("+" in starts for starts in exported), exported[:5]


@pytest.fixture
def hostile_correlation(client):
    text = " ".join(HOSTILE + FORMULAS)
    series = invented_series(start=1960, end=2024)
    driver = [300 + 1.5 * i for i in range(len(series["time"]))]
    answer = client.post("/api/v1/correlations", json={
        "title": text, "window_years": 15, "options": {"simulations": 200, "seed": 4},
        "driver": {"time": series["time"], "value": driver, "label": text, "units": text},
        "response": {**series, "label": text, "units": text},
        "source": {"name": text, "url": "javascript:alert(1)//" + text, "notes": text}})
    assert answer.status_code == 201, answer.text
    return answer.json()["id"]


def _assert_escaped(text: str) -> None:
    without_own_script = text.replace('<script src="/static/desk.js" defer></script>', "")
    own_card = re.sub(r'<img src="/(audits|correlations)/[A-Za-z0-9_-]+/card\.png"', "", text)  # the card preview
    assert "<script" not in without_own_script.lower() and "<img" not in own_card
    assert ESCAPED_SCRIPT in text


def test_correlation_report_and_charts_escape_every_label(client, hostile_correlation):
    page = client.get(f"/correlations/{hostile_correlation}")
    assert page.status_code == 200
    _assert_escaped(page.text)
    assert 'href="javascript:' not in page.text.lower()
    charts = re.findall(rf"/correlations/{hostile_correlation}/charts/[a-z]+\.svg", page.text)
    assert charts
    for chart in sorted(set(charts)):
        svg = client.get(chart)
        assert svg.status_code == 200
        assert "<script" not in svg.text.lower() and "<img" not in svg.text, chart


@pytest.mark.parametrize("kind", ["audits", "correlations"])
def test_exports_of_hostile_audits_hold_no_formula(client, hostile_correlation, kind):
    text = " ".join(HOSTILE + FORMULAS)
    if kind == "audits":
        series = invented_series()
        series["time"] = [f"+{t}" if i % 2 else str(t) for i, t in enumerate(series["time"])]  # '+1951' reads
        made = client.post("/api/v1/audits", json={
            "title": text, "series": {**series, "label": text, "units": text}, "claim": {"start": 1998, "end": 2012},
            "options": {"simulations": 200}, "source": {"name": text, "notes": text}})
        assert made.status_code == 201, made.text
        audit_id = made.json()["id"]
    else:
        audit_id = hostile_correlation
    exported = client.get(f"/api/v1/{kind}/{audit_id}/data.csv")
    assert exported.status_code == 200 and exported.headers["content-type"].startswith("text/csv")
    cells = _cells(exported.text)
    assert len(cells) > 100
    assert not [cell for cell in cells if _runnable(cell)]
    assert not any(formula in exported.text for formula in FORMULAS[:5])  # titles and notes never reach it
