"""Schema pieces shared by every feature's API."""

from __future__ import annotations

import uuid
from datetime import datetime
from typing import Annotated, Any, Generic, TypeVar

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StringConstraints,
    create_model,
    field_validator,
)
from pydantic.fields import FieldInfo

Item = TypeVar("Item")

ShortText = Annotated[str, StringConstraints(max_length=200, strip_whitespace=True)]
Name = Annotated[str, StringConstraints(min_length=1, max_length=200, strip_whitespace=True)]
LongText = Annotated[str, StringConstraints(max_length=5000)]
Money = Annotated[float, Field(ge=0, le=1_000_000)]


class StrictModel(BaseModel):
    """Input shapes: unknown fields and NUL characters are refused with 422.

    PostgreSQL cannot store a NUL in text, and no field has a use for one, so
    it is refused here for every engine alike instead of failing at the database.
    """

    model_config = ConfigDict(extra="forbid")

    @field_validator("*", mode="after")
    @classmethod
    def _no_nul_characters(cls, value: Any) -> Any:
        if _has_nul(value):
            raise ValueError("text may not contain a NUL character (\\x00)")
        return value


def _has_nul(value: Any) -> bool:
    if isinstance(value, str):
        return "\x00" in value
    if isinstance(value, list | tuple | set):
        return any(_has_nul(item) for item in value)
    return False


class CreateBase(StrictModel):
    id: uuid.UUID | None = Field(
        default=None,
        description="Optional client-made UUID. Sending the same create twice makes one record.",
    )


class UpdateBase(StrictModel):
    version: int = Field(ge=1, description="The version the record was read at.")


class ReadBase(BaseModel):
    model_config = ConfigDict(from_attributes=True)

    id: str
    version: int
    created_at: datetime
    updated_at: datetime


class Page(BaseModel, Generic[Item]):
    items: list[Item]
    total: int
    limit: int
    offset: int


class Problem(BaseModel):
    """Shape of 403, 404 and 409 answers."""

    detail: str
    current: dict[str, object] | None = None


def update_model(create: type[CreateBase]) -> type[UpdateBase]:
    """The PATCH shape of a create schema: every field optional, plus ``version``.

    Field types and limits are the create schema's. Rules across fields are
    checked by the service on the record as it would be after the change,
    through the create schema itself, so one set of rules serves both.
    """
    fields: dict[str, Any] = {
        name: (_constrained(info) | None, Field(default=None, description=info.description))
        for name, info in create.model_fields.items()
        if name != "id"
    }
    return create_model(  # type: ignore[no-any-return, call-overload]
        create.__name__.replace("Create", "Update"), __base__=UpdateBase, **fields
    )


def _constrained(info: FieldInfo) -> Any:
    """The field's type with its limits (gt, max_length ...) still attached."""
    if not info.metadata:
        return info.annotation
    return Annotated.__class_getitem__((info.annotation, *info.metadata))  # type: ignore[attr-defined]
