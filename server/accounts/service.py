"""Organisations and users: creating them and signing in."""

from __future__ import annotations

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from server.accounts.models import Organisation, Role, User
from server.accounts.security import hash_password, verify_password
from server.common.errors import Conflict, InvalidInput

MIN_PASSWORD_LENGTH = 10


def normalise_email(email: str) -> str:
    return email.strip().lower()


def authenticate(*, session: Session, email: str, password: str) -> User | None:
    """The active user with this email and password, or None (same time either way)."""
    if "\x00" in email:
        email = ""  # no account has it; PostgreSQL would refuse the query outright
    user = session.scalar(select(User).where(User.email == normalise_email(email)))
    ok = verify_password(user.password_hash if user else None, password)
    if user is None or not ok or not user.active:
        return None
    return user


def get_or_create_org(*, session: Session, name: str) -> Organisation:
    org = session.scalar(select(Organisation).where(Organisation.name == name))
    if org is None:
        org = Organisation(name=name)
        session.add(org)
        session.flush()
    return org


def create_user(
    *, session: Session, org: Organisation, email: str, password: str, role: Role, name: str = ""
) -> User:
    email = normalise_email(email)
    if "@" not in email or len(email) > 254:
        raise InvalidInput("email", "give a full email address, like name@example.org")
    if len(password) < MIN_PASSWORD_LENGTH:
        raise InvalidInput("password", f"use at least {MIN_PASSWORD_LENGTH} characters")
    if session.scalar(select(func.count()).select_from(User).where(User.email == email)):
        raise Conflict(f"A user with the email {email} already exists.")
    user = User(
        org_id=org.id,
        email=email,
        name=name,
        role=role.value,
        password_hash=hash_password(password),
    )
    session.add(user)
    session.flush()
    return user


def list_users(*, session: Session, org_id: str) -> list[User]:
    return list(session.scalars(select(User).where(User.org_id == org_id).order_by(User.email)))
