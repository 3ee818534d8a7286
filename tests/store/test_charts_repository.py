"""The charts kept beside each record: replaced whole, read by renderer, deleted with the record, safe to race."""

from __future__ import annotations

import pytest

from app.store import AuditRepository, ChartRepository, NewAudit, make_engine, migrate
from store.together import run_together


@pytest.fixture
def stores(database_url):
    engine = make_engine(database_url)
    migrate(engine)
    yield AuditRepository(engine), ChartRepository(engine)
    engine.dispose()


def stored_id(audits: AuditRepository) -> tuple[str, str]:
    record, token = audits.create(NewAudit(title="t", input_document={}, result_document={}, input_sha256="0" * 64,
                                           seed=1, software_version="test", summary={}))
    return record.id, token


def test_charts_are_replaced_whole_and_read_by_renderer(stores):
    audits, charts = stores
    record_id, _ = stored_id(audits)
    charts.keep(record_id, "v1", {"series": "<svg>1</svg>", "null": "<svg>2</svg>"})
    charts.keep(record_id, "v2", {"series": "<svg>3</svg>"})
    assert charts.load(record_id, "v1") == {}
    assert charts.load(record_id, "v2") == {"series": "<svg>3</svg>"}
    assert charts.count(record_id) == 1


def test_deleting_the_record_deletes_its_charts(stores):
    audits, charts = stores
    record_id, token = stored_id(audits)
    other_id, _ = stored_id(audits)
    charts.keep(record_id, "v1", {"series": "<svg/>"})
    charts.keep(other_id, "v1", {"series": "<svg/>"})
    audits.delete(record_id, token)
    assert charts.count(record_id) == 0 and charts.count(other_id) == 1


def test_processes_keeping_the_same_charts_at_once_leave_one_complete_set(stores):
    audits, charts = stores
    record_id, _ = stored_id(audits)
    drawn = {name: f"<svg>{name}</svg>" for name in ("series", "null", "sensitivity", "segments", "detectability")}
    assert run_together(lambda: charts.keep(record_id, "v1", drawn)) == []
    assert charts.load(record_id, "v1") == drawn
