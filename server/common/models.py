"""Columns every organisation-owned, versioned record carries."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import ForeignKey, Integer, String
from sqlalchemy.orm import Mapped, declared_attr, mapped_column

from server.db import UtcDateTime, new_id, utcnow


class OrgOwned:
    """A record that belongs to one organisation and is edited with optimistic locking.

    ``id`` may be supplied by the client (a tablet makes its UUID before it
    knows whether the network will carry the create), ``version`` counts edits
    and SQLAlchemy refuses a flush whose row changed under it.
    """

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    version: Mapped[int] = mapped_column(Integer, nullable=False, default=1)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow, nullable=False)
    updated_at: Mapped[datetime] = mapped_column(
        UtcDateTime(), default=utcnow, onupdate=utcnow, nullable=False
    )

    @declared_attr
    def org_id(cls) -> Mapped[str]:  # noqa: N805 - SQLAlchemy declared_attr signature
        return mapped_column(
            String(36), ForeignKey("organisations.id", ondelete="CASCADE"), index=True
        )

    @declared_attr.directive
    def __mapper_args__(cls) -> dict[str, object]:  # noqa: N805
        return {"version_id_col": cls.version}
