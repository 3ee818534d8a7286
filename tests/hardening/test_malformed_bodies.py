"""Bodies built to break parsers, on SQLite and PostgreSQL: each is a 4xx problem, never a 500.

A NUL character in a title was a 500 on PostgreSQL (a text column cannot hold one; SQLite stores it):
every free-text field now refuses it with a 422 naming the field.
"""

from __future__ import annotations

import json

import pytest

from api.conftest import assert_problem, audit_body, csv_text

JSON = {"Content-Type": "application/json"}


def _with_literal(body: dict, marker: str, literal: str) -> bytes:
    """The body as JSON text with a marker value replaced by text json.dumps would never write."""
    return json.dumps(body).replace(json.dumps(marker), literal, 1).encode()


def _body_with_first_value(marker: str) -> dict:
    body = audit_body()
    body["series"]["value"][0] = marker
    return body


MALFORMED_JSON = {
    "a list nested 100,000 deep": b"[" * 100_000 + b"]" * 100_000,
    "an object nested 50,000 deep in the title": b'{"title":' + b'{"a":' * 50_000 + b"1" + b"}" * 50_000 + b"}",
    "a 5,000-digit number": _with_literal(_body_with_first_value("@"), "@", "9" * 5000),
    "-Infinity": _with_literal(_body_with_first_value("@"), "@", "-Infinity"),
    "bad UTF-8": b'{"title": "\xff\xfe", "series": {"time": [], "value": []}}',
    "a lone surrogate": b'{"title": "\\ud800"}',
    "not JSON at all": b"year,value\n1990,1\n",
    "an empty body": b"",
    "a JSON array": b"[]",
    "a JSON string": b'"audit"',
}


@pytest.mark.parametrize("name", sorted(MALFORMED_JSON))
def test_malformed_json_is_a_422(client, name):
    assert_problem(client.post("/api/v1/audits", content=MALFORMED_JSON[name], headers=JSON), 422)


def test_a_nan_literal_is_read_as_a_missing_value(client):
    created = client.post("/api/v1/audits", content=_with_literal(_body_with_first_value("@"), "@", "NaN"), headers=JSON)
    assert created.status_code == 201, created.text
    assert created.json()["inputs"]["missing"] == 1


NUL_PLACES = {
    "title": lambda body: body.update(title="a\x00b"),
    "series.label": lambda body: body["series"].update(label="a\x00b"),
    "series.units": lambda body: body["series"].update(units="\x00"),
    "source.name": lambda body: body.update(source={"name": "x\x00"}),
    "source.notes": lambda body: body.update(source={"notes": "x\x00"}),
    "series.time[3]": lambda body: body["series"]["time"].__setitem__(3, "1953\x00"),
}


@pytest.mark.parametrize("field", sorted(NUL_PLACES))
def test_a_nul_character_in_any_text_field_is_a_422_naming_it(client, field):
    body = audit_body()
    NUL_PLACES[field](body)
    assert_problem(client.post("/api/v1/audits", json=body), 422, field)


def test_a_nul_character_in_an_upload_title_or_a_correlation_title_is_a_422(client):
    upload = client.post("/api/v1/audits", data={"claim_start": "1998", "claim_end": "2012", "title": "t\x00"},
                         files={"file": ("s.csv", csv_text(), "text/csv")})
    assert_problem(upload, 422, "title")
    series = audit_body()["series"]
    correlation = client.post("/api/v1/correlations", json={"title": "\x00", "driver": series, "response": series})
    assert_problem(correlation, 422, "title")


MULTIPART = {
    "100 form fields": dict(data={**{f"f{i}": "x" for i in range(100)}, "claim_start": "1998", "claim_end": "2012"},
                            files={"file": ("a.csv", "year,v\n1990,1\n", "text/csv")}),
    "two files": dict(data={"claim_start": "1998", "claim_end": "2012"},
                      files=[("file", ("a.csv", "x", "text/csv")), ("file", ("b.csv", "y", "text/csv"))]),
    "no file": dict(data={"claim_start": "1998", "claim_end": "2012"}),
    "the file as a text field": dict(data={"claim_start": "1998", "claim_end": "2012", "file": "year,v\n"}),
    "a file where a text field goes": dict(data={"claim_end": "2012"},
                                           files={"file": ("a.csv", csv_text(), "text/csv"),
                                                  "claim_start": ("x.txt", "1998", "text/plain")}),
}


@pytest.mark.parametrize("name", sorted(MULTIPART))
def test_malformed_uploads_are_4xx_problems(client, name):
    response = client.post("/api/v1/audits", **MULTIPART[name])
    assert 400 <= response.status_code < 500, response.text[:300]
    assert response.headers["content-type"].startswith("application/problem+json")


def test_a_multipart_body_without_its_boundary_is_a_400(client):
    response = client.post("/api/v1/audits", content=b"--x\r\n", headers={"Content-Type": "multipart/form-data"})
    assert_problem(response, 400)
