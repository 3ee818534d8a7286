"""The background chart drawer: bounded, never drawing twice, giving way to a view, failing quietly."""

from __future__ import annotations

import logging
import threading
import time

import pytest

from app.api import chart_drawing
from app.api.chart_drawing import ChartDrawer
from app.report.chart_sets import AUDIT_CHARTS


class Gate:
    """Stands in for the drawing: records which records were drawn and holds each until released."""

    def __init__(self) -> None:
        self.drawn: list[str] = []
        self.started = threading.Event()
        self.release = threading.Event()

    def __call__(self, record_id, document, charts, shelf) -> None:
        self.started.set()
        if not self.release.wait(10):
            raise RuntimeError("never released")
        if document.get("broken"):
            raise ValueError("cannot draw this one")
        self.drawn.append(record_id)


@pytest.fixture
def gate(monkeypatch) -> Gate:
    gate = Gate()
    monkeypatch.setattr(chart_drawing, "prepared_charts", gate)
    return gate


@pytest.fixture
def drawer():
    drawer = ChartDrawer(shelf=None, queue=2)
    yield drawer
    drawer.shutdown()


def test_the_queue_is_bounded_and_what_does_not_fit_is_left_to_the_first_view(gate, drawer):
    assert drawer.submit("a", {}, AUDIT_CHARTS)
    assert gate.started.wait(5)
    assert drawer.submit("b", {}, AUDIT_CHARTS)
    assert not drawer.submit("c", {}, AUDIT_CHARTS)  # "a" drawing, "b" waiting: the queue of 2 is full
    assert drawer.skipped == 1
    gate.release.set()
    drawer.wait_idle()
    assert gate.drawn == ["a", "b"]
    assert drawer.submit("d", {}, AUDIT_CHARTS)  # room again once they are done
    drawer.wait_idle()
    assert gate.drawn == ["a", "b", "d"]


def test_a_view_takes_over_a_drawing_still_queued(gate, drawer):
    drawer.submit("a", {}, AUDIT_CHARTS)
    assert gate.started.wait(5)
    drawer.submit("b", {}, AUDIT_CHARTS)
    began = time.monotonic()
    drawer.settle("b")  # "b" has not started: cancelled, so the view draws it itself at once
    assert time.monotonic() - began < 1.0
    gate.release.set()
    drawer.wait_idle()
    assert gate.drawn == ["a"]


def test_a_view_waits_for_a_drawing_under_way_instead_of_drawing_twice(gate, drawer):
    drawer.submit("a", {}, AUDIT_CHARTS)
    assert gate.started.wait(5)
    threading.Timer(0.3, gate.release.set).start()
    began = time.monotonic()
    drawer.settle("a")
    assert time.monotonic() - began >= 0.25
    assert gate.drawn == ["a"]


def test_settling_a_record_never_queued_returns_at_once(gate, drawer):
    began = time.monotonic()
    drawer.settle("unknown")
    assert time.monotonic() - began < 0.1


def test_a_drawing_that_fails_is_logged_and_forgotten(gate, drawer, caplog):
    gate.release.set()
    with caplog.at_level(logging.ERROR, logger="trendaudit"):
        assert drawer.submit("x", {"broken": True}, AUDIT_CHARTS)
        drawer.wait_idle()
    assert "drawing the charts of x" in caplog.text
    assert drawer.submit("y", {}, AUDIT_CHARTS) and drawer.submit("z", {}, AUDIT_CHARTS)  # nothing left pending


def test_when_switched_off_nothing_is_queued(gate):
    drawer = ChartDrawer(shelf=None, queue=8, enabled=False)
    assert not drawer.submit("a", {}, AUDIT_CHARTS)
    assert not ChartDrawer(shelf=None, queue=0).submit("a", {}, AUDIT_CHARTS)
    drawer.shutdown()


def test_shutting_down_drops_queued_drawings_and_refuses_new_ones(gate):
    drawer = ChartDrawer(shelf=None, queue=4)
    drawer.submit("a", {}, AUDIT_CHARTS)
    assert gate.started.wait(5)
    drawer.submit("b", {}, AUDIT_CHARTS)
    threading.Timer(0.2, gate.release.set).start()
    drawer.shutdown()  # lets "a" finish, drops "b"
    assert gate.drawn == ["a"]
    assert not drawer.submit("c", {}, AUDIT_CHARTS)
