"""Database engine, sessions and the declarative base shared by every feature."""

from __future__ import annotations

import uuid
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import (
    DateTime,
    Dialect,
    Engine,
    MetaData,
    TypeDecorator,
    create_engine,
    event,
)
from sqlalchemy.orm import DeclarativeBase, Session, sessionmaker

# Stable constraint names, so migrations can alter constraints on every engine.
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class UtcDateTime(TypeDecorator[datetime]):
    """A timestamp with time zone, read back as UTC-aware on every engine.

    PostgreSQL keeps the zone (timestamptz); SQLite stores text without it, so
    values read from SQLite are marked UTC, which is what was written.
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is not None and value.tzinfo is None:
            raise ValueError("timestamps must carry a time zone (use server.db.utcnow())")
        return value

    def process_result_value(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is not None and value.tzinfo is None:
            return value.replace(tzinfo=UTC)
        return value


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)


def utcnow() -> datetime:
    return datetime.now(UTC)


def new_id() -> str:
    return str(uuid.uuid4())


def import_all_models() -> None:
    """Import every feature's models so Base.metadata knows every table."""
    from server.accounts import models as _accounts  # noqa: F401
    from server.audit import models as _audit  # noqa: F401
    from server.catalogue import models as _catalogue  # noqa: F401
    from server.escape import models as _escape  # noqa: F401
    from server.maintenance import models as _maintenance  # noqa: F401
    from server.proposals import models as _proposals  # noqa: F401
    from server.quotes import models as _quotes  # noqa: F401
    from server.sites import models as _sites  # noqa: F401
    from server.workorders import models as _workorders  # noqa: F401


def make_engine(database_url: str, *, busy_timeout_ms: int = 5000) -> Engine:
    """An engine for SQLite (WAL, foreign keys, busy timeout) or PostgreSQL."""
    if database_url.startswith("sqlite"):
        path = database_url.split("///", 1)[-1]
        if path and path != ":memory:":
            Path(path).parent.mkdir(parents=True, exist_ok=True)
        engine = create_engine(
            database_url,
            connect_args={"timeout": busy_timeout_ms / 1000, "check_same_thread": False},
        )

        @event.listens_for(engine, "connect")
        def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
            cursor = dbapi_connection.cursor()
            cursor.execute("PRAGMA foreign_keys=ON")
            cursor.execute("PRAGMA journal_mode=WAL")
            cursor.execute(f"PRAGMA busy_timeout={int(busy_timeout_ms)}")
            # FULL: an acknowledged write survives a power cut, not only a crashed process.
            cursor.execute("PRAGMA synchronous=FULL")
            cursor.close()

        return engine
    return create_engine(database_url, pool_pre_ping=True)


def make_session_factory(engine: Engine) -> sessionmaker[Session]:
    return sessionmaker(bind=engine, expire_on_commit=False)


def session_scope(factory: sessionmaker[Session]) -> Iterator[Session]:
    with factory() as session:
        yield session
