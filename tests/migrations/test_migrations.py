"""The migrations are the only way the schema is made: they must build it, undo it,
and agree with the models, on SQLite and on PostgreSQL."""

from __future__ import annotations

from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import inspect

from server import migrate
from server.db import Base, import_all_models, make_engine
from tests.conftest import both_engines


@pytest.fixture
def empty_database_url(database_url: str, tmp_path: Path) -> str:
    """An empty database: a new SQLite file, or the PostgreSQL one taken back to base."""
    if database_url.startswith("sqlite"):
        return f"sqlite:///{tmp_path / 'empty.sqlite3'}"
    migrate.downgrade(database_url, "base")
    return database_url


def _tables(database_url: str) -> set[str]:
    engine = make_engine(database_url)
    try:
        return set(inspect(engine).get_table_names()) - {"alembic_version"}
    finally:
        engine.dispose()


def test_one_head() -> None:
    heads = ScriptDirectory.from_config(migrate.alembic_config("sqlite://")).get_heads()
    assert len(heads) == 1, f"migrations have several heads: {heads}; re-point down_revision"


@both_engines
def test_upgrade_downgrade_upgrade(empty_database_url: str) -> None:
    import_all_models()
    migrate.upgrade(empty_database_url)
    assert _tables(empty_database_url) == set(Base.metadata.tables)
    migrate.downgrade(empty_database_url, "base")
    assert _tables(empty_database_url) == set()
    migrate.upgrade(empty_database_url)
    assert _tables(empty_database_url) == set(Base.metadata.tables)


@both_engines
def test_models_and_migrations_agree(database_url: str) -> None:
    import_all_models()
    engine = make_engine(database_url)
    try:
        with engine.connect() as connection:
            context = MigrationContext.configure(connection, opts={"compare_type": True})
            differences = compare_metadata(context, Base.metadata)
    finally:
        engine.dispose()
    assert differences == [], f"models and migrations differ: {differences}"


def test_sqlite_connections_use_wal_foreign_keys_and_busy_timeout(database_url: str) -> None:
    engine = make_engine(database_url, busy_timeout_ms=4321)
    try:
        with engine.connect() as connection:
            raw = connection.connection.driver_connection
            assert raw is not None
            assert raw.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
            assert raw.execute("PRAGMA foreign_keys").fetchone()[0] == 1
            assert raw.execute("PRAGMA busy_timeout").fetchone()[0] == 4321
    finally:
        engine.dispose()
