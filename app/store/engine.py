"""Builds the SQLAlchemy engine from settings: SQLite by default, PostgreSQL through postgresql+psycopg://.

SQLite gets WAL (readers never block the writer) and synchronous=FULL (a committed audit survives a
power cut, not only a killed process). Transactions are begun by hand so a writer can ask for
``BEGIN IMMEDIATE`` and take the write lock up front instead of failing halfway with "database is locked".
"""

from __future__ import annotations

import json
import sqlite3
import time
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url

from app.store.faults import deadline_connection

SQLITE_BUSY_TIMEOUT_SECONDS = 30.0
DEFAULT_STORE_TIMEOUT_SECONDS = 5.0
BEGIN_MODE_OPTION = "sqlite_begin"  # execution option: "DEFERRED" (default) or "IMMEDIATE"


def _finite_json(value: Any) -> str:
    # PostgreSQL's json type refuses NaN and Infinity; failing here names the culprit instead.
    return json.dumps(value, allow_nan=False, separators=(",", ":"))


def is_sqlite(engine: Engine) -> bool:
    return engine.dialect.name == "sqlite"


def sqlite_path(url: str) -> Path | None:
    """The file behind a SQLite URL, or None for memory databases and other back ends."""
    parsed = make_url(url)
    if not parsed.get_backend_name() == "sqlite" or parsed.database in (None, "", ":memory:"):
        return None
    return Path(parsed.database)


def make_engine(database_url: str, timeout_seconds: float = DEFAULT_STORE_TIMEOUT_SECONDS) -> Engine:
    """Creates the engine (and, for SQLite, the directory of its file). Call at start-up, never at import.

    PostgreSQL gets a connect timeout, a statement timeout, a short wait for a pooled connection and a
    client-side deadline on every answer (``app.store.faults``), all ``timeout_seconds``: a store that is
    down or silent is reported within seconds, and a new connection is tried on the next request, so the
    service recovers by itself when the store comes back."""
    path = sqlite_path(database_url)
    if path is not None:
        path.parent.mkdir(parents=True, exist_ok=True)
        engine = create_engine(database_url, json_serializer=_finite_json,
                               connect_args={"timeout": SQLITE_BUSY_TIMEOUT_SECONDS, "check_same_thread": False})
        _configure_sqlite(engine)
        return engine
    if make_url(database_url).get_backend_name() == "sqlite":
        raise ValueError("an in-memory SQLite database cannot be shared between requests; give a file path")
    url = make_url(database_url)
    if url.drivername == "postgresql":
        # A bare postgresql:// would ask for psycopg2; the project ships psycopg 3.
        url = url.set(drivername="postgresql+psycopg")
    seconds = max(1, int(round(timeout_seconds)))
    engine = create_engine(url, json_serializer=_finite_json, pool_pre_ping=True, pool_timeout=timeout_seconds,
                           connect_args={"connect_timeout": seconds,
                                         # added to the URL's own options (a search_path, say), not in their place
                                         "options": f"{url.query.get('options', '')} "
                                                    f"-c statement_timeout={seconds * 1000}".strip(),
                                         "keepalives": 1, "keepalives_idle": seconds, "keepalives_interval": 1,
                                         "keepalives_count": 3, "tcp_user_timeout": seconds * 1000})
    connection_class = deadline_connection(timeout_seconds + 1.0)  # past the server's own statement timeout

    @event.listens_for(engine, "do_connect")
    def _connect(_dialect, _record, cargs, cparams):
        return connection_class.connect(*cargs, **cparams)

    return engine


def _configure_sqlite(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection, _record) -> None:
        # Let SQLAlchemy's "begin" event below issue BEGIN instead of the driver's implicit one.
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        _switch_to_wal(cursor)
        cursor.execute("PRAGMA synchronous=FULL")
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute(f"PRAGMA busy_timeout={int(SQLITE_BUSY_TIMEOUT_SECONDS * 1000)}")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection) -> None:
        mode = connection.get_execution_options().get(BEGIN_MODE_OPTION, "DEFERRED")
        connection.exec_driver_sql(f"BEGIN {mode}")


def _switch_to_wal(cursor) -> None:
    # A new, still empty file records WAL only with its first write; a connection opened while another
    # makes that write (several processes starting on one new database) gets "database is locked" at
    # once, without SQLite's busy wait. Trying again shortly after is all it takes.
    deadline = time.monotonic() + SQLITE_BUSY_TIMEOUT_SECONDS
    delay = 0.005
    while True:
        try:
            cursor.execute("PRAGMA journal_mode=WAL")
            return
        except sqlite3.OperationalError as error:
            if "locked" not in str(error) or time.monotonic() + delay > deadline:
                raise
            time.sleep(delay)
            delay = min(delay * 2, 0.2)


def write_options(engine: Engine) -> dict[str, str]:
    """Execution options for a transaction that will write: takes SQLite's write lock at BEGIN."""
    return {BEGIN_MODE_OPTION: "IMMEDIATE"} if is_sqlite(engine) else {}
