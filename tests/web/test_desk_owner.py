"""The owner token in the browser: shown once after creating, never in an address, and enough to delete."""

from __future__ import annotations

import re

from app.service.limits import body_too_large
from app.web.owners import CREATED_COOKIE
from app.web.too_large import too_large_page, wants_html
from web.answers import report_path
from web.test_desk_pages import ANNUAL_CSV

FORM = {"table": ANNUAL_CSV, "claim_start": "1998", "claim_end": "2012", "claim_kind": "pause", "seed": "2"}
TOKEN_FIELD = re.compile(r'id="owner-token-field"[^>]*value="([^"]+)"')


def _create(client):
    made = client.post("/audit", data=FORM)
    return made, report_path(made)


def test_the_token_travels_in_a_short_lived_cookie_scoped_to_one_page(client):
    made, report = _create(client)
    cookie = made.headers["set-cookie"]
    assert cookie.startswith(f"{CREATED_COOKIE}=")
    assert "HttpOnly" in cookie and "SameSite=strict" in cookie and "Max-Age=600" in cookie
    assert f"Path={report}/created" in cookie
    token = cookie.split(";")[0].split("=", 1)[1]
    assert token not in made.headers["location"]


def test_the_token_is_shown_once_and_then_the_link_opens_the_report(client):
    made, report = _create(client)
    page = client.get(made.headers["location"])
    assert page.status_code == 200 and "no-store" in page.headers["cache-control"]
    assert f'{CREATED_COOKIE}=""' in page.headers["set-cookie"]  # read once, then forgotten
    token = TOKEN_FIELD.search(page.text).group(1)
    assert 'id="verdict-headline"' in page.text  # the report itself, under the notice
    assert "never again" in page.text
    again = client.get(made.headers["location"])
    assert again.status_code == 303 and again.headers["location"] == report
    assert token not in client.get(report).text


def test_the_token_shown_is_the_one_that_deletes_the_audit(client):
    made, report = _create(client)
    token = TOKEN_FIELD.search(client.get(made.headers["location"]).text).group(1)
    wrong = client.post(f"{report}/delete", data={"owner_token": "not-the-token"})
    assert wrong.status_code == 403 and "was not deleted" in wrong.text
    assert "Type the owner token shown once" in wrong.text and f'href="{report}"' in wrong.text
    empty = client.post(f"{report}/delete", data={"owner_token": ""})
    assert empty.status_code == 401
    assert client.get(report).status_code == 200
    done = client.post(f"{report}/delete", data={"owner_token": token})
    assert done.status_code == 200 and "was deleted" in done.text
    assert client.get(report).status_code == 404
    assert client.get(f"{report}/charts/series.svg").status_code == 404


def test_every_report_offers_the_delete_form_but_never_prints_it(client):
    _, report = _create(client)
    html = client.get(report).text
    form = re.search(r'<details class="delete-record no-print" id="delete">.*?</details>', html, re.S).group(0)
    assert f'action="{report}/delete"' in form and 'type="password"' in form and 'name="owner_token"' in form


def test_deleting_from_the_browser_needs_the_access_key_where_keys_are_set(keyed):
    from app.service.access import desk_token
    from app.web.access import KEY_COOKIE

    keyed.cookies.set(KEY_COOKIE, desk_token("desk-key-one-0123456789"))
    made = keyed.post("/audit", data=FORM)
    report = report_path(made)
    token = TOKEN_FIELD.search(keyed.get(made.headers["location"]).text).group(1)
    keyed.cookies.clear()
    refused = keyed.post(f"{report}/delete", data={"owner_token": token})
    assert refused.status_code == 401 and f'href="/access?next={report}"' in refused.text
    keyed.cookies.set(KEY_COOKIE, desk_token("desk-key-one-0123456789"))
    assert keyed.post(f"{report}/delete", data={"owner_token": token}).status_code == 200


def test_a_body_over_the_limit_is_a_desk_page_for_browsers_and_json_for_api_clients(client):
    error = body_too_large(10)
    browser = {"type": "http", "method": "POST", "path": "/preview", "query_string": b"", "app": client.app,
               "headers": [(b"accept", b"text/html,application/xhtml+xml,*/*;q=0.8")]}
    page = too_large_page(browser, error)
    assert page.status_code == 413 and page.headers["connection"] == "close"
    body = page.body.decode()
    assert 'role="alert"' in body and "larger than this service" in body and "the upload" in body
    assert 'action="/preview"' in body  # the form to try again with a smaller file
    api = {**browser, "headers": [(b"accept", b"application/json")]}
    assert too_large_page(api, error) is None and not wants_html(api)
    assert too_large_page({**browser, "headers": []}, error) is None
