"""Charts drawn once and kept with the stored record: ahead of the first view, or by it; deleted with the record.

Runs on SQLite and, when configured, PostgreSQL (the ``database_url`` fixture).
"""

from __future__ import annotations

import pytest
import sqlalchemy as sa

from app.report import chart_cache
from app.report.chart_cache import CHART_RENDERER, clear_chart_cache, draw_charts
from app.report.chart_sets import AUDIT_CHARTS, CORRELATION_CHARTS
from app.report.charts import CHART_NAMES
from app.report.correlation_charts import CORRELATION_CHART_NAMES
from app.store import ChartRepository, make_engine
from app.store.charts import charts_table

from .conftest import audit_body
from .test_api_correlations import correlation_request


@pytest.fixture(autouse=True)
def cold_process():
    clear_chart_cache()  # every view below must find its charts in the store, or draw them
    yield
    clear_chart_cache()


@pytest.fixture
def kept(database_url):
    engine = make_engine(database_url)
    yield ChartRepository(engine)
    engine.dispose()


def runtime_of(client):
    return client.app.state.runtime.get()


def no_drawing(monkeypatch):
    """From here on, drawing a chart fails the test: what is shown must come from the store."""
    def refuse(*args, **kwargs):
        raise AssertionError("a chart was drawn, but it should have been kept")

    monkeypatch.setattr(chart_cache, "labelled_svg", refuse)


def create(client, path="/api/v1/audits", body=None):
    response = client.post(path, json=body or audit_body())
    assert response.status_code == 201, response.text
    return response.json()


def test_a_new_audits_charts_are_drawn_ahead_and_kept(make_client, kept, monkeypatch):
    client = make_client(draw_charts_ahead=True)
    audit = create(client)
    runtime_of(client).drawer.wait_until_drawn()
    assert set(kept.load(audit["id"], CHART_RENDERER)) == set(CHART_NAMES)
    clear_chart_cache()
    no_drawing(monkeypatch)
    page = client.get(audit["report_url"])
    assert page.status_code == 200
    assert page.text.count('role="img"') == len(CHART_NAMES)
    download = client.get(f"{audit['report_url']}/charts/null.svg")
    assert download.status_code == 200 and download.text.startswith("<?xml")


def test_charts_kept_ahead_equal_charts_drawn_from_the_stored_record(make_client, kept):
    # Drawn ahead from the document in memory; a view would draw from the stored copy (after a JSON round trip).
    client = make_client(draw_charts_ahead=True)
    audit = create(client)
    runtime_of(client).drawer.wait_until_drawn()
    stored = client.get(f"/api/v1/audits/{audit['id']}").json()
    assert kept.load(audit["id"], CHART_RENDERER) == draw_charts(stored, AUDIT_CHARTS)


def test_without_drawing_ahead_the_first_view_draws_and_keeps_them_for_every_process(make_client, kept, monkeypatch):
    client = make_client()  # draw_charts_ahead off
    audit = create(client)
    assert kept.load(audit["id"], CHART_RENDERER) == {}
    # The verdict timeline joins the record once worked out in the background: both views are to show it.
    assert client.get(f"/api/v1/audits/{audit['id']}/timeline").status_code == 200
    first = client.get(audit["report_url"])
    assert first.status_code == 200
    assert set(kept.load(audit["id"], CHART_RENDERER)) == set(CHART_NAMES)
    clear_chart_cache()  # as if another server process, sharing the database, served the next view
    no_drawing(monkeypatch)
    second = make_client().get(audit["report_url"])
    assert second.status_code == 200 and second.text == first.text


def test_charts_kept_by_another_renderer_are_drawn_again_and_replaced(make_client, kept):
    client = make_client()
    audit = create(client)
    kept.keep(audit["id"], "0.0.1+charts0", {name: "<svg>an old style</svg>" for name in CHART_NAMES})
    page = client.get(audit["report_url"])
    assert page.status_code == 200 and "an old style" not in page.text
    assert set(kept.load(audit["id"], CHART_RENDERER)) == set(CHART_NAMES)
    assert kept.load(audit["id"], "0.0.1+charts0") == {}


def test_deleting_an_audit_deletes_its_kept_charts(make_client, kept):
    client = make_client(draw_charts_ahead=True)
    audit = create(client)
    runtime_of(client).drawer.wait_until_drawn()
    assert kept.count(audit["id"]) == len(CHART_NAMES)
    response = client.delete(f"/api/v1/audits/{audit['id']}", headers={"X-Owner-Token": audit["owner_token"]})
    assert response.status_code == 204
    assert kept.count(audit["id"]) == 0
    assert client.get(f"{audit['report_url']}/charts/series.svg").status_code == 404


def test_charts_kept_for_a_record_deleted_meanwhile_are_dropped_quietly(make_client, kept):
    client = make_client()
    audit = create(client)
    charts = {"series": "<svg/>"}
    client.delete(f"/api/v1/audits/{audit['id']}", headers={"X-Owner-Token": audit["owner_token"]})
    kept.keep(audit["id"], CHART_RENDERER, charts)  # the drawing finished after the delete
    with kept.engine.connect() as connection:
        assert connection.execute(sa.select(sa.func.count()).select_from(charts_table)).scalar_one() == 0


def test_a_correlation_audits_charts_are_kept_too(make_client, kept, monkeypatch):
    client = make_client(draw_charts_ahead=True)
    record = create(client, "/api/v1/correlations", correlation_request())
    runtime_of(client).drawer.wait_until_drawn()
    assert set(kept.load(record["id"], CHART_RENDERER)) == set(CORRELATION_CHART_NAMES)
    stored = client.get(f"/api/v1/correlations/{record['id']}").json()
    assert kept.load(record["id"], CHART_RENDERER) == draw_charts(stored, CORRELATION_CHARTS)
    clear_chart_cache()
    no_drawing(monkeypatch)
    assert client.get(record["report_url"]).status_code == 200


def test_under_load_a_report_opens_without_drawing_and_its_charts_come_as_files(client, kept, monkeypatch):
    """While the compute pool works, a view draws nothing: kept charts are inlined and the rest are images the
    browser fetches from their addresses (drawn when asked for). Idle again, the view draws and inlines them all."""
    import asyncio
    import re
    import threading

    audit = create(client)
    partial = draw_charts(audit, AUDIT_CHARTS, ("series",))  # as a drawing that gave way after one chart leaves it
    kept.keep(audit["id"], CHART_RENDERER, partial)
    runtime = runtime_of(client)
    release, started = threading.Event(), threading.Event()

    def busy() -> None:
        started.set()
        release.wait(60)

    loop = asyncio.new_event_loop()
    task = threading.Thread(target=lambda: loop.run_until_complete(runtime.pool.run(busy)))
    task.start()
    try:
        assert started.wait(10) and not runtime.views_may_draw()
        with monkeypatch.context() as patched:
            no_drawing(patched)
            page = client.get(f"/audits/{audit['id']}").text
        files = re.findall(r'<img class="chart-file" src="([^"]+)"', page)
        assert sorted(files) == sorted(f"/audits/{audit['id']}/charts/{name}.svg"
                                       for name in CHART_NAMES if name != "series")
        assert page.count('id="chart-series-') >= 1 and "<svg" in page
        drawn = client.get(files[0])  # the file is drawn when the browser asks for it
        assert drawn.status_code == 200 and drawn.headers["content-type"].startswith("image/svg+xml")
    finally:
        release.set()
        task.join(10)
        loop.close()
    clear_chart_cache()
    idle = client.get(f"/audits/{audit['id']}").text
    assert 'class="chart-file"' not in idle and idle.count('class="chart-image"') == len(CHART_NAMES)
