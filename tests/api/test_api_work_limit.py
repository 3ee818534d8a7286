"""Points times simulations is bounded, so one request cannot ask for hours of work."""

from fastapi.testclient import TestClient

from app.main import create_app
from app.settings import Settings


def test_too_much_simulated_work_is_refused_with_the_field(tmp_path):
    settings = Settings(database_url=f"sqlite:///{tmp_path / 'a.sqlite3'}", max_simulated_points=1_000_000)
    years = list(range(1900, 2020))  # 120 points: 120 x 10,000 simulations = 1.2 million > the limit
    body = {"title": "t", "series": {"time": years, "value": [0.01 * (y - 1900) + (y % 7) * 0.05 for y in years]},
            "claim": {"start": 2000, "end": 2015, "kind": "pause"}, "options": {"simulations": 10_000}}
    with TestClient(create_app(settings)) as client:
        refused = client.post("/api/v1/audits", json=body)
        assert refused.status_code == 422
        problem = refused.json()
        assert problem["where"] == {"field": "options.simulations"}
        assert "at most 8333 simulations" in problem["detail"]
        body["options"]["simulations"] = 200
        assert client.post("/api/v1/audits", json=body).status_code == 201
