"""The CSV export: OWASP CSV-injection neutralising for text, numbers left as numbers."""

import csv
import io

import pytest

from app.service.csv_export import audit_data_csv, neutralise


@pytest.mark.parametrize("text, expected", [
    ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"),
    ("+1+cmd|' /C calc'!A0", "'+1+cmd|' /C calc'!A0"),
    ("-2+3", "'-2+3"),
    ("@SUM(A1)", "'@SUM(A1)"),
    ("\tlabel", "'\tlabel"),
    ("\rlabel", "'\rlabel"),
    ("-0.25", "-0.25"),  # a number, not a formula: kept as it is
    ("+1e-3", "+1e-3"),
    ("1998-03", "1998-03"),
    ("plain", "plain"),
    ("", ""),
])
def test_neutralise(text, expected):
    assert neutralise(text) == expected


def test_export_uses_the_stored_line_and_neutralises_labels():
    input_document = {
        "series": {"time": [2000.5, 2001.5, 2002.5], "value": [-0.5, 0.25, 1.0],
                   "time_labels": ["=cmd()", "2001", "-3+4"]},
        "claim": {"start": 2001.0, "end": 2003.0},
    }
    result_document = {"reference": {"start": 2000.0, "end": 2002.0},
                       "curves": {"reference_line": {"time": [2000.5, 2001.5], "value": [-0.4, 0.3]}}}
    rows = list(csv.reader(io.StringIO(audit_data_csv(input_document, result_document))))
    assert rows[0] == ["time", "time_label", "value", "long_term_trend", "residual", "in_reference", "in_window"]
    assert rows[1] == ["2000.5", "'=cmd()", "-0.5", "-0.4", repr(-0.5 - -0.4), "1", "0"]
    assert rows[2] == ["2001.5", "2001", "0.25", "0.3", repr(0.25 - 0.3), "1", "1"]
    assert rows[3] == ["2002.5", "'-3+4", "1.0", "", "", "0", "1"]
