from fastapi.testclient import TestClient

from app import __version__
from app.main import create_app


def test_healthz_answers_ok(settings):
    client = TestClient(create_app(settings))
    response = client.get("/healthz")
    assert response.status_code == 200
    assert response.json() == {"status": "ok", "version": __version__}


def test_unknown_path_is_problem_details(settings):
    client = TestClient(create_app(settings))
    response = client.get("/no/such/page")
    assert response.status_code == 404
    assert response.headers["content-type"].startswith("application/problem+json")
    assert response.json()["status"] == 404
