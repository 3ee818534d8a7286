"""The browser desk without a browser: plain form posts, as a page without JavaScript sends them."""

from __future__ import annotations

import re

import pytest

from app.settings import PROJECT_ROOT
from web.answers import report_path

ANNUAL_CSV = "year,anomaly,other\n" + "\n".join(
    f"{year},{0.015 * (year - 1950) + 0.1 * ((year * 7) % 5 - 2) / 2:.3f},{year % 3}" for year in range(1950, 2025))
SAMPLE = "quorvane-annual-temperature"


def _claim_form(**fields):
    return {"claim_start": "1998", "claim_end": "2012", "claim_kind": "pause", "title": "Desk test", **fields}


def test_home_offers_upload_paste_and_the_samples(client):
    page = client.get("/")
    assert page.status_code == 200 and page.headers["content-type"].startswith("text/html")
    html = page.text
    assert 'enctype="multipart/form-data"' in html and 'action="/preview"' in html
    assert 'type="file"' in html and '<textarea id="table" name="table"' in html
    assert f'href="/?sample={SAMPLE}"' in html
    assert "content-security-policy" in page.headers
    assert "noindex" not in html  # the home page may be indexed; reports and history may not


def test_a_sample_opens_straight_into_the_preview_with_its_claim(client):
    html = client.get("/", params={"sample": SAMPLE}).text
    assert "Check what was read" in html
    assert "140 of 140 rows" in html and "once a year" in html and "1885 to 2024" in html
    assert "<td>1885</td><td>-1.03</td>" in html  # the first row as written
    assert "<td>2024</td>" in html  # and the last
    assert 'name="claim_start" value="1998"' in html and 'name="claim_end" value="2012"' in html
    assert f'<input type="hidden" name="sample" value="{SAMPLE}">' in html
    assert html.count('role="img"') == 1  # the small chart of what was read


def test_an_uploaded_csv_is_previewed_with_its_columns_and_kept_for_the_next_step(client):
    page = client.post("/preview", files={"file": ("anomalies.csv", ANNUAL_CSV.encode(), "text/csv")})
    assert page.status_code == 200
    html = page.text
    assert "75 of 75 rows" in html and "1950 to 2024" in html
    assert '<option value="year" selected>year</option>' in html
    assert '<option value="anomaly" selected>anomaly</option>' in html
    assert '<option value="other">other</option>' in html  # the other numeric column can be chosen instead
    assert "year,anomaly,other\n1950," in html  # the table travels on in the form


def test_pasting_a_table_and_choosing_another_column(client):
    html = client.post("/preview", data={"table": ANNUAL_CSV, "value_column": "other"}).text
    assert '<option value="other" selected>other</option>' in html


def test_gaps_and_missing_values_are_reported_before_the_audit(client):
    rows = [f"{year},{'NA' if year in (1960, 1961) else 0.01 * (year - 1950)}" for year in range(1950, 2025)
            if year != 1990]
    html = client.post("/preview", data={"table": "year,value\n" + "\n".join(rows)}).text
    found = re.search(r"<dt>Missing values</dt><dd>(\d+)", html)
    assert found and found.group(1) == "2"
    assert re.search(r"<dt>Gaps in the dates</dt><dd>1 <span class=\"note\">\(1990\)", html)


@pytest.mark.parametrize("table, where", [
    ("year,value\n1990,1\n1991,x\n1992,3\n" + "\n".join(f"{y},{y}" for y in range(1993, 2000)), "row 3"),
    ("", "the uploaded file"),
])
def test_unreadable_input_says_what_where_and_how_to_fix_with_a_4xx(client, table, where):
    page = client.post("/preview", data={"table": table})
    assert 400 <= page.status_code < 500
    html = page.text
    assert 'role="alert"' in html and "<strong>Where:</strong>" in html and "<strong>What to do:</strong>" in html
    assert where in html


def test_running_an_audit_redirects_to_its_report(client):
    page = client.post("/audit", data=_claim_form(table=ANNUAL_CSV, label="Invented anomaly", units="K",
                                                  seed="11"))
    assert page.status_code == 303
    location = report_path(page)
    assert re.fullmatch(r"/audits/[A-Za-z0-9_-]{22,}", location)
    report = client.get(location)
    assert report.status_code == 200
    assert "Verdict" in report.text and "Invented anomaly" in report.text
    stored = client.get("/api/v1" + location).json()
    assert stored["window"]["first_time"] == 1998.5 and stored["window"]["last_time"] == 2012.5  # both years in
    assert stored["inputs"]["units"] == "K" and stored["seed"] == 11
    assert stored["options"]["simulations"] == 200


def test_a_samples_own_kind_of_claim_is_chosen(client):
    html = client.get("/", params={"sample": "lake-orrindal-ice-days"}).text  # its claim: a reversal
    assert '<option value="reversal" selected>' in html
    assert "Claim check: a reversal in " in html
    assert '<option value="pause" selected>' not in html


def test_a_field_at_fault_is_marked_for_assistive_technology(client):
    html = client.post("/audit", data=_claim_form(table=ANNUAL_CSV, claim_start="1800")).text
    field = re.search(r'<input [^>]*id="claim_start"[^>]*>', html).group(0)
    assert 'aria-invalid="true"' in field and "problem-title" in field
    assert 'aria-invalid' not in re.search(r'<input [^>]*id="claim_end"[^>]*>', html).group(0)


def test_a_sample_audit_keeps_the_samples_invented_source(client):
    location = report_path(client.post("/audit", data=_claim_form(sample=SAMPLE)))
    body = client.get("/api/v1" + location).json()
    assert body["inputs"]["label"].endswith("(invented)") and body["inputs"]["units"] == "°C"


@pytest.mark.parametrize("fields, label", [
    ({"claim_start": "1800"}, "“Window from”"),
    ({"claim_end": "soon"}, "“Window to”"),
    ({"claim_start": ""}, "“Window from”"),
    ({"simulations": "12"}, "“Simulations”"),
    ({"seed": "-4"}, "“Seed”"),
    ({"noise": "pink"}, "“Noise model”"),
])
def test_a_bad_claim_or_option_comes_back_on_the_form_with_its_field_named(client, fields, label):
    page = client.post("/audit", data=_claim_form(table=ANNUAL_CSV, **fields))
    assert page.status_code == 422
    assert label in page.text and "Check what was read" in page.text  # the preview is still there
    assert client.get("/api/v1/audits").json()["items"] == []


def test_history_lists_audits_newest_first_and_is_not_indexed(client):
    first = report_path(client.post("/audit", data=_claim_form(table=ANNUAL_CSV, title="First audit")))
    second = report_path(client.post("/audit", data=_claim_form(table=ANNUAL_CSV, title="Second audit")))
    page = client.get("/history")
    assert page.status_code == 200 and page.headers["x-robots-tag"].startswith("noindex")
    html = page.text
    assert '<meta name="robots" content="noindex, nofollow">' in html
    assert html.index(second) < html.index(first)
    assert client.get("/history", params={"cursor": "not-a-cursor"}).status_code == 422


def test_each_chart_downloads_as_svg_and_png(client):
    location = report_path(client.post("/audit", data=_claim_form(table=ANNUAL_CSV)))
    for name in ("series", "null", "sensitivity", "segments", "detectability"):
        svg = client.get(f"{location}/charts/{name}.svg")
        assert svg.status_code == 200 and svg.headers["content-type"] == "image/svg+xml"
        assert svg.text.startswith("<?xml") and "<title" in svg.text
        png = client.get(f"{location}/charts/{name}.png")
        assert png.status_code == 200 and png.content[:4] == b"\x89PNG"
    assert client.get(f"{location}/charts/pie.svg").status_code == 404
    assert client.get(f"{location}/charts/series.gif").status_code == 404
    assert client.get("/audits/no-such-audit/charts/series.svg").status_code == 404


def test_the_app_serves_its_own_assets(client):
    css = client.get("/static/desk.css")
    assert css.status_code == 200 and css.headers["content-type"].startswith("text/css")
    assert "@media print" in css.text
    assert client.get("/static/desk.js").headers["content-type"].startswith("text/javascript")
    assert client.get("/static/favicon.svg").status_code == 200
    for name in ("../app/main.py", "missing.css", "desk.py", ".hidden.css"):
        assert client.get(f"/static/{name}").status_code == 404
    assert (PROJECT_ROOT / "static" / "desk.css").is_file()
