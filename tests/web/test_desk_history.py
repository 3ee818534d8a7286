"""The desk's actions on a report: re-run with updated data, compare with another dataset; the history shows both."""

from __future__ import annotations

import re

from api.conftest import audit_body, csv_text, invented_series


def created(client):
    response = client.post("/api/v1/audits", json=audit_body())
    assert response.status_code == 201, response.text
    return response.json()


def updated_csv() -> str:
    series = invented_series(end=2026)
    series["value"][10] = round(series["value"][10] + 0.05, 4)  # 1960 revised
    return csv_text(series)


def test_rerun_with_updated_data_from_the_report(client):
    audit = created(client)
    report = client.get(f"/audits/{audit['id']}").text
    assert "Re-run with updated data" in report and "Compare with another dataset" in report
    response = client.post(f"/audits/{audit['id']}/revise", data={"owner_token": audit["owner_token"]},
                           files={"file": ("updated.csv", updated_csv(), "text/csv")})
    assert response.status_code == 303, response.text
    revision_id = re.search(r"/audits/([^/]+)/created", response.headers["location"]).group(1)
    page = client.get(f"/audits/{revision_id}").text
    assert "What changed" in page and "1960" in page and "2025, 2026" in page
    history = client.get("/history").text
    assert "Re-run on updated data of" in history and "Re-run 1 time since" in history


def test_rerun_needs_the_owner_token(client):
    audit = created(client)
    response = client.post(f"/audits/{audit['id']}/revise", data={"owner_token": "wrong"},
                           files={"file": ("updated.csv", updated_csv(), "text/csv")})
    assert response.status_code == 403 and "was not re-run" in response.text


def test_compare_with_another_dataset_from_the_report(client):
    audit = created(client)
    other = csv_text(invented_series(seed=11))
    response = client.post(f"/audits/{audit['id']}/compare", data={"label": "Second agency"},
                           files={"file": ("other.csv", other, "text/csv")})
    assert response.status_code == 303, response.text
    comparison_id = re.search(r"/comparisons/([^/]+)/created", response.headers["location"]).group(1)
    page = client.get(f"/comparisons/{comparison_id}").text
    assert "Second agency" in page and ("Both datasets give the same verdict" in page or "of two" in page)
    history = client.get("/history").text
    assert "Datasets compared" in history and f"/comparisons/{comparison_id}" in history


def test_deleting_an_audit_in_a_chain_says_what_happens_to_it(client):
    audit = created(client)
    client.post(f"/audits/{audit['id']}/revise", data={"owner_token": audit["owner_token"]},
                files={"file": ("updated.csv", updated_csv(), "text/csv")})
    page = client.get(f"/audits/{audit['id']}").text
    assert "Deleting this audit: It heads its chain: its revision will start the chain from there" in page
    response = client.post(f"/audits/{audit['id']}/delete", data={"owner_token": audit["owner_token"]})
    assert response.status_code == 200 and "its revision will start the chain from there" in response.text
