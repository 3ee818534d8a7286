"""Whatever a person uploads or types, the desk answers with a readable page and a 4xx, never a server error."""

from __future__ import annotations

import pytest

YEARS = range(1950, 2025)
GOOD_ROWS = "\n".join(f"{y},{0.01 * (y - 1950) + 0.1 * ((y * 7) % 5 - 2):.3f}" for y in YEARS)

BAD_TABLES = {
    "binary": b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" + bytes(range(256)),
    "empty": b"",
    "header only": b"year,value\n",
    "one column": ("year\n" + "\n".join(str(y) for y in YEARS)).encode(),
    "no numbers": ("year,value\n" + "\n".join(f"{y},n/a" for y in YEARS)).encode(),
    "constant": ("year,value\n" + "\n".join(f"{y},1.5" for y in YEARS)).encode(),
    "repeated year": ("year,value\n" + GOOD_ROWS + "\n1990,0.2").encode(),
    "years out of order": ("year,value\n" + "\n".join(reversed(GOOD_ROWS.splitlines()))).encode(),
    "three rows": b"year,value\n2000,1\n2001,2\n2002,1.5\n",
    "ragged": ("year,value\n" + GOOD_ROWS + "\n2025,1,2,3").encode(),
    "dates mixed": ("year,value\n" + GOOD_ROWS + "\n2025-03,1").encode(),
    "latin-1": ("year,value\n" + GOOD_ROWS + "\n2025,caf\xe9").encode("latin-1"),
}


@pytest.mark.parametrize("name", sorted(BAD_TABLES))
def test_a_bad_file_is_refused_readably(client, name):
    page = client.post("/preview", files={"file": (f"{name}.csv", BAD_TABLES[name], "text/csv")})
    assert 400 <= page.status_code < 500, (name, page.status_code)
    assert page.headers["content-type"].startswith("text/html")
    assert 'role="alert"' in page.text and "What to do:" in page.text


@pytest.mark.parametrize("start, end, kind", [
    ("2012", "1998", "pause"), ("1998", "1999", "pause"), ("2030", "2040", "pause"), ("1950", "2024", "pause"),
    ("1998", "2012", "standstill"), ("1998-13", "2012", "pause"), ("1998.5.1", "2012", "pause"),
])
def test_a_bad_window_is_refused_readably(client, start, end, kind):
    page = client.post("/audit", data={"table": "year,value\n" + GOOD_ROWS, "claim_start": start, "claim_end": end,
                                       "claim_kind": kind})
    assert page.status_code == 422, (start, end, kind, page.status_code, page.text[:300])
    assert 'role="alert"' in page.text


@pytest.mark.parametrize("start, kind", [("1998", ""), ("\u0661\u0669\u0669\u0668", "pause")])
def test_a_left_out_kind_means_a_pause_and_any_script_of_digits_is_a_number(client, start, kind):
    page = client.post("/audit", data={"table": "year,value\n" + GOOD_ROWS, "claim_start": start, "claim_end": "2012",
                                       "claim_kind": kind})
    assert page.status_code == 303


@pytest.mark.parametrize("fields", [
    {"reference_start": "1990", "reference_end": "1960"}, {"reference_start": "x"}, {"confidence": "2"},
    {"confidence": "abc"}, {"rate_unit": "per fortnight"}, {"simulations": "100000000"}, {"seed": "1e5"},
    {"missing_sentinels": "-999, nope"}, {"time_column": "no such column"}, {"value_column": "year"},
    {"title": "x" * 5000},
])
def test_bad_options_are_refused_readably(client, fields):
    page = client.post("/audit", data={"table": "year,value\n" + GOOD_ROWS, "claim_start": "1998",
                                       "claim_end": "2012", "claim_kind": "pause", **fields})
    assert page.status_code == 422, (fields, page.status_code, page.text[:300])
    assert 'role="alert"' in page.text and "What to do:" in page.text


def test_an_unknown_sample_is_refused_readably(client):
    page = client.get("/", params={"sample": "../../etc/passwd"})
    assert page.status_code == 404 and 'role="alert"' in page.text
