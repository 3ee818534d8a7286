"""Database URLs for tests: a private SQLite file, and a private PostgreSQL schema when a server is configured.

PostgreSQL tests run only when TRENDAUDIT_TEST_DATABASE_URL is set (CI sets it). Each test gets a schema
of its own, reached through libpq's ``options=-csearch_path=...``, and the schema is dropped afterwards,
so no state is shared between tests.
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Iterator
from urllib.parse import quote

import pytest
import sqlalchemy as sa

POSTGRES_ENV = "TRENDAUDIT_TEST_DATABASE_URL"
SKIP_REASON = f"{POSTGRES_ENV} is not set: no PostgreSQL server configured for tests"

BACKENDS = [
    pytest.param("sqlite", id="sqlite"),
    pytest.param("postgresql", id="postgresql", marks=pytest.mark.postgres),
]


def with_search_path(url: str, schema: str) -> str:
    separator = "&" if "?" in url else "?"
    return f"{url}{separator}options={quote(f'-csearch_path={schema}')}"


def _private_postgres_schema() -> Iterator[str]:
    server_url = os.environ.get(POSTGRES_ENV)
    if not server_url:
        pytest.skip(SKIP_REASON)
    schema = "ta_test_" + secrets.token_hex(6)
    admin = sa.create_engine(server_url)
    try:
        with admin.begin() as connection:
            connection.execute(sa.text(f'CREATE SCHEMA "{schema}"'))
        yield with_search_path(server_url, schema)
    finally:
        with admin.begin() as connection:
            connection.execute(sa.text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
        admin.dispose()


def make_database_url(backend: str, tmp_path) -> Iterator[str]:
    if backend == "sqlite":
        yield f"sqlite:///{tmp_path / 'db' / 'audits.sqlite3'}"
    else:
        yield from _private_postgres_schema()


@pytest.fixture(params=BACKENDS)
def database_url(request, tmp_path) -> Iterator[str]:
    yield from make_database_url(request.param, tmp_path)


@pytest.fixture
def postgres_url(tmp_path) -> Iterator[str]:
    yield from _private_postgres_schema()
