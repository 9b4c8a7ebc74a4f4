"""Writing the audit log. Called by services inside their own transaction."""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session

from server.accounts.models import User
from server.audit.models import AuditEntry


def record(
    *,
    session: Session,
    user: User | None,
    org_id: str,
    entity: str,
    entity_id: str,
    action: str,
    changes: dict[str, Any] | None = None,
) -> None:
    session.add(
        AuditEntry(
            org_id=org_id,
            user_id=user.id if user else None,
            entity=entity,
            entity_id=entity_id,
            action=action,
            changes=_jsonable(changes or {}),
        )
    )


def _jsonable(value: Any) -> Any:
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if value is None or isinstance(value, bool | int | float | str):
        return value
    return str(value)
