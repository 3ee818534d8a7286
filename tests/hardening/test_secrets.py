"""Secrets stay secret: keys compared in constant time on every path, owner tokens stored only as digests,
no traceback or server path in any answer, and no key or token in the logs."""

from __future__ import annotations

import ast
import hashlib
import hmac
import logging
import re
from pathlib import Path

import pytest
import sqlalchemy as sa
from fastapi.testclient import TestClient

from app.dependencies import get_runtime
from app.main import create_app
from app.settings import PROJECT_ROOT
from app.store.engine import sqlite_path

from api.conftest import audit_body

KEYS = ("hardening-key-one-0123456789", "hardening-key-two-abcdefghij")
SECRET_NAME = re.compile(r"token|api_key|secret|password|credential|digest", re.I)


@pytest.fixture
def keyed(make_client):
    return make_client(api_keys=",".join(KEYS))


def bearer(key: str = KEYS[1]) -> dict[str, str]:
    return {"Authorization": f"Bearer {key}"}


@pytest.fixture
def compare_calls(monkeypatch):
    """Every call of hmac.compare_digest, wherever the app makes it (the module attribute is replaced)."""
    calls: list[tuple[bytes | str, bytes | str]] = []
    real = hmac.compare_digest

    def spy(a, b):
        calls.append((a, b))
        return real(a, b)

    monkeypatch.setattr(hmac, "compare_digest", spy)
    return calls


def test_every_path_that_checks_a_secret_compares_in_constant_time(keyed, compare_calls):
    checks = {
        "API create with a key": (lambda: keyed.post("/api/v1/audits", json=audit_body(), headers=bearer()), 201),
        "API list with a wrong key": (lambda: keyed.get("/api/v1/audits", headers=bearer("wrong")), 403),
        "desk key form": (lambda: keyed.post("/access", data={"key": KEYS[0], "next": "/history"},
                                             follow_redirects=False), 303),
        "desk history with the key cookie": (lambda: keyed.get("/history"), 200),  # the cookie the form just set
    }
    created = None
    for name, (check, status) in checks.items():
        compare_calls.clear()
        response = check()
        assert response.status_code == status, (name, response.status_code)
        created = created or (response.json() if status == 201 else None)
        # One comparison per configured key: no early exit on a match, so timing does not say which key matched.
        assert len(compare_calls) >= len(KEYS), name
    compare_calls.clear()
    wrong_owner = keyed.delete(f"/api/v1/audits/{created['id']}", headers={**bearer(), "X-Owner-Token": "guess"})
    assert wrong_owner.status_code == 403
    digest = hashlib.sha256(b"guess").hexdigest().encode()
    assert any(digest in (a, b) for a, b in compare_calls)  # the owner token's digest, compared by hmac too


def _secret_comparisons(source: str) -> list[str]:
    found = []

    def name(node) -> str:
        if isinstance(node, ast.Name):
            return node.id
        if isinstance(node, ast.Attribute):
            return node.attr
        if isinstance(node, ast.Call):
            return name(node.func)
        return ""

    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Compare) and any(isinstance(op, (ast.Eq, ast.NotEq)) for op in node.ops):
            names = [name(n) for n in (node.left, *node.comparators)]
            if any(SECRET_NAME.search(n) for n in names):
                found.append(f"line {node.lineno}: {' == '.join(names)}")
    return found


def test_no_secret_is_compared_with_equals_anywhere_in_the_app():
    assert _secret_comparisons("ok = given_token == stored.owner_token_sha256")  # the scan does see one
    offenders = {str(path.relative_to(PROJECT_ROOT)): hits for path in (PROJECT_ROOT / "app").rglob("*.py")
                 if (hits := _secret_comparisons(path.read_text()))}
    assert offenders == {}


def test_owner_tokens_are_stored_only_as_digests(client):
    created = client.post("/api/v1/audits", json=audit_body()).json()
    token = created["owner_token"]
    engine = client.app.state.runtime.get().engine
    with engine.connect() as connection:
        row = connection.execute(sa.text("SELECT * FROM audits WHERE id = :id"), {"id": created["id"]}).mappings().one()
    assert row["owner_token_sha256"] == hashlib.sha256(token.encode()).hexdigest()
    assert all(token not in str(value) for value in row.values())
    path = sqlite_path(str(engine.url))
    if path is not None:  # every byte SQLite wrote, the write-ahead log included
        files = [p for p in path.parent.iterdir() if p.name.startswith(path.name)]
        assert files and all(token.encode() not in p.read_bytes() for p in files)
    assert token not in client.get(f"/api/v1/audits/{created['id']}").text
    assert token not in client.get("/api/v1/audits").text


PLANTED = f"planted failure reading {PROJECT_ROOT}/var/secret-config.py with key {KEYS[0]}"


@pytest.fixture
def broken(make_settings, database_url):
    app = create_app(make_settings(database_url, api_keys=",".join(KEYS)))

    def fail():
        raise RuntimeError(PLANTED)

    app.dependency_overrides[get_runtime] = fail
    with TestClient(app, raise_server_exceptions=False) as test_client:
        yield test_client


def _assert_nothing_internal(text: str) -> None:
    for leak in ("Traceback", 'File "', str(PROJECT_ROOT), "/usr/lib/python", "site-packages", "RuntimeError",
                 "planted", KEYS[0]):
        assert leak not in text, leak


def test_internal_errors_answer_without_traceback_path_or_message(broken, caplog):
    caplog.set_level(logging.DEBUG)
    for method, path in (("GET", "/api/v1/audits/anything"), ("GET", "/audits/anything"),
                         ("GET", "/api/v1/audits/anything/data.csv"), ("POST", "/api/v1/audits"),
                         ("GET", "/correlations/anything")):
        response = broken.request(method, path, json=audit_body() if method == "POST" else None, headers=bearer())
        assert response.status_code == 500, (path, response.status_code)
        assert response.headers["content-type"].startswith("application/problem+json")
        assert response.json()["title"] == "Internal error"
        _assert_nothing_internal(response.text)
    assert "planted failure" in caplog.text  # the operator's log has the trace the client never sees


@pytest.mark.parametrize("path", ["/static/..%2f..%2fapp%2fsettings.py", "/static/%2e%2e/pyproject.toml",
                                  "/static/desk.css%00.js", "/api/v1/samples/..%2f..%2fapp%2fsettings.py",
                                  "/api/v1/samples/%2e%2e%2fcatalog", "/audits/x/charts/..%2f..%2fsettings.svg"])
def test_paths_that_try_to_climb_out_are_not_found_and_name_no_file(client, path):
    response = client.get(path)
    assert response.status_code == 404, response.text[:300]
    _assert_nothing_internal(response.text)
    assert "TRENDAUDIT" not in response.text and "BaseSettings" not in response.text


def test_no_key_or_owner_token_reaches_the_logs(keyed, broken, caplog):
    caplog.set_level(logging.DEBUG)  # every logger, every level
    made = keyed.post("/api/v1/audits", json=audit_body(), headers=bearer())
    token = made.json()["owner_token"]
    keyed.get("/api/v1/audits", headers=bearer(KEYS[0]))
    keyed.get("/api/v1/audits", headers=bearer("a-wrong-key-that-should-not-be-logged"))
    keyed.post("/access", data={"key": KEYS[0], "next": "/"}, follow_redirects=False)
    keyed.post("/access", data={"key": "another-wrong-key-typed-in-the-desk", "next": "/"})
    keyed.delete(f"/api/v1/audits/{made.json()['id']}", headers={**bearer(), "X-Owner-Token": "wrong-owner-token"})
    keyed.delete(f"/api/v1/audits/{made.json()['id']}", headers={**bearer(), "X-Owner-Token": token})
    broken.get("/api/v1/audits", headers={**bearer(), "X-Owner-Token": token})
    logged = caplog.text
    assert logged  # something was logged (the 500's trace at least), so the search below searched something
    for secret in (*KEYS, token, "a-wrong-key-that-should-not-be-logged", "another-wrong-key-typed-in-the-desk",
                   "wrong-owner-token"):
        assert secret not in logged.replace(PLANTED, ""), secret  # the planted message is the test's own text
