"""Versioned schema migrations, applied at start-up.

Each migration is a function of an open connection, listed once in ``MIGRATIONS`` with its version;
a version, once released, is never edited, only followed by a new one. ``schema_version`` records what
has been applied. Two processes starting together are serialised: PostgreSQL by a transaction-scoped
advisory lock, SQLite by ``BEGIN IMMEDIATE`` (the database's write lock); the loser then sees the
winner's rows and applies nothing.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime, timezone

import sqlalchemy as sa
from sqlalchemy import Connection, Engine

from app.store.engine import write_options

log = logging.getLogger("trendaudit.store")

# Any fixed 64-bit number works; it only has to differ from other applications' locks on the same server.
MIGRATION_LOCK_KEY = 0x7472656E64617564  # "trendaud"

schema_version = sa.Table(
    "schema_version", sa.MetaData(),
    sa.Column("version", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("description", sa.String(200), nullable=False),
    sa.Column("applied_at", sa.DateTime(timezone=True), nullable=False),
)


def _v1_audits(connection: Connection) -> None:
    # A frozen copy of the table as version 1 made it; later changes go in later migrations.
    metadata = sa.MetaData()
    big_id = sa.BigInteger().with_variant(sa.Integer(), "sqlite")  # SQLite autoincrements only INTEGER keys
    sa.Table(
        "audits", metadata,
        sa.Column("seq", big_id, primary_key=True, autoincrement=True),
        sa.Column("id", sa.String(64), nullable=False, unique=True),
        sa.Column("kind", sa.String(32), nullable=False),
        sa.Column("title", sa.Text, nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("input_sha256", sa.String(64), nullable=False),
        sa.Column("seed", sa.BigInteger, nullable=True),
        sa.Column("software_version", sa.String(64), nullable=False),
        sa.Column("owner_token_sha256", sa.String(64), nullable=False),
        sa.Column("summary", sa.JSON, nullable=False),
        sa.Column("input_document", sa.JSON, nullable=False),
        sa.Column("result_document", sa.JSON, nullable=False),
        sa.Index("ix_audits_kind_seq", "kind", "seq"),
        sa.Index("ix_audits_input_sha256", "input_sha256"),
    )
    metadata.create_all(connection)


def _v2_charts(connection: Connection) -> None:
    # Drawn charts, kept beside the record they picture so a report view only fills in its template.
    # A cache, not a result: the record alone can always draw them again. Deleting the record
    # deletes its charts (ON DELETE CASCADE; SQLite enforces it with PRAGMA foreign_keys=ON).
    metadata = sa.MetaData()
    sa.Table("audits", metadata, sa.Column("id", sa.String(64), primary_key=True))  # only for the reference
    sa.Table(
        "charts", metadata,
        sa.Column("record_id", sa.String(64), sa.ForeignKey("audits.id", ondelete="CASCADE"), primary_key=True),
        sa.Column("name", sa.String(40), primary_key=True),
        sa.Column("renderer", sa.String(64), nullable=False),
        sa.Column("svg", sa.Text, nullable=False),
    )
    metadata.tables["charts"].create(connection)


def _v3_search_text(connection: Connection) -> None:
    # The lower-cased words a history search matches (title, the claim's words, claimant, outlet), one plain
    # text column so the same parameterised LIKE serves SQLite and PostgreSQL. Older records match by title.
    connection.execute(sa.text("ALTER TABLE audits ADD COLUMN search_text TEXT"))
    connection.execute(sa.text("UPDATE audits SET search_text = LOWER(title)"))


def _v4_batches(connection: Connection) -> None:
    # Batches of audits run as durable jobs: each item is kept (its request as given) before the batch is
    # accepted, and its stored audit carries the item's key, unique, so a job run twice stores it once.
    metadata = sa.MetaData()
    sa.Table(
        "batches", metadata,
        sa.Column("id", sa.String(64), primary_key=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("owner_token_sha256", sa.String(64), nullable=False),
        sa.Column("requester", sa.String(64), nullable=False),  # a digest of the API key (or client) that sent it
        sa.Column("item_count", sa.Integer, nullable=False),
        sa.Column("cancelled", sa.Boolean, nullable=False, default=False),
        sa.Index("ix_batches_requester", "requester"),
    )
    sa.Table(
        "batch_items", metadata,
        sa.Column("id", sa.String(64), primary_key=True),  # also the job's key and its public id
        sa.Column("batch_id", sa.String(64), sa.ForeignKey("batches.id", ondelete="CASCADE"), nullable=False),
        sa.Column("position", sa.Integer, nullable=False),
        sa.Column("priority", sa.Integer, nullable=False),
        sa.Column("request", sa.JSON, nullable=False),
        sa.Column("status", sa.String(16), nullable=False),
        sa.Column("attempts", sa.Integer, nullable=False),
        sa.Column("claimed_by", sa.String(64), nullable=True),
        sa.Column("lease_until", sa.DateTime(timezone=True), nullable=True),
        sa.Column("started_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("finished_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("audit_id", sa.String(64), nullable=True),
        sa.Column("problem", sa.JSON, nullable=True),
        sa.Column("seconds", sa.Float, nullable=True),  # compute time, for the estimate of time left
        sa.UniqueConstraint("batch_id", "position", name="uq_batch_items_position"),
        sa.Index("ix_batch_items_batch_status", "batch_id", "status"),
        sa.Index("ix_batch_items_status_priority", "status", "priority"),
        sa.Index("ix_batch_items_batch_finished", "batch_id", "finished_at"),
    )
    metadata.create_all(connection)
    connection.execute(sa.text("ALTER TABLE audits ADD COLUMN job_key VARCHAR(64)"))
    connection.execute(sa.text("CREATE UNIQUE INDEX ux_audits_job_key ON audits (job_key)"))


@dataclass(frozen=True)
class Migration:
    version: int
    description: str
    apply: Callable[[Connection], None]


MIGRATIONS: tuple[Migration, ...] = (
    Migration(1, "audits table: inputs, seed, version, result, owner token hash", _v1_audits),
    Migration(2, "charts table: each record's drawn charts, deleted with it", _v2_charts),
    Migration(3, "audits.search_text: the words a history search matches", _v3_search_text),
    Migration(4, "batches and batch_items: durable jobs; audits.job_key, unique, so an item is stored once",
              _v4_batches),
)


def _lock(connection: Connection) -> None:
    if connection.dialect.name == "postgresql":
        connection.execute(sa.text("SELECT pg_advisory_xact_lock(:key)"), {"key": MIGRATION_LOCK_KEY})


def current_version(engine: Engine) -> int:
    with engine.connect() as connection:
        if not sa.inspect(connection).has_table("schema_version"):
            return 0
        return int(connection.execute(sa.select(sa.func.coalesce(sa.func.max(schema_version.c.version), 0)))
                   .scalar_one())


def migrate(engine: Engine, migrations: tuple[Migration, ...] = MIGRATIONS) -> list[int]:
    """Brings the schema up to the newest version in one transaction; returns the versions applied."""
    applied: list[int] = []
    with engine.connect().execution_options(**write_options(engine)) as connection, connection.begin():
        _lock(connection)
        schema_version.create(connection, checkfirst=True)
        done = set(connection.execute(sa.select(schema_version.c.version)).scalars())
        for migration in sorted(migrations, key=lambda m: m.version):
            if migration.version in done:
                continue
            migration.apply(connection)
            connection.execute(schema_version.insert().values(
                version=migration.version, description=migration.description,
                applied_at=datetime.now(timezone.utc)))
            applied.append(migration.version)
    if applied:
        log.info("database schema migrated to version %d", applied[-1])
    return applied


def ensure_queue_schema(engine: Engine, schema_sql: str, probe_table: str) -> bool:
    """On PostgreSQL, applies the job queue's own schema (``schema_sql``, the queue library's) once, under the
    migration lock, when ``probe_table`` is absent; True when it was applied now."""
    with engine.connect() as connection, connection.begin():
        _lock(connection)
        present = connection.execute(sa.text("SELECT to_regclass(:name)"), {"name": probe_table}).scalar()
        if present is not None:
            return False
        # The driver's own cursor, with no parameters: the script is run exactly as written.
        connection.connection.dbapi_connection.cursor().execute(schema_sql)
    log.info("job queue schema applied")
    return True
