"""Sign-in and sign-out pages for the browser."""

from __future__ import annotations

import secrets
from typing import Annotated

from fastapi import APIRouter, Form, Request, status
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from server.accounts import service
from server.accounts.ratelimit import check_signin_allowed, record_signin_failure
from server.accounts.security import SESSION_COOKIE, csrf_matches
from server.deps import CSRF_FIELD, CurrentUser, SessionDep, SettingsDep, SignerDep
from server.templating import render

router = APIRouter(include_in_schema=False)

SIGNIN_CSRF_COOKIE = "planner_signin"


def _safe_next(target: str | None) -> str:
    """Only paths on this site: never an absolute URL an attacker could plant."""
    if target and target.startswith("/") and not target.startswith("//"):
        return target
    return "/"


def _signin_form(
    request: Request,
    *,
    error: str = "",
    email: str = "",
    next_url: str = "/",
    status_code: int = 200,
) -> HTMLResponse:
    token = secrets.token_urlsafe(32)
    response = render(
        request,
        "accounts/signin.html",
        {"signin_token": token, "error": error, "email": email, "next_url": next_url},
        status_code=status_code,
    )
    response.set_cookie(
        SIGNIN_CSRF_COOKIE,
        token,
        httponly=True,
        samesite="lax",
        secure=request.url.scheme == "https",
        max_age=3600,
    )
    return response


@router.get("/signin", response_class=HTMLResponse)
def signin_page(request: Request, next: str = "/") -> HTMLResponse:  # noqa: A002
    return _signin_form(request, next_url=_safe_next(next))


@router.post("/signin")
def signin(
    request: Request,
    session: SessionDep,
    signer: SignerDep,
    settings: SettingsDep,
    email: Annotated[str, Form(max_length=254)] = "",
    password: Annotated[str, Form(max_length=200)] = "",
    next_url: Annotated[str, Form(max_length=500)] = "/",
    csrf_token: Annotated[str, Form(alias=CSRF_FIELD, max_length=100)] = "",
) -> Response:
    if not csrf_matches(request.cookies.get(SIGNIN_CSRF_COOKIE, ""), csrf_token):
        return _signin_form(
            request,
            error="The sign-in form expired. Please sign in again.",
            email=email,
            next_url=_safe_next(next_url),
            status_code=status.HTTP_403_FORBIDDEN,
        )
    check_signin_allowed(request, email)
    user = service.authenticate(session=session, email=email, password=password)
    if user is None:
        record_signin_failure(request, email)
        return _signin_form(
            request,
            error="Email or password is wrong.",
            email=email,
            next_url=_safe_next(next_url),
            status_code=status.HTTP_401_UNAUTHORIZED,
        )
    cookie, _ = signer.new_session(user.id)
    response = RedirectResponse(_safe_next(next_url), status_code=status.HTTP_303_SEE_OTHER)
    response.set_cookie(
        SESSION_COOKIE,
        cookie,
        httponly=True,
        samesite="lax",
        secure=request.url.scheme == "https",
        max_age=settings.session_max_age_s,
    )
    response.delete_cookie(SIGNIN_CSRF_COOKIE)
    return response


@router.post("/signout")
def signout(_: CurrentUser) -> Response:
    response = RedirectResponse("/signin", status_code=status.HTTP_303_SEE_OTHER)
    response.delete_cookie(SESSION_COOKIE)
    return response


@router.get("/", response_class=HTMLResponse)
def home(request: Request, user: CurrentUser) -> HTMLResponse:
    return render(request, "home.html", {"user": user})
