"""API shapes for sign-in and users."""

from __future__ import annotations

from typing import Annotated

from pydantic import BaseModel, ConfigDict, StringConstraints

from server.accounts.models import Role
from server.common.schemas import StrictModel


class Token(BaseModel):
    access_token: str
    token_type: str = "bearer"


class UserRead(BaseModel):
    model_config = ConfigDict(from_attributes=True)

    id: str
    org_id: str
    email: str
    name: str
    role: Role
    active: bool


class UserCreate(StrictModel):
    email: Annotated[str, StringConstraints(min_length=3, max_length=254, strip_whitespace=True)]
    name: Annotated[str, StringConstraints(max_length=200)] = ""
    role: Role
    password: Annotated[str, StringConstraints(min_length=10, max_length=200)]
