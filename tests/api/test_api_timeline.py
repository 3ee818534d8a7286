"""GET /api/v1/audits/{id}/timeline: stored with the audit, shown in its report, made on demand for older records."""

from __future__ import annotations

from api.conftest import assert_problem, audit_body


def test_the_timeline_is_stored_with_the_audit_and_shown_in_its_report(client):
    body = audit_body(claim={"start": 1998, "end": 2013, "kind": "pause", "made_on": "2013-03-15"})
    audit = client.post("/api/v1/audits", json=body).json()
    timeline = client.get(f"/api/v1/audits/{audit['id']}/timeline").json()  # waits for the one under way
    assert client.get(f"/api/v1/audits/{audit['id']}").json()["timeline"] == timeline  # kept with the audit
    assert [row["cut_label"] for row in timeline["rows"]] == [str(year) for year in range(2013, 2025)]
    assert timeline["rows"][0]["window_last"] == "2013" and timeline["rows"][-1]["window_last"] == "2024"
    assert timeline["at_the_time"]["window_last"] == "2012"  # the 2013 mean was not known in March 2013
    page = client.get(audit["report_url"]).text
    assert 'id="timeline"' in page and "As each year was added" in page and "2013-03-15" in page


def test_a_record_kept_without_a_timeline_gets_one_computed_and_kept(client):
    audit = client.post("/api/v1/audits", json=audit_body()).json()
    first = client.get(f"/api/v1/audits/{audit['id']}/timeline").json()
    runtime = client.app.state.runtime.get()
    runtime.audits.update({audit["id"]: {"timeline": None}})
    timeline = client.get(f"/api/v1/audits/{audit['id']}/timeline").json()
    assert timeline == first  # the same seeds give the same rows
    assert runtime.audits.get(audit["id"]).result_document["timeline"] == timeline


def test_a_bad_made_on_names_the_field(client):
    body = audit_body(claim={"start": 1998, "end": 2013, "kind": "pause", "made_on": "June 2012"})
    assert_problem(client.post("/api/v1/audits", json=body), 422, "claim.made_on")


def test_no_timeline_for_an_unknown_audit(client):
    assert_problem(client.get("/api/v1/audits/nope/timeline"), 404)
