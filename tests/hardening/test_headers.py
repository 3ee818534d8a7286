"""Security headers on every kind of answer, errors included; pages that a strict policy can show as written."""

from __future__ import annotations

import base64
import hashlib
import re

import pytest
from fastapi.testclient import TestClient

from app.dependencies import get_runtime
from app.main import create_app
from app.security import PAGE_POLICY, RESOURCE_POLICY

from api.conftest import audit_body, csv_text
from .test_openapi_fuzz import _correlation_example

SAME_FOR_ALL = {"x-content-type-options": "nosniff", "x-frame-options": "DENY", "referrer-policy": "same-origin",
                "cross-origin-opener-policy": "same-origin"}
INLINE_SCRIPT = re.compile(r"<script\b(?![^>]*\bsrc=)[^>]*>", re.I)
INLINE_STYLE = re.compile(r"<style\b|\sstyle\s*=", re.I)
EVENT_HANDLER = re.compile(r"<[^>]+\son[a-z]+\s*=", re.I)


@pytest.fixture
def stored(client):
    audit = client.post("/api/v1/audits", json=audit_body())
    assert audit.status_code == 201, audit.text
    correlation = client.post("/api/v1/correlations", json=_correlation_example(client.get("/openapi.json").json()))
    assert correlation.status_code == 201, correlation.text
    return audit.json()["id"], correlation.json()["id"]


def _answers(client, audit_id: str, correlation_id: str) -> dict[str, object]:
    """One answer of every kind the service gives: (name -> response)."""
    get, post = client.get, client.post
    return {
        "home page": get("/"),
        "home with a sample's preview": get("/?sample=quorvane-annual-temperature"),
        "desk preview of a pasted table": post("/preview", data={"table": csv_text()}),
        "desk input problem (4xx page)": post("/preview", data={"table": "year,value\n1990,x\n"}),
        "desk audit, redirected to the page showing its owner token": post(
            "/audit", data={"table": csv_text(), "claim_start": "1998", "claim_end": "2012"}),
        "delete refused (desk form, wrong token)": post(f"/audits/{audit_id}/delete", data={"owner_token": "x"}),
        "history page": get("/history"),
        "access-key page": get("/access"),
        "report page": get(f"/audits/{audit_id}"),
        "correlation report page": get(f"/correlations/{correlation_id}"),
        "chart SVG": get(f"/audits/{audit_id}/charts/series.svg"),
        "chart PNG": get(f"/audits/{audit_id}/charts/null.png"),
        "audit JSON": get(f"/api/v1/audits/{audit_id}"),
        "audit list JSON": get("/api/v1/audits"),
        "audit CSV export": get(f"/api/v1/audits/{audit_id}/data.csv"),
        "correlation JSON": get(f"/api/v1/correlations/{correlation_id}"),
        "correlation CSV export": get(f"/api/v1/correlations/{correlation_id}/data.csv"),
        "sample JSON": get("/api/v1/samples/quorvane-annual-temperature"),
        "problem 404 (no audit)": get("/api/v1/audits/no-such-audit"),
        "problem 404 (no route)": get("/no/such/page"),
        "problem 404 (no chart)": get(f"/audits/{audit_id}/charts/nothing.svg"),
        "problem 405": client.delete("/healthz"),
        "problem 415": post("/api/v1/audits", content=b"x", headers={"Content-Type": "text/plain"}),
        "problem 422": post("/api/v1/audits", json={"series": {}}),
        "stylesheet": get("/static/desk.css"),
        "script": get("/static/desk.js"),
        "icon": get("/static/favicon.svg"),
        "OpenAPI document": get("/openapi.json"),
        "health": get("/healthz"),
    }


def _assert_secured(name: str, response) -> None:
    headers = response.headers
    for header, value in SAME_FOR_ALL.items():
        assert headers.get(header) == value, (name, header, headers.get(header))
    policy = headers.get("content-security-policy", "")
    expected = PAGE_POLICY if headers.get("content-type", "").startswith("text/html") else RESOURCE_POLICY
    assert policy == expected, (name, policy)
    assert "'unsafe-inline'" not in policy and "'unsafe-eval'" not in policy and "frame-ancestors 'none'" in policy


def test_every_kind_of_answer_carries_the_headers(client, stored):
    answers = _answers(client, *stored)
    statuses = {name: response.status_code for name, response in answers.items()}
    assert {s // 100 for s in statuses.values()} == {2, 4}, statuses  # successes and refusals both tried
    for name, response in answers.items():
        _assert_secured(name, response)


def test_reports_history_and_api_answers_are_not_for_search_engines(client, stored):
    for name, response in _answers(client, *stored).items():
        robots = response.headers.get("x-robots-tag")
        public = response.request.url.path in ("/",) or response.request.url.path.startswith("/static/")
        assert (robots is None) if public else (robots == "noindex, nofollow"), (name, robots)


def test_html_pages_hold_nothing_the_policy_would_block(client, stored):
    """No inline script, style element, style attribute or event handler: the strict policy drops none."""
    pages = {name: r for name, r in _answers(client, *stored).items()
             if r.headers.get("content-type", "").startswith("text/html")}
    assert len(pages) >= 8
    for name, response in pages.items():
        html = response.text
        assert not INLINE_SCRIPT.search(html), name
        assert not INLINE_STYLE.search(html), (name, INLINE_STYLE.search(html))
        assert not EVENT_HANDLER.search(html), (name, EVENT_HANDLER.search(html))
    assert "<svg" in pages["report page"].text and "<svg" in pages["desk preview of a pasted table"].text


def test_body_too_large_and_internal_errors_carry_the_headers_too(make_client, make_settings, database_url):
    small = make_client(max_upload_bytes=100)
    _assert_secured("413", small.post("/api/v1/audits", content=b"{" * 1000,
                                      headers={"Content-Type": "application/json"}))

    app = create_app(make_settings(database_url))

    def broken_runtime():
        raise RuntimeError("planted failure")

    app.dependency_overrides[get_runtime] = broken_runtime
    with TestClient(app, raise_server_exceptions=False) as broken:
        for path in ("/api/v1/audits/anything", "/audits/anything"):
            response = broken.get(path)
            assert response.status_code == 500
            _assert_secured(f"500 on {path}", response)


def test_the_api_docs_page_allows_its_own_inline_script_by_hash_only(client):
    for path in ("/docs",):
        response = client.get(path)
        assert response.status_code == 200
        policy = dict(part.strip().split(" ", 1) for part in response.headers["content-security-policy"].split(";"))
        scripts = re.findall(r"<script>(.*?)</script>", response.text, re.S)
        hashes = {"'sha256-" + base64.b64encode(hashlib.sha256(s.encode()).digest()).decode() + "'" for s in scripts}
        assert set(re.findall(r"'sha256-[^']+'", policy["script-src"])) == hashes
        assert "'unsafe-inline'" not in policy["script-src"] and policy["frame-ancestors"] == "'none'"
        assert response.headers["x-robots-tag"] == "noindex, nofollow"
    assert client.get("/docs").text.count("<script>") == 1  # Swagger UI's start-up script: hashed above
    # Swagger UI's own files come from this service, never a CDN.
    page = client.get("/docs").text
    assert "http://" not in page.replace("http://www.w3.org", "") and "https://" not in page
    for asset in ("/docs/assets/swagger-ui-bundle.js", "/docs/assets/swagger-ui.css"):
        assert asset in page and client.get(asset).status_code == 200
    assert client.get("/docs/assets/index.html").status_code == 404
