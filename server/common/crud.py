"""Create, read, update and delete for organisation-owned, versioned records.

Every function is scoped to one organisation: a record of another firm is
reported exactly like a missing one. Creates are idempotent on the client's
id; updates carry the version they were read at.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, TypeVar

from sqlalchemy import ColumnElement, func, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError

from server.accounts.models import User
from server.audit import service as audit
from server.common.errors import Conflict, NotFound
from server.common.models import OrgOwned

Owned = TypeVar("Owned", bound=OrgOwned)


def get_owned(session: Session, model: type[Owned], *, org_id: str, record_id: str) -> Owned:
    record = session.get(model, record_id)
    if record is None or record.org_id != org_id:
        raise NotFound(model.__name__)
    return record


def list_owned(
    session: Session,
    model: type[Owned],
    *,
    org_id: str,
    where: Sequence[ColumnElement[bool]] = (),
    order_by: Sequence[Any] = (),
    limit: int = 50,
    offset: int = 0,
) -> tuple[list[Owned], int]:
    conditions = [model.org_id == org_id, *where]
    total = session.scalar(select(func.count()).select_from(model).where(*conditions)) or 0
    rows = session.scalars(
        select(model)
        .where(*conditions)
        .order_by(*order_by, model.created_at, model.id)
        .limit(limit)
        .offset(offset)
    ).all()
    return list(rows), total


def _differences(record: OrgOwned, values: dict[str, Any]) -> list[str]:
    return sorted(name for name, value in values.items() if getattr(record, name) != value)


def create_idempotent(
    session: Session,
    model: type[Owned],
    *,
    org_id: str,
    user: User,
    values: dict[str, Any],
    record_id: str | None,
) -> tuple[Owned, bool]:
    """Create a record, or return the one this same create made before.

    Returns the record and whether it was created now. A retried create with
    the same id and the same values answers the stored record; the same id
    with other values is a conflict.
    """
    if record_id is not None:
        existing = session.get(model, record_id)
        if existing is not None:
            if existing.org_id != org_id:
                raise Conflict("This id is already used by another record; make a new id.")
            different = _differences(existing, values)
            if different:
                raise Conflict(
                    "A record with this id exists with other values "
                    f"({', '.join(different)}); this is not a retry of the same create.",
                )
            return existing, False
    record = model(**values)
    record.org_id = org_id
    if record_id is not None:
        record.id = record_id
    session.add(record)
    session.flush()
    audit.record(
        session=session,
        user=user,
        org_id=org_id,
        entity=model.__tablename__,  # type: ignore[attr-defined]
        entity_id=record.id,
        action="create",
        changes=values,
    )
    session.commit()
    return record, True


def update_versioned(
    session: Session,
    record: Owned,
    *,
    user: User,
    version: int,
    changes: dict[str, Any],
    current: dict[str, Any],
) -> Owned:
    """Apply ``changes`` if the record is still at ``version``; else a conflict.

    ``current`` is the record as the caller would show it, returned with the
    conflict so the user sees both what they typed and what is stored.
    """
    if record.version != version:
        raise Conflict(
            f"Someone else saved this record first (you edited version {version}, "
            f"it is now at version {record.version}). Nothing was changed.",
            current=current,
        )
    before = {name: getattr(record, name) for name in changes}
    for name, value in changes.items():
        setattr(record, name, value)
    changed = {
        name: [before[name], value] for name, value in changes.items() if before[name] != value
    }
    if not changed:
        return record
    audit.record(
        session=session,
        user=user,
        org_id=record.org_id,
        entity=record.__tablename__,  # type: ignore[attr-defined]
        entity_id=record.id,
        action="update",
        changes=changed,
    )
    try:
        session.commit()
    except StaleDataError:
        session.rollback()
        raise Conflict(
            "Someone else saved this record at the same moment. Nothing was changed.",
            current=current,
        ) from None
    return record


def delete_owned(session: Session, record: OrgOwned, *, user: User) -> None:
    """Delete a record; one that other records still point at is refused (409)."""
    audit.record(
        session=session,
        user=user,
        org_id=record.org_id,
        entity=record.__tablename__,  # type: ignore[attr-defined]
        entity_id=record.id,
        action="delete",
    )
    session.delete(record)
    try:
        session.commit()
    except IntegrityError:
        session.rollback()
        raise Conflict(
            "This record is still in use (a proposal, quote or work order refers to it), "
            "so it was not deleted. Change those first."
        ) from None
