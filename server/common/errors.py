"""Errors the services raise; the app turns them into HTTP answers (404, 409, 403)."""

from __future__ import annotations

from typing import Any


class NotFound(Exception):
    """No such record in the caller's organisation (another firm's record included)."""

    def __init__(self, entity: str) -> None:
        super().__init__(f"{entity} not found")
        self.entity = entity


class Conflict(Exception):
    """The request clashes with what is stored (stale version, reused id)."""

    def __init__(self, message: str, *, current: dict[str, Any] | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.current = current


class Forbidden(Exception):
    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message


class InvalidInput(Exception):
    """Input that passed the schema but not a rule that needs the stored data."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(f"{field}: {message}")
        self.field = field
        self.message = message
