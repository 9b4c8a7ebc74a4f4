"""JSON API: the OAuth2 password flow for API clients, the caller, and users (admins)."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Depends, HTTPException, Request, status
from fastapi.security import OAuth2PasswordRequestForm

from server.accounts import schemas, service
from server.accounts.models import Organisation
from server.accounts.ratelimit import check_signin_allowed, record_signin_failure
from server.common.schemas import Problem
from server.deps import AdminUser, CurrentUser, SessionDep, SignerDep

router = APIRouter(prefix="/api/v1", tags=["accounts"])


@router.post(
    "/auth/token",
    response_model=schemas.Token,
    responses={
        401: {"model": Problem, "description": "Email or password is wrong."},
        429: {"model": Problem, "description": "Too many failed sign-ins; wait 15 minutes."},
    },
)
def issue_token(
    request: Request,
    form: Annotated[OAuth2PasswordRequestForm, Depends()],
    session: SessionDep,
    signer: SignerDep,
) -> schemas.Token:
    """Exchange an email (as ``username``) and password for a bearer token."""
    check_signin_allowed(request, form.username)
    user = service.authenticate(session=session, email=form.username, password=form.password)
    if user is None:
        record_signin_failure(request, form.username)
        raise HTTPException(
            status.HTTP_401_UNAUTHORIZED,
            "Email or password is wrong.",
            headers={"WWW-Authenticate": "Bearer"},
        )
    return schemas.Token(access_token=signer.new_token(user.id))


@router.get("/me", response_model=schemas.UserRead)
def read_me(user: CurrentUser) -> schemas.UserRead:
    return schemas.UserRead.model_validate(user)


@router.get("/users", response_model=list[schemas.UserRead])
def list_users(session: SessionDep, user: AdminUser) -> list[schemas.UserRead]:
    return [
        schemas.UserRead.model_validate(u)
        for u in service.list_users(session=session, org_id=user.org_id)
    ]


@router.post("/users", response_model=schemas.UserRead, status_code=status.HTTP_201_CREATED)
def create_user(body: schemas.UserCreate, session: SessionDep, user: AdminUser) -> schemas.UserRead:
    org = session.get(Organisation, user.org_id)
    assert org is not None
    created = service.create_user(
        session=session,
        org=org,
        email=body.email,
        password=body.password,
        role=body.role,
        name=body.name,
    )
    session.commit()
    return schemas.UserRead.model_validate(created)
