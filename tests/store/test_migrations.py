import threading

import pytest
import sqlalchemy as sa

from app.store import MIGRATIONS, current_version, make_engine, migrate
from app.store.engine import sqlite_path
from app.store.migrations import Migration


def test_fresh_database_is_migrated_to_the_newest_version(database_url):
    engine = make_engine(database_url)
    assert current_version(engine) == 0
    assert migrate(engine) == [m.version for m in MIGRATIONS]
    assert current_version(engine) == MIGRATIONS[-1].version
    assert sa.inspect(engine).has_table("audits")


def test_migrating_twice_applies_nothing_the_second_time(database_url):
    engine = make_engine(database_url)
    migrate(engine)
    assert migrate(engine) == []
    with engine.connect() as connection:
        assert connection.execute(sa.text("SELECT COUNT(*) FROM schema_version")).scalar_one() == len(MIGRATIONS)


def test_a_later_migration_is_applied_on_top_of_an_existing_schema(database_url):
    engine = make_engine(database_url)
    migrate(engine)

    def add_note_column(connection):
        connection.execute(sa.text("ALTER TABLE audits ADD COLUMN note TEXT"))

    later = MIGRATIONS + (Migration(MIGRATIONS[-1].version + 1, "test-only column", add_note_column),)
    assert migrate(engine, later) == [later[-1].version]
    assert "note" in {c["name"] for c in sa.inspect(engine).get_columns("audits")}
    assert migrate(engine, later) == []


def test_a_failing_migration_leaves_the_schema_untouched(database_url):
    engine = make_engine(database_url)

    def broken(connection):
        connection.execute(sa.text("CREATE TABLE half_done (x INTEGER)"))
        raise RuntimeError("boom")

    with pytest.raises(RuntimeError):
        migrate(engine, MIGRATIONS + (Migration(99, "broken", broken),))
    # The whole run is one transaction, so even version 1 is rolled back with it.
    assert current_version(engine) == 0
    assert not sa.inspect(engine).has_table("half_done")


def test_processes_starting_together_migrate_exactly_once(database_url):
    engines = [make_engine(database_url) for _ in range(4)]
    barrier = threading.Barrier(len(engines))
    results: list[list[int]] = []
    errors: list[BaseException] = []

    def start(engine):
        barrier.wait()
        try:
            results.append(migrate(engine))
        except BaseException as error:  # collected so the test can report it
            errors.append(error)

    threads = [threading.Thread(target=start, args=(e,)) for e in engines]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert errors == []
    assert sorted(results, key=len) == [[]] * 3 + [[m.version for m in MIGRATIONS]]
    assert current_version(engines[0]) == MIGRATIONS[-1].version


def test_sqlite_file_gets_its_directory_and_durable_settings(tmp_path):
    url = f"sqlite:///{tmp_path / 'nested' / 'dir' / 'a.sqlite3'}"
    assert not (tmp_path / "nested").exists()  # nothing touches the disk before make_engine
    engine = make_engine(url)
    migrate(engine)
    assert sqlite_path(url).exists()
    with engine.connect() as connection:
        assert connection.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert connection.exec_driver_sql("PRAGMA synchronous").scalar() == 2  # 2 = FULL (SQLite docs)


def test_in_memory_sqlite_is_refused():
    with pytest.raises(ValueError, match="in-memory"):
        make_engine("sqlite://")


def test_a_bare_postgresql_url_uses_psycopg_3():
    engine = make_engine("postgresql://user@127.0.0.1:1/none")  # nothing connects until first use
    assert engine.dialect.driver == "psycopg"
