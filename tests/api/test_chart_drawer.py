"""The background chart drawer: bounded, idle-time only, giving way to a view, failing quietly."""

from __future__ import annotations

import logging
import threading
import time

import pytest

from app.errors import NotFound
from app.report import chart_cache
from app.report.chart_cache import CHART_RENDERER
from app.report.chart_sets import AUDIT_CHARTS
from app.report.charts import CHART_NAMES
from app.service.chart_drawing import ChartDrawer
from app.service.pool import ComputePool

DEADLINE_SECONDS = 30.0  # generous: a busy machine is slow, not wrong; a broken drawer still fails by then


class Shelf:
    def __init__(self) -> None:
        self.kept: dict[str, dict[str, str]] = {}

    def load(self, record_id, renderer):
        return dict(self.kept.get((record_id, renderer), {}))

    def keep(self, record_id, renderer, charts):
        self.kept[(record_id, renderer)] = dict(charts)


class Pen:
    """Stands in for matplotlib: each chart waits for ``release``, then is an SVG naming its record."""

    def __init__(self) -> None:
        self.drawn: list[tuple[str, str]] = []
        self.started = threading.Event()
        self.release = threading.Event()
        self.finished = threading.Event()  # a chart has been drawn

    def __call__(self, document, charts, names):
        self.started.set()
        if not self.release.wait(DEADLINE_SECONDS):
            raise RuntimeError("never released")
        if document.get("broken"):
            raise ValueError("cannot draw this one")
        self.drawn += [(document["id"], name) for name in names]
        self.finished.set()
        return {name: f"<svg>{document['id']} {name}</svg>" for name in names}


def until(condition, what: str) -> None:
    """Polls ``condition`` until it holds or the generous deadline passes."""
    give_up = time.monotonic() + DEADLINE_SECONDS
    while not condition():
        assert time.monotonic() < give_up, f"{what} never happened"
        time.sleep(0.01)


def release_once_told_to_stop(drawer: ChartDrawer, record_id: str, pen: Pen) -> threading.Thread:
    """Lets the pen finish its chart only after the drawer has told ``record_id``'s drawing to stop, so the test
    sees what happens to a drawing stopped in the middle of a chart, however slow the machine."""
    job = drawer._pending[record_id][0]

    def release() -> None:
        until(job.taken_over.is_set, f"telling {record_id}'s drawing to stop")
        pen.release.set()

    helper = threading.Thread(target=release)
    helper.start()
    return helper


@pytest.fixture
def pen(monkeypatch) -> Pen:
    pen = Pen()
    monkeypatch.setattr(chart_cache, "draw_charts", pen)
    return pen


@pytest.fixture
def shelf() -> Shelf:
    return Shelf()


RECORDS: dict[str, dict] = {}  # the "store": record id -> result document


def read(record_id: str) -> dict:
    if record_id not in RECORDS:
        raise NotFound(f"no audit with id '{record_id}'")
    return RECORDS[record_id]


@pytest.fixture(autouse=True)
def records():
    RECORDS.clear()
    for record_id in "abcdyz":
        RECORDS[record_id] = {"id": record_id}
    RECORDS["x"] = {"id": "x", "broken": True}
    yield RECORDS
    RECORDS.clear()


@pytest.fixture
def drawer(shelf):
    drawer = ChartDrawer(shelf, read, queue=2)
    yield drawer
    drawer.shutdown()


def records_drawn(pen: Pen) -> list[str]:
    return list(dict.fromkeys(record for record, _name in pen.drawn))


def test_every_chart_is_drawn_and_kept_under_the_current_renderer(pen, shelf, drawer):
    pen.release.set()
    assert drawer.submit("a", AUDIT_CHARTS)
    drawer.wait_until_drawn()
    assert set(shelf.load("a", CHART_RENDERER)) == set(CHART_NAMES)


def test_the_queue_is_bounded_and_what_does_not_fit_is_left_to_the_first_view(pen, drawer):
    assert drawer.submit("a", AUDIT_CHARTS)
    assert pen.started.wait(DEADLINE_SECONDS)
    assert drawer.submit("b", AUDIT_CHARTS)
    assert not drawer.submit("c", AUDIT_CHARTS)  # "a" drawing, "b" waiting: the queue of 2 is full
    assert drawer.skipped == 1
    pen.release.set()
    drawer.wait_until_drawn()
    assert records_drawn(pen) == ["a", "b"]
    assert drawer.submit("d", AUDIT_CHARTS)  # room again once they are done
    drawer.wait_until_drawn()
    assert records_drawn(pen) == ["a", "b", "d"]


def test_a_view_takes_over_a_drawing_still_queued(pen, drawer):
    drawer.submit("a", AUDIT_CHARTS)
    assert pen.started.wait(DEADLINE_SECONDS)
    drawer.submit("b", AUDIT_CHARTS)
    settled = threading.Event()
    threading.Thread(target=lambda: (drawer.settle("b"), settled.set())).start()
    # "b" has not started: cancelled, so the view goes on at once, while "a" is still held mid-chart.
    assert settled.wait(DEADLINE_SECONDS) and not pen.release.is_set()
    pen.release.set()
    drawer.wait_until_drawn()
    assert records_drawn(pen) == ["a"]


def test_a_view_stops_a_drawing_under_way_at_the_next_chart_and_what_was_drawn_is_kept(pen, shelf, drawer):
    drawer.submit("a", AUDIT_CHARTS)
    assert pen.started.wait(DEADLINE_SECONDS)
    helper = release_once_told_to_stop(drawer, "a", pen)
    drawer.settle("a")  # returns once the chart being drawn is done
    assert pen.finished.is_set()
    helper.join()
    assert pen.drawn == [("a", CHART_NAMES[0])]
    assert shelf.load("a", CHART_RENDERER) == {CHART_NAMES[0]: f"<svg>a {CHART_NAMES[0]}</svg>"}


def test_charts_a_view_already_kept_are_not_drawn_again(pen, shelf, drawer):
    shelf.keep("a", CHART_RENDERER, {name: "<svg>by a view</svg>" for name in CHART_NAMES})
    pen.release.set()
    drawer.submit("a", AUDIT_CHARTS)
    drawer.wait_until_drawn()
    assert pen.drawn == []


def test_drawing_waits_while_audits_are_computing_and_resumes_when_the_pool_is_idle(pen, shelf):
    pool = ComputePool(workers=1, queue=1, timeout_seconds=30)
    busy_answers = []

    def wait_idle(seconds: float) -> bool:
        idle = pool.wait_idle(seconds)
        busy_answers.append(idle)
        return idle

    drawer = ChartDrawer(shelf, read, queue=4, wait_idle=wait_idle)
    pen.release.set()
    assert pool._take()  # an audit is running
    try:
        drawer.submit("a", AUDIT_CHARTS)
        until(lambda: busy_answers.count(False) >= 2, "asking the busy pool twice")
        assert pen.drawn == []  # nothing drawn while the audit runs
    finally:
        pool._give_back()
    drawer.wait_until_drawn()
    assert [name for _record, name in pen.drawn] == list(CHART_NAMES)
    drawer.shutdown()
    pool.shutdown()


def test_a_drawing_that_fails_is_logged_and_forgotten(pen, drawer, caplog):
    pen.release.set()
    with caplog.at_level(logging.ERROR, logger="trendaudit"):
        assert drawer.submit("x", AUDIT_CHARTS)
        drawer.wait_until_drawn()
    assert "drawing the charts of x" in caplog.text
    assert drawer.submit("y", AUDIT_CHARTS) and drawer.submit("z", AUDIT_CHARTS)  # none pending


def test_a_record_deleted_before_its_turn_is_skipped_quietly(pen, shelf, drawer, records, caplog):
    pen.release.set()
    del records["a"]
    with caplog.at_level(logging.ERROR, logger="trendaudit"):
        assert drawer.submit("a", AUDIT_CHARTS)
        drawer.wait_until_drawn()
    assert pen.drawn == [] and shelf.kept == {} and caplog.text == ""


def test_when_switched_off_nothing_is_queued(pen, shelf):
    drawer = ChartDrawer(shelf, read, queue=8, enabled=False)
    assert not drawer.submit("a", AUDIT_CHARTS)
    assert not ChartDrawer(shelf, read, queue=0).submit("a", AUDIT_CHARTS)
    drawer.shutdown()


def test_shutting_down_drops_queued_drawings_stops_the_one_under_way_and_refuses_new_ones(pen, shelf):
    drawer = ChartDrawer(shelf, read, queue=4)
    drawer.submit("a", AUDIT_CHARTS)
    assert pen.started.wait(DEADLINE_SECONDS)
    drawer.submit("b", AUDIT_CHARTS)
    helper = release_once_told_to_stop(drawer, "a", pen)
    drawer.shutdown()  # "a" stops after the chart it is drawing; "b" never starts
    helper.join()
    assert pen.drawn == [("a", CHART_NAMES[0])]
    assert not drawer.submit("c", AUDIT_CHARTS)
