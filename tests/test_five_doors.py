"""One claim through all five doors (JSON, multipart, the desk, the command line, /api/v1/trend): the same
points, the same slope, the same verdict, and without a seed the same seed, derived from the question."""

from __future__ import annotations

import json

import pytest
from fastapi.testclient import TestClient

from app.cli import main
from app.main import create_app
from app.settings import Settings

SIMULATIONS = 200
# Invented monthly data, 1990-01 to 2023-12: a steady rise with a fixed wiggle, no randomness needed.
MONTHS = [f"{1990 + i // 12}-{i % 12 + 1:02d}" for i in range(34 * 12)]
VALUES = [round(0.0015 * i + 0.12 * ((i * 7919) % 17 - 8) / 8, 4) for i in range(len(MONTHS))]
CSV = "month,anomaly\n" + "".join(f"{m},{v}\n" for m, v in zip(MONTHS, VALUES))
# "2016" to "2019" on monthly data: January 2016 through December 2019, 48 points, whichever door.
START, END, POINTS = 2016, 2019, 48


@pytest.fixture
def client(tmp_path, monkeypatch):
    monkeypatch.setenv("TRENDAUDIT_DATABASE_URL", f"sqlite:///{tmp_path / 'cli.sqlite3'}")
    settings = Settings(database_url=f"sqlite:///{tmp_path / 'doors.sqlite3'}", api_keys="",
                        default_simulations=SIMULATIONS, draw_charts_ahead=False)
    with TestClient(create_app(settings), follow_redirects=False) as test_client:
        yield test_client


def through_json(client, seed):
    options = {"simulations": SIMULATIONS, **({"seed": seed} if seed is not None else {})}
    answer = client.post("/api/v1/audits", json={"series": {"time": MONTHS, "value": VALUES},
                                                 "claim": {"start": START, "end": END, "kind": "slowdown"},
                                                 "options": options})
    assert answer.status_code == 201, answer.text
    return answer.json()


def through_multipart(client, seed):
    fields = {"claim_start": str(START), "claim_end": str(END), "claim_kind": "slowdown",
              "simulations": str(SIMULATIONS), **({"seed": str(seed)} if seed is not None else {})}
    answer = client.post("/api/v1/audits", data=fields, files={"file": ("s.csv", CSV, "text/csv")})
    assert answer.status_code == 201, answer.text
    return answer.json()


def through_desk(client, seed):
    fields = {"table": CSV, "check": "trend", "time_column": "month", "value_column": "anomaly",
              "claim_start": str(START), "claim_end": str(END), "claim_kind": "slowdown",
              "simulations": str(SIMULATIONS), "rate_unit": "per decade", "seed": "" if seed is None else str(seed)}
    made = client.post("/audit", data=fields, files={"file": ("", b"", "application/octet-stream")})
    assert made.status_code == 303, made.text[:2000]
    record_id = made.headers["location"].removesuffix("/created").rsplit("/", 1)[1]
    return client.get(f"/api/v1/audits/{record_id}").json()


def through_cli(tmp_path, capsys, seed):
    path = tmp_path / "doors.csv"
    path.write_text(CSV)
    args = ["audit", str(path), "--start", str(START), "--end", str(END), "--kind", "slowdown",
            "--simulations", str(SIMULATIONS), "--json", *(["--seed", str(seed)] if seed is not None else [])]
    assert main(args) == 0
    return json.loads(capsys.readouterr().out)


@pytest.mark.parametrize("seed", [11, None], ids=["seed given", "seed derived"])
def test_the_five_doors_agree(client, tmp_path, capsys, seed):
    audits = {"json": through_json(client, seed), "multipart": through_multipart(client, seed),
              "desk": through_desk(client, seed), "cli": through_cli(tmp_path, capsys, seed)}
    trend = client.post("/api/v1/trend", json={"series": {"time": MONTHS, "value": VALUES}, "start": START,
                                               "end": END}).json()
    reference = audits["json"]
    assert reference["window"]["n"] == POINTS
    assert reference["claim"]["window"] == {"start_given": START, "end_given": END, "start": 2016.0, "end": 2020.0,
                                            "first": "2016-01", "last": "2019-12", "points": POINTS}
    for door, body in audits.items():
        assert body["window"]["n"] == POINTS, door
        assert body["window"]["slope"] == pytest.approx(reference["window"]["slope"], rel=1e-12), door
        assert body["long_term"]["slope"] == pytest.approx(reference["long_term"]["slope"], rel=1e-12), door
        assert body["trend_change"]["p_value_adjusted"] == reference["trend_change"]["p_value_adjusted"], door
        assert body["verdict"]["code"] == reference["verdict"]["code"], door
        assert body["seed"] == reference["seed"], door
        window = body["claim"]["window"]
        assert (window["first"], window["last"], window["points"]) == ("2016-01", "2019-12", POINTS), door
        assert str(window["start_given"]) == str(START) and str(window["end_given"]) == str(END), door
    assert trend["n"] == POINTS
    assert trend["slope"] == pytest.approx(reference["window"]["slope"], rel=1e-12)
    assert (trend["window"]["first"], trend["window"]["last"], trend["window"]["points"]) == ("2016-01", "2019-12",
                                                                                             POINTS)
    if seed is not None:
        assert reference["seed"] == seed
