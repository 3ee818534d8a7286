"""Stored records of every kind (pause audits and driver-response audits) read, listed and deleted one way.

A ``RecordKind`` says where a kind of record lives (its API and report addresses), what to call it, which
charts its report has and how its data are exported; everything else about reading a record is the same.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from app.report.chart_sets import AUDIT_CHARTS, CORRELATION_CHARTS, ChartSet
from app.service.claims import search_words
from app.service.comparisons import comparison_data_csv
from app.service.csv_export import audit_data_csv, correlation_data_csv
from app.service.revisions import chain_on_delete, relink_after_delete
from app.settings import Settings
from app.store import AUDIT, COMPARISON, CORRELATION, AuditRecord, AuditRepository, Page


@dataclass(frozen=True)
class RecordKind:
    kind: str  # as the store tags it
    noun: str  # "audit", "driver-and-response audit"
    api_path: str  # "/api/v1/audits"
    report_path: str  # "/audits": where its report pages live
    charts: ChartSet
    data_csv: Callable[[dict[str, Any], dict[str, Any]], str]  # (input document, result document) -> CSV text
    id_name: str  # how addresses name one record's id: "audit_id"
    id_example: str  # an id as the documentation shows it

    @property
    def noun_with_article(self) -> str:
        return with_article(self.noun)

    def report(self, record_id: str) -> str:
        return f"{self.report_path}/{record_id}"

    def links(self, record_id: str, settings: Settings) -> dict[str, str]:
        """Where the record lives; absolute under TRENDAUDIT_PUBLIC_BASE_URL, never from a request's Host."""
        base = settings.public_base_url.rstrip("/")
        return {"url": f"{base}{self.api_path}/{record_id}", "report_url": f"{base}{self.report(record_id)}",
                "data_url": f"{base}{self.api_path}/{record_id}/data.csv"}

    def link_set(self, record_id: str, document: dict[str, Any], settings: Settings) -> dict[str, Any]:
        """The answer's ``links``: the API resource, the report page, the data as CSV and each chart."""
        base = settings.public_base_url.rstrip("/")
        where = self.links(record_id, settings)
        charts = {name: f"{base}{self.report(record_id)}/charts/{name}.svg" for name in self.charts.names(document)}
        return {"self": where["url"], "report": where["report_url"], "data_csv": where["data_url"],
                "charts": charts}


AUDITS = RecordKind(AUDIT, "audit", "/api/v1/audits", "/audits", AUDIT_CHARTS, audit_data_csv, "audit_id",
                    "q3mZ0kYtq1bq2VY8h8o0fJcL")
CORRELATIONS = RecordKind(CORRELATION, "driver-and-response audit", "/api/v1/correlations", "/correlations",
                          CORRELATION_CHARTS, correlation_data_csv, "correlation_id", "Vx0d3kq7b2mYtq1bq2VY8h8o")
# A comparison's one chart is drawn with its page (a few marks per dataset), so it keeps no chart files.
COMPARISON_CHARTS = ChartSet(COMPARISON, "/comparisons", {}, lambda document: ())
COMPARISONS = RecordKind(COMPARISON, "comparison", "/api/v1/comparisons", "/comparisons", COMPARISON_CHARTS,
                         comparison_data_csv, "comparison_id", "Qw2b8Yt0kq1mZ3VY8h8o0fJc")


def with_article(noun: str) -> str:
    return f"{'an' if noun[0] in 'aeiou' else 'a'} {noun}"


def utc_text(moment) -> str:
    return moment.isoformat().replace("+00:00", "Z")


def record_body(kind: RecordKind, record: AuditRecord, settings: Settings,
                owner_token: str | None = None) -> dict[str, Any]:
    """The answer for one stored record: who and where first, then the result document as stored."""
    head: dict[str, Any] = {"id": record.id, "kind": record.kind, "title": record.title,
                            "created_at": utc_text(record.created_at), **kind.links(record.id, settings),
                            "links": kind.link_set(record.id, record.result_document, settings)}
    if owner_token is not None:
        head["owner_token"] = owner_token
    return {**head, **{k: v for k, v in record.result_document.items() if k not in head}}


def list_records(audits: AuditRepository, kind: RecordKind, settings: Settings, *, limit: int,
                 cursor: str | None, q: str | None = None) -> dict[str, Any]:
    """A page of stored records as the list endpoints answer it, newest first; ``q`` searches the title and
    the claim's words, claimant and outlet."""
    page = audits.list(limit=limit, cursor=cursor, kind=kind.kind, search=search_words(q))
    items = [{"id": item.id, "kind": item.kind, "title": item.title, "created_at": utc_text(item.created_at),
              "summary": item.summary,
              **{k: v for k, v in kind.links(item.id, settings).items() if k in ("url", "report_url")}}
             for item in page.items]
    return {"items": items, "next_cursor": page.next_cursor}


def read_record(audits: AuditRepository, kind: RecordKind, record_id: str) -> AuditRecord:
    return audits.get(record_id, kind=kind.kind)


def list_history(audits: AuditRepository, *, limit: int, cursor: str | None, q: str | None = None) -> Page:
    """Stored records of every kind, newest first (the desk's history); ``q`` searches as the API's lists do."""
    return audits.list(limit=limit, cursor=cursor, search=search_words(q))


def read_body(audits: AuditRepository, kind: RecordKind, record_id: str, settings: Settings) -> dict[str, Any]:
    return record_body(kind, read_record(audits, kind, record_id), settings)


def delete_record(audits: AuditRepository, kind: RecordKind, record_id: str, owner_token: str | None) -> str | None:
    """Deletes the record; for an audit in a chain of revisions, closes the gap and says how (else None)."""
    document = audits.get(record_id, kind=kind.kind).result_document
    audits.delete(record_id, owner_token, kind=kind.kind)
    relink_after_delete(audits, document, record_id)
    return chain_on_delete(document)


def record_data_csv(audits: AuditRepository, kind: RecordKind, record_id: str) -> tuple[str, str]:
    """The record's data as CSV text, and the file name to download it under."""
    record = read_record(audits, kind, record_id)
    return kind.data_csv(record.input_document, record.result_document), f"trendaudit-{record.id}.csv"
