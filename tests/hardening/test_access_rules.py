"""Open defaults closed: keys long enough and slow to guess, the desk's cookie Secure behind https and holding
no key, desk forms only from this site, no open service on a public address by accident, /trend keyed and
its lag search within a work budget."""

from __future__ import annotations

import pytest
from fastapi.testclient import TestClient

from app import cli
from app.main import create_app
from app.service.access import desk_token
from app.service.startup import StartupRefused, check_exposure, check_keys
from app.settings import Settings
from app.web.access import KEY_COOKIE

from api.conftest import assert_problem, audit_body, csv_text, invented_series

KEY = "access-rules-key-0123456789"


@pytest.fixture
def keyed(make_client) -> TestClient:
    return make_client(api_keys=KEY, key_guess_limit="5/minute")


def test_keys_shorter_than_sixteen_characters_stop_the_start(tmp_path, make_settings, database_url):
    """A one-character key was accepted."""
    with pytest.raises(StartupRefused, match="shorter than 16"):
        check_keys(Settings(api_keys="x"))
    with pytest.raises(StartupRefused, match="shorter than 16"):
        with TestClient(create_app(make_settings(database_url, api_keys=f"{KEY},short"))):
            pass
    check_keys(Settings(api_keys=KEY))


def test_the_server_refuses_a_public_address_without_keys(tmp_path, monkeypatch, capsys):
    """The Docker image served 0.0.0.0 with no keys: every id, title and verdict open to anyone."""
    monkeypatch.setenv("TRENDAUDIT_DATABASE_URL", f"sqlite:///{tmp_path / 'open.sqlite3'}")
    monkeypatch.setenv("TRENDAUDIT_API_KEYS", "")
    monkeypatch.delenv("TRENDAUDIT_PUBLIC_DEPLOYMENT", raising=False)
    started = []
    monkeypatch.setattr("uvicorn.run", lambda *args, **kwargs: started.append(kwargs))
    assert cli.serve("0.0.0.0", 8000, 1) == 2
    assert "TRENDAUDIT_PUBLIC_DEPLOYMENT" in capsys.readouterr().err and not started
    with pytest.raises(StartupRefused):
        check_exposure(Settings(api_keys=""), "::")
    monkeypatch.setenv("TRENDAUDIT_PUBLIC_DEPLOYMENT", "true")
    assert cli.serve("0.0.0.0", 8000, 1) == 0 and started
    check_exposure(Settings(api_keys=""), "127.0.0.1")
    check_exposure(Settings(api_keys=KEY), "0.0.0.0")


def test_the_dockerfile_does_not_open_the_service_by_itself():
    from app.settings import PROJECT_ROOT

    docker = (PROJECT_ROOT / "Dockerfile").read_text()
    assert "TRENDAUDIT_PUBLIC_DEPLOYMENT=true" not in docker.replace("# ", "#").split("\nENV", 1)[-1].split("CMD")[0]


def test_a_start_up_store_failure_names_the_path_and_exits_non_zero(tmp_path, monkeypatch, capsys):
    """A missing or unwritable path gave a raw traceback that did not name it."""
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    monkeypatch.setenv("TRENDAUDIT_DATABASE_URL", f"sqlite:///{blocker / 'sub' / 'db.sqlite3'}")
    monkeypatch.setattr("uvicorn.run", lambda *args, **kwargs: pytest.fail("started anyway"))
    assert cli.serve("127.0.0.1", 8000, 1) == 2
    assert str(blocker) in capsys.readouterr().err
    monkeypatch.setenv("TRENDAUDIT_DATABASE_URL", "postgresql+psycopg://nobody@127.0.0.1:1/none")
    assert cli.serve("127.0.0.1", 8000, 1) == 2
    assert "127.0.0.1:1" in capsys.readouterr().err


def test_key_guessing_is_slowed_per_client(keyed):
    """274 guesses a second were answered 403, never 429."""
    answers = [keyed.get("/api/v1/audits", headers={"Authorization": f"Bearer guess-{i:020d}"}).status_code
               for i in range(8)]
    assert answers[:5] == [403] * 5 and set(answers[5:]) == {429}
    late = keyed.get("/api/v1/audits", headers={"Authorization": f"Bearer {KEY}"})
    assert_problem(late, 429)
    assert int(late.headers["retry-after"]) >= 1
    # Another client keeps its own allowance.
    other = TestClient(keyed.app, client=("203.0.113.9", 5000))
    assert other.get("/api/v1/audits", headers={"Authorization": f"Bearer {KEY}"}).status_code == 200


def test_desk_key_guesses_count_too(keyed):
    answers = [keyed.post("/access", data={"key": f"guess-{i:020d}", "next": "/history"}).status_code
               for i in range(7)]
    assert answers[:5] == [403] * 5 and set(answers[5:]) == {429}


def test_the_desk_cookie_holds_a_digest_and_is_secure_behind_https(make_client):
    """The cookie held the raw key, and lost Secure behind a TLS proxy not on loopback."""
    desk = make_client(api_keys=KEY, public_base_url="https://audit.example.org")
    signed_in = desk.post("/access", data={"key": KEY, "next": "/history"}, follow_redirects=False)
    cookie = signed_in.headers["set-cookie"]
    assert signed_in.status_code == 303 and "Secure" in cookie
    assert KEY not in cookie and desk_token(KEY) in cookie
    desk.cookies.set(KEY_COOKIE, desk_token(KEY))
    assert desk.get("/history").status_code == 200
    desk.cookies.set(KEY_COOKIE, KEY)  # the key itself no longer opens the desk
    assert desk.get("/history").status_code == 403
    forwarded = make_client(api_keys=KEY)
    plain = forwarded.post("/access", data={"key": KEY}, follow_redirects=False)
    assert "Secure" not in plain.headers["set-cookie"]


@pytest.mark.parametrize("headers", [{"Origin": "https://evil.example"}, {"Origin": "null"},
                                     {"Sec-Fetch-Site": "cross-site"}, {"Sec-Fetch-Site": "same-site"}])
def test_desk_forms_from_another_site_are_refused(client, headers):
    """Only SameSite=Strict stood between another site's form and the desk's create, delete and sign-in."""
    for path, data in (("/audit", {"table": csv_text(), "claim_start": "1998", "claim_end": "2012"}),
                       ("/access", {"key": "x", "forget": "1"}),
                       ("/audits/abc/delete", {"owner_token": "x"})):
        answer = client.post(path, data=data, headers=headers, follow_redirects=False)
        assert answer.status_code == 403, (path, headers)
        assert "another site" in answer.text


def test_desk_forms_from_this_site_pass(client):
    for headers in ({"Sec-Fetch-Site": "same-origin"}, {"Origin": "http://testserver"}, {}):
        made = client.post("/audit", data={"table": csv_text(), "claim_start": "1998", "claim_end": "2012"},
                           headers=headers, follow_redirects=False)
        assert made.status_code == 303, headers


def _abusive_trend_body(points: int = 2_000, covariates: int = 8, max_lag: int = 499) -> dict:
    series = invented_series(start=1600, end=1600 + points - 1)
    return {"series": series, "noise": "ar1", "lag_rule": "aic",
            "covariates": [{"name": f"f{i}", "time": series["time"], "value": series["value"], "max_lag": max_lag}
                           for i in range(covariates)]}


def test_the_trend_endpoint_needs_a_key_when_keys_are_set(keyed):
    """/api/v1/trend needed no key and used the shared compute pool."""
    assert_problem(keyed.post("/api/v1/trend", json=_abusive_trend_body(points=100, covariates=1, max_lag=2)), 401)
    small = {"series": invented_series()}
    assert keyed.post("/api/v1/trend", json=small, headers={"Authorization": f"Bearer {KEY}"}).status_code == 200


def test_the_lag_search_counts_against_a_work_budget(make_client):
    """2,000 points, 8 covariates, lags to 499 and the AIC rule ran 32.5 s; the search is now budgeted."""
    keyed = make_client(api_keys=KEY)
    answer = keyed.post("/api/v1/trend", json=_abusive_trend_body(), headers={"Authorization": f"Bearer {KEY}"})
    assert_problem(answer, 422, "covariates[0].max_lag")
    assert "work" in answer.json()["detail"]
    anonymous = make_client(api_keys="", anonymous_lag_search_work=100_000)
    modest = _abusive_trend_body(points=300, covariates=1, max_lag=60)
    assert_problem(anonymous.post("/api/v1/trend", json=modest), 422)
    assert make_client(api_keys="").post("/api/v1/trend", json=modest).status_code == 200
    audit = audit_body(covariates=[{"name": f"f{i}", **invented_series(seed=i), "max_lag": 10} for i in range(8)])
    assert "work" in assert_problem(anonymous.post("/api/v1/audits", json=audit), 422)["detail"]


def test_requests_without_a_key_have_a_small_allowance_per_client(make_client):
    """Anonymous work had no per-client limit at all."""
    open_service = make_client(api_keys="", anonymous_rate_limit="3/minute")
    small = {"series": invented_series()}
    assert [open_service.post("/api/v1/trend", json=small).status_code for _ in range(4)] == [200, 200, 200, 429]
    assert open_service.post("/preview", data={"table": csv_text()}).status_code == 429
    other = TestClient(open_service.app, client=("203.0.113.7", 5000))
    assert other.post("/preview", data={"table": csv_text()}).status_code == 200
