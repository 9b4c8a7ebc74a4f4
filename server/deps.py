"""Request dependencies: the database session, the signed-in user, role checks, CSRF.

Route signatures use the ``Annotated`` aliases (``SessionDep``, ``CurrentUser``,
``EstimatorUser`` ...) so the authorisation each route needs is visible in it.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Annotated

from fastapi import Depends, HTTPException, Request, status
from sqlalchemy.orm import Session

from server.accounts.models import Role, User, role_at_least
from server.accounts.security import SESSION_COOKIE, Signer, csrf_matches
from server.config import Settings

UNSAFE_METHODS = frozenset({"POST", "PUT", "PATCH", "DELETE"})
CSRF_HEADER = "X-CSRF-Token"
CSRF_FIELD = "csrf_token"


def get_settings_dep(request: Request) -> Settings:
    settings: Settings = request.app.state.settings
    return settings


def get_signer(request: Request) -> Signer:
    signer: Signer = request.app.state.signer
    return signer


def get_session(request: Request) -> Iterator[Session]:
    with request.app.state.session_factory() as session:
        yield session


SessionDep = Annotated[Session, Depends(get_session)]
SettingsDep = Annotated[Settings, Depends(get_settings_dep)]
SignerDep = Annotated[Signer, Depends(get_signer)]


class NotSignedIn(HTTPException):
    def __init__(self) -> None:
        super().__init__(
            status_code=status.HTTP_401_UNAUTHORIZED,
            detail="Sign in first.",
            headers={"WWW-Authenticate": "Bearer"},
        )


async def submitted_csrf_token(request: Request) -> str | None:
    """The CSRF token a request carries, in its header or its form body."""
    header = request.headers.get(CSRF_HEADER)
    if header:
        return header
    content_type = request.headers.get("content-type", "")
    if content_type.startswith(("application/x-www-form-urlencoded", "multipart/form-data")):
        form = await request.form()
        value = form.get(CSRF_FIELD)
        return value if isinstance(value, str) else None
    return None


async def current_user(request: Request, session: SessionDep, signer: SignerDep) -> User:
    """The signed-in user, by bearer token (API clients) or session cookie (browser).

    A browser request that changes something must carry the session's CSRF
    token; a bearer token is not sent by browsers on their own, so it needs none.
    """
    authorization = request.headers.get("authorization", "")
    if authorization.lower().startswith("bearer "):
        user_id = signer.read_token(authorization[7:].strip())
        csrf_needed = None
    else:
        data = signer.read_session(request.cookies.get(SESSION_COOKIE))
        user_id = data.user_id if data else None
        csrf_needed = data.csrf if data else None
        if data:
            request.state.csrf_token = data.csrf
    if user_id is None:
        raise NotSignedIn()
    user = session.get(User, user_id)
    if user is None or not user.active:
        raise NotSignedIn()
    if (
        csrf_needed is not None
        and request.method in UNSAFE_METHODS
        and not csrf_matches(csrf_needed, await submitted_csrf_token(request))
    ):
        raise HTTPException(
            status.HTTP_403_FORBIDDEN,
            "This form has expired or did not come from this site (missing CSRF token). "
            "Reload the page and try again.",
        )
    request.state.user = user
    return user


CurrentUser = Annotated[User, Depends(current_user)]

ROLE_VERBS: dict[Role, str] = {
    Role.SURVEYOR: "edit sites, areas and fixtures",
    Role.ESTIMATOR: "edit the catalogue, proposals and quotes",
    Role.SUPERVISOR: "approve quotes, issue work orders and sign off",
    Role.ADMIN: "manage users",
}


def require_role(needed: Role) -> Callable[[User], User]:
    """A dependency that lets through users whose role is ``needed`` or above."""

    def check(user: CurrentUser) -> User:
        if not role_at_least(user.role_enum, needed):
            raise HTTPException(
                status.HTTP_403_FORBIDDEN,
                f"Your role ({user.role}) cannot do this: only a {needed.value} or above may "
                f"{ROLE_VERBS[needed]}.",
            )
        return user

    return check


SurveyorUser = Annotated[User, Depends(require_role(Role.SURVEYOR))]
EstimatorUser = Annotated[User, Depends(require_role(Role.ESTIMATOR))]
SupervisorUser = Annotated[User, Depends(require_role(Role.SUPERVISOR))]
AdminUser = Annotated[User, Depends(require_role(Role.ADMIN))]
