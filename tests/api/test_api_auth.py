"""API keys: creating, listing and deleting need one when keys are set; reading by id never does."""

from __future__ import annotations

import pytest

from app.service.access import key_matches

from .conftest import assert_problem, audit_body
from .test_api_correlations import correlation_request

KEYS = "first-key-0123456789,second-key-abcdefghij"


@pytest.fixture
def keyed(make_client):
    return make_client(api_keys=KEYS)


def bearer(key: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {key}"}


def test_without_keys_everything_is_open(client):
    created = client.post("/api/v1/audits", json=audit_body())
    assert created.status_code == 201
    assert client.get("/api/v1/audits").status_code == 200


@pytest.mark.parametrize("headers, status", [
    ({}, 401),
    ({"Authorization": "Basic Zmlyc3Q6a2V5"}, 401),
    (bearer("wrong-key"), 403),
    (bearer("first-key-012345678"), 403),  # a prefix of a real key
    (bearer("first-key-0123456789x"), 403),
])
def test_create_and_list_refuse_missing_or_wrong_keys(keyed, headers, status):
    body = assert_problem(keyed.post("/api/v1/audits", json=audit_body(), headers=headers), status, "Authorization")
    assert body["fix"]
    assert_problem(keyed.get("/api/v1/audits", headers=headers), status, "Authorization")
    if status == 401:
        assert keyed.get("/api/v1/audits", headers=headers).headers["www-authenticate"].startswith("Bearer")


def test_any_configured_key_works_and_reading_by_id_needs_none(keyed):
    created = keyed.post("/api/v1/audits", json=audit_body(), headers=bearer("second-key-abcdefghij"))
    assert created.status_code == 201, created.text
    audit_id = created.json()["id"]
    assert keyed.get("/api/v1/audits", headers=bearer("first-key-0123456789")).status_code == 200
    # The link is the capability: no key to read one audit, its report or its data.
    assert keyed.get(f"/api/v1/audits/{audit_id}").status_code == 200
    assert keyed.get(f"/audits/{audit_id}").status_code == 200
    assert keyed.get(f"/api/v1/audits/{audit_id}/data.csv").status_code == 200


def test_delete_needs_both_a_key_and_the_owner_token(keyed):
    created = keyed.post("/api/v1/audits", json=audit_body(), headers=bearer("first-key-0123456789")).json()
    owner = {"X-Owner-Token": created["owner_token"]}
    assert_problem(keyed.delete(f"/api/v1/audits/{created['id']}", headers=owner), 401, "Authorization")
    assert_problem(keyed.delete(f"/api/v1/audits/{created['id']}", headers=bearer("first-key-0123456789")), 401,
                   "X-Owner-Token")
    done = keyed.delete(f"/api/v1/audits/{created['id']}", headers={**owner, **bearer("first-key-0123456789")})
    assert done.status_code == 204


def test_correlations_follow_the_same_rules(keyed):
    key = bearer("first-key-0123456789")
    assert_problem(keyed.post("/api/v1/correlations", json=correlation_request()), 401, "Authorization")
    assert_problem(keyed.get("/api/v1/correlations", headers=bearer("wrong-key")), 403, "Authorization")
    created = keyed.post("/api/v1/correlations", json=correlation_request(), headers=key)
    assert created.status_code == 201, created.text
    body = created.json()
    assert keyed.get("/api/v1/correlations", headers=key).json()["items"][0]["id"] == body["id"]
    # The link is the capability: no key to read it, its page or its data.
    for path in (body["url"], body["report_url"], body["data_url"]):
        assert keyed.get(path).status_code == 200, path
    owner = {"X-Owner-Token": body["owner_token"]}
    assert_problem(keyed.delete(body["url"], headers=owner), 401, "Authorization")
    assert keyed.delete(body["url"], headers={**owner, **key}).status_code == 204


def test_trend_samples_and_health_need_no_key(keyed):
    assert keyed.get("/healthz").status_code == 200
    assert keyed.get("/api/v1/samples").status_code == 200


def test_key_matching_is_exact():
    keys = ["alpha", "beta"]
    assert key_matches("alpha", keys) and key_matches("beta", keys)
    assert not key_matches("alph", keys) and not key_matches("alphaa", keys) and not key_matches("", keys)
    assert not key_matches("alpha", [])


def test_key_matching_compares_every_key_in_constant_time(monkeypatch):
    """Each configured key is compared through hmac.compare_digest on equal-length digests, with no early exit."""
    import hmac

    import app.service.access as access

    calls = []
    real = hmac.compare_digest

    def spy(a, b):
        calls.append((len(a), len(b)))
        return real(a, b)

    monkeypatch.setattr(access.hmac, "compare_digest", spy)
    assert key_matches("one", ["one", "two", "three"])
    assert len(calls) == 3  # the match on the first key did not stop the loop
    assert {a for a, _ in calls} == {b for _, b in calls} == {32}
