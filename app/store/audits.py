"""The audits repository: create, read, list newest first, delete with the owner's token.

One table holds every stored result; its ``kind`` says which (``audit``: a pause audit,
``correlation``: a driver-response audit). Readers that serve one kind pass it, so an id of another
kind is "not found" there, as if it did not exist.

Ids carry 128 bits or more of randomness (the link is the capability to read). The owner token is
shown once at creation; only its SHA-256 is stored, and checks compare digests in constant time.
"""

from __future__ import annotations

import base64
import os
import shutil
import hashlib
import hmac
import secrets
from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any

import sqlalchemy as sa
from sqlalchemy import Engine

from app.errors import AccessDenied, InputError, Location, NotFound
from app.store.engine import is_sqlite, write_options
from app.store.faults import store_faults, unavailable

ID_BYTES = 18  # 144 bits, 24 URL-safe characters
OWNER_TOKEN_BYTES = 32
MAX_PAGE_SIZE = 100
# Not a backslash, whose meaning in a string literal differs between databases and their settings.
LIKE_ESCAPE = "!"
MAX_SEQ = 2**63 - 1  # BIGINT's largest value
# Room a new record needs: a large audit's documents and charts are a few megabytes (our requirement).
RECORD_ROOM_BYTES = 8 * 1024 * 1024
AUDIT = "audit"
CORRELATION = "correlation"
COMPARISON = "comparison"
KIND_NOUNS = {AUDIT: "audit", CORRELATION: "correlation audit", COMPARISON: "comparison"}

# The schema itself lives in the migrations; this names the columns the queries use, with the types
# that need converting on the way in and out (JSON documents, timezone-aware times).
audits_table = sa.table(
    "audits",
    sa.column("seq", sa.BigInteger), sa.column("id", sa.String), sa.column("kind", sa.String),
    sa.column("title", sa.Text), sa.column("created_at", sa.DateTime(timezone=True)),
    sa.column("input_sha256", sa.String), sa.column("seed", sa.BigInteger),
    sa.column("software_version", sa.String), sa.column("owner_token_sha256", sa.String),
    sa.column("summary", sa.JSON), sa.column("input_document", sa.JSON), sa.column("result_document", sa.JSON),
    sa.column("search_text", sa.Text), sa.column("job_key", sa.String),
)


def new_audit_id() -> str:
    """A random id that starts and ends with a letter or digit, so a permanent link wrapped at a line's end
    or quoted beside punctuation never loses a leading '-' or '_' (one draw in 16 needs a second)."""
    while True:
        candidate = secrets.token_urlsafe(ID_BYTES)
        if candidate[0].isalnum() and candidate[-1].isalnum():
            return candidate


def token_digest(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class NewAudit:
    """What the caller hands over to be stored; id, time and owner token are made here."""

    title: str
    input_document: dict[str, Any]
    result_document: dict[str, Any]
    input_sha256: str
    seed: int | None
    software_version: str
    summary: dict[str, Any]
    kind: str = AUDIT
    search_text: str = ""  # lower-cased words a history search matches (title, the claim's words, who, where)
    job_key: str | None = None  # a batch item's key: unique, so a job run twice stores its audit once
    owner_token_sha256: str | None = None  # a batch item's: its batch's owner token; else a new token is made


@dataclass(frozen=True)
class AuditSummary:
    id: str
    kind: str
    title: str
    created_at: datetime
    summary: dict[str, Any]


@dataclass(frozen=True)
class AuditRecord:
    id: str
    kind: str
    title: str
    created_at: datetime
    input_sha256: str
    seed: int | None
    software_version: str
    summary: dict[str, Any]
    input_document: dict[str, Any]
    result_document: dict[str, Any]


@dataclass(frozen=True)
class Page:
    items: tuple[AuditSummary, ...]
    next_cursor: str | None


def _utc(moment: datetime) -> datetime:
    # SQLite hands back naive datetimes; every stored time was written in UTC.
    return moment.replace(tzinfo=timezone.utc) if moment.tzinfo is None else moment.astimezone(timezone.utc)


def encode_cursor(seq: int) -> str:
    return base64.urlsafe_b64encode(f"s{seq}".encode()).decode().rstrip("=")


def decode_cursor(cursor: str) -> int:
    bad = InputError("the page cursor is not one this service handed out", location=Location(field="cursor"),
                     fix="Use the next_cursor value from the previous page, or leave the cursor out")
    try:
        text = base64.urlsafe_b64decode(cursor + "=" * (-len(cursor) % 4)).decode()
    except (ValueError, UnicodeDecodeError):
        raise bad from None
    # Sequence numbers are 64-bit signed in both stores; anything longer would overflow the query's parameter.
    if not (text.startswith("s") and text[1:].isascii() and text[1:].isdigit() and len(text) <= 20):
        raise bad
    seq = int(text[1:])
    if seq > MAX_SEQ:
        raise bad
    return seq


class AuditRepository:
    def __init__(self, engine: Engine) -> None:
        self.engine = engine

    @store_faults
    def check_writable(self) -> None:
        """Refuses (503) before an audit is computed when the store could not keep it: unreachable, read-only,
        or (SQLite) without room for a record. A write transaction is begun and rolled back."""
        with self.engine.connect().execution_options(**write_options(self.engine)) as connection:
            with connection.begin() as transaction:
                if is_sqlite(self.engine):
                    pragma = connection.exec_driver_sql
                    version = pragma("PRAGMA user_version").scalar_one()
                    pragma(f"PRAGMA user_version = {int(version)}")  # a write: fails on a read-only database
                    pages = pragma("PRAGMA page_count").scalar_one() - pragma("PRAGMA freelist_count").scalar_one()
                    room = (pragma("PRAGMA max_page_count").scalar_one() - pages) * pragma("PRAGMA page_size").scalar_one()
                    path = connection.engine.url.database
                    if room < RECORD_ROOM_BYTES or _free_bytes(path) < RECORD_ROOM_BYTES:
                        raise unavailable("the database's disk is full")
                elif connection.exec_driver_sql("SHOW transaction_read_only").scalar_one() == "on":
                    raise unavailable("the database is read-only")
                transaction.rollback()

    @store_faults
    def create(self, audit: NewAudit) -> tuple[AuditRecord, str]:
        """Stores the audit in one committed transaction; returns the record and the owner token (once). An audit
        with a ``job_key`` already stored is not stored again: the stored one is returned (with no token)."""
        owner_token = secrets.token_urlsafe(OWNER_TOKEN_BYTES) if audit.owner_token_sha256 is None else ""
        created_at = datetime.now(timezone.utc)
        audit_id = new_audit_id()
        row = {
            "id": audit_id, "kind": audit.kind, "title": audit.title, "created_at": created_at,
            "input_sha256": audit.input_sha256, "seed": audit.seed, "software_version": audit.software_version,
            "owner_token_sha256": audit.owner_token_sha256 or token_digest(owner_token), "summary": audit.summary,
            "input_document": audit.input_document, "result_document": audit.result_document,
            "search_text": audit.search_text.lower(), "job_key": audit.job_key,
        }
        try:
            with self.engine.connect().execution_options(**write_options(self.engine)) as connection:
                with connection.begin():
                    connection.execute(audits_table.insert().values(**row))
        except sa.exc.IntegrityError:
            stored = self.find_by_job_key(audit.job_key) if audit.job_key else None
            if stored is None:
                raise
            return stored, ""
        record = AuditRecord(id=audit_id, kind=audit.kind, title=audit.title, created_at=created_at,
                             input_sha256=audit.input_sha256, seed=audit.seed,
                             software_version=audit.software_version, summary=audit.summary,
                             input_document=audit.input_document, result_document=audit.result_document)
        return record, owner_token

    @store_faults
    def find_by_job_key(self, job_key: str) -> AuditRecord | None:
        """The audit a batch item stored, if it was stored."""
        audit_id = self._scalar(sa.select(audits_table.c.id).where(audits_table.c.job_key == job_key))
        return None if audit_id is None else self.get(audit_id)

    def _scalar(self, query):
        with self.engine.connect() as connection:
            return connection.execute(query).scalar()

    @store_faults
    def get(self, audit_id: str, kind: str | None = None) -> AuditRecord:
        """The stored record; with ``kind``, a record of another kind is not found."""
        t = audits_table
        query = sa.select(t.c.id, t.c.kind, t.c.title, t.c.created_at, t.c.input_sha256, t.c.seed,
                          t.c.software_version, t.c.summary, t.c.input_document, t.c.result_document
                          ).where(_identified(audit_id, kind))
        with self.engine.connect() as connection:
            row = connection.execute(query).mappings().first()
        if row is None:
            raise _not_found(audit_id, kind)
        return AuditRecord(**{**row, "created_at": _utc(row["created_at"])})

    @store_faults
    def list(self, *, limit: int = 20, cursor: str | None = None, kind: str | None = None,
             search: str | None = None) -> Page:
        """Newest first. The cursor is opaque to callers: it marks where the previous page stopped. With
        ``search``, only records whose searchable words hold it (case-insensitive, as a bound parameter)."""
        if not 1 <= limit <= MAX_PAGE_SIZE:
            raise InputError(f"limit {limit} is outside 1..{MAX_PAGE_SIZE}", location=Location(field="limit"),
                             fix=f"Ask for between 1 and {MAX_PAGE_SIZE} audits per page")
        t = audits_table
        query = sa.select(t.c.seq, t.c.id, t.c.kind, t.c.title, t.c.created_at, t.c.summary)
        if cursor is not None:
            query = query.where(t.c.seq < decode_cursor(cursor))
        if kind is not None:
            query = query.where(t.c.kind == kind)
        if search:
            query = query.where(t.c.search_text.like(f"%{_like_escaped(search.lower())}%", escape=LIKE_ESCAPE))
        query = query.order_by(t.c.seq.desc()).limit(limit + 1)
        with self.engine.connect() as connection:
            rows = connection.execute(query).mappings().all()
        items = tuple(AuditSummary(id=r["id"], kind=r["kind"], title=r["title"], created_at=_utc(r["created_at"]),
                                   summary=r["summary"]) for r in rows[:limit])
        next_cursor = encode_cursor(rows[limit - 1]["seq"]) if len(rows) > limit else None
        return Page(items=items, next_cursor=next_cursor)

    @store_faults
    def delete(self, audit_id: str, owner_token: str | None, kind: str | None = None) -> None:
        """Deletes the record if the token is its owner's; the check and the delete share one transaction."""
        noun = KIND_NOUNS.get(kind, "audit")
        if not owner_token:
            raise AccessDenied(f"deleting {_article(noun)} {noun} needs its owner token",
                               location=Location(field="X-Owner-Token"),
                               fix=f"Send the owner_token you received when the {noun} was created in the "
                                   "X-Owner-Token header")
        t = audits_table
        with self.engine.connect().execution_options(**write_options(self.engine)) as connection:
            with connection.begin():
                stored = connection.execute(
                    sa.select(t.c.owner_token_sha256).where(_identified(audit_id, kind)).with_for_update()).scalar()
                if stored is None:
                    raise _not_found(audit_id, kind)
                if not hmac.compare_digest(stored.encode(), token_digest(owner_token).encode()):
                    raise AccessDenied(f"the owner token does not match this {noun}", missing_credentials=False,
                                       location=Location(field="X-Owner-Token"),
                                       fix=f"Send the owner_token returned when this {noun} was created")
                connection.execute(t.delete().where(t.c.id == audit_id))


    def update(self, changes: dict[str, dict[str, Any]], summary_changes: dict[str, dict[str, Any]] | None = None
               ) -> None:
        """Merges top-level keys into stored result documents (and summaries), for several records in one
        transaction: links between records, and what is computed for a record after it was stored."""
        t = audits_table
        summary_changes = summary_changes or {}
        with self.engine.connect().execution_options(**write_options(self.engine)) as connection:
            with connection.begin():
                for record_id in sorted(set(changes) | set(summary_changes)):
                    row = connection.execute(sa.select(t.c.summary, t.c.result_document)
                                             .where(t.c.id == record_id).with_for_update()).mappings().first()
                    if row is None:
                        continue  # deleted meanwhile: nothing left to link
                    values = {}
                    if record_id in changes:
                        values["result_document"] = {**row["result_document"], **changes[record_id]}
                    if record_id in summary_changes:
                        values["summary"] = {**row["summary"], **summary_changes[record_id]}
                    connection.execute(t.update().where(t.c.id == record_id).values(**values))

    def check_owner(self, audit_id: str, owner_token: str | None, kind: str | None = None) -> bool:
        """Whether ``owner_token`` is the record's owner token (False when absent); not found raises."""
        t = audits_table
        with self.engine.connect() as connection:
            stored = connection.execute(sa.select(t.c.owner_token_sha256).where(_identified(audit_id, kind))).scalar()
        if stored is None:
            raise _not_found(audit_id, kind)
        return bool(owner_token) and hmac.compare_digest(stored.encode(), token_digest(owner_token).encode())


def _like_escaped(text: str) -> str:
    """The text matched literally by LIKE: its wildcards and the escape character escaped."""
    return text.replace(LIKE_ESCAPE, LIKE_ESCAPE * 2).replace("%", LIKE_ESCAPE + "%").replace("_", LIKE_ESCAPE + "_")


def _free_bytes(path: str | None) -> int:
    try:
        return shutil.disk_usage(os.path.dirname(os.path.abspath(path or "."))).free
    except OSError:
        return 0


def _identified(audit_id: str, kind: str | None):
    condition = audits_table.c.id == audit_id
    return condition if kind is None else condition & (audits_table.c.kind == kind)


def _article(noun: str) -> str:
    return "an" if noun[0] in "aeiou" else "a"


def _not_found(audit_id: str, kind: str | None = None) -> NotFound:
    shown = audit_id if len(audit_id) <= 64 else audit_id[:64] + "..."
    noun = KIND_NOUNS.get(kind, "audit")
    return NotFound(f"no {noun} with id '{shown}'", location=Location(field="id"),
                    fix=f"Check the link; a deleted {noun} is gone for good")
