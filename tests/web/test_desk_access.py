"""With TRENDAUDIT_API_KEYS set, the desk asks for a key before it lists or stores audits."""

from __future__ import annotations

from app.service.access import desk_token
from app.web.access import KEY_COOKIE, safe_next
from web.test_desk_pages import ANNUAL_CSV

FORM = {"table": ANNUAL_CSV, "claim_start": "1998", "claim_end": "2012", "claim_kind": "pause"}


def test_history_needs_a_key_and_says_so(keyed):
    page = keyed.get("/history")
    assert page.status_code == 401
    assert 'name="key"' in page.text and 'type="password"' in page.text
    assert '<meta name="robots" content="noindex, nofollow">' in page.text


def test_a_wrong_key_is_refused_and_not_kept(keyed):
    page = keyed.post("/access", data={"key": "guess", "next": "/history"})
    assert page.status_code == 403 and "not one this service accepts" in page.text
    assert KEY_COOKIE not in page.cookies


def test_a_right_key_is_kept_in_a_strict_httponly_cookie(keyed):
    page = keyed.post("/access", data={"key": "desk-key-two-0123456789", "next": "/history"})
    assert page.status_code == 303 and page.headers["location"] == "/history"
    cookie = page.headers["set-cookie"]
    assert cookie.startswith(f"{KEY_COOKIE}=") and "HttpOnly" in cookie and "SameSite=strict" in cookie
    assert "Path=/" in cookie
    assert keyed.get("/history").status_code == 200


def test_creating_from_the_browser_needs_the_key_too(keyed):
    refused = keyed.post("/audit", data=FORM)
    assert refused.status_code == 401 and 'href="/access?next=/"' in refused.text
    keyed.cookies.set(KEY_COOKIE, desk_token("desk-key-one-0123456789"))
    made = keyed.post("/audit", data=FORM)
    assert made.status_code == 303 and made.headers["location"].endswith("/created")
    keyed.cookies.clear()
    report = made.headers["location"].removesuffix("/created")
    assert keyed.get(report).status_code == 200  # reading by link needs no key


def test_a_stale_cookie_is_refused(keyed):
    keyed.cookies.set(KEY_COOKIE, "an-old-key")
    page = keyed.get("/history")
    assert page.status_code == 403 and "no longer accepted" in page.text


def test_the_key_can_be_forgotten(keyed):
    keyed.cookies.set(KEY_COOKIE, desk_token("desk-key-one-0123456789"))
    page = keyed.post("/access", data={"forget": "1", "next": "/"})
    assert page.status_code == 303 and f'{KEY_COOKIE}=""' in page.headers["set-cookie"]


def test_without_keys_nothing_is_asked(client):
    assert client.get("/history").status_code == 200
    assert client.post("/access", data={"key": "x", "next": "/history"}).headers["location"] == "/history"


def test_only_paths_on_this_site_are_followed_after_the_key():
    assert safe_next("/history?cursor=abc") == "/history?cursor=abc"
    for bad in ("https://evil.example/", "//evil.example/", "/\\evil.example", "javascript:alert(1)", "", None):
        assert safe_next(bad) == "/"
