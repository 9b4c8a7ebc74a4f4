"""Sign-in and sign-out pages for the browser."""

from __future__ import annotations

import secrets
from typing import Annotated

from fastapi import APIRouter, Form, Request, status
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from server.accounts import service
from server.accounts.models import Role, role_at_least
from server.accounts.ratelimit import check_signin_allowed, record_signin_failure
from server.accounts.security import SESSION_COOKIE, csrf_matches
from server.deps import CSRF_FIELD, CurrentUser, SessionDep, SettingsDep, SignerDep
from server.proposals import service as proposals
from server.sites import service as sites
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
def home(request: Request, session: SessionDep, user: CurrentUser) -> HTMLResponse:
    """What this person has to do next, by role."""
    role = user.role_enum
    show = {
        "show_survey": role in (Role.SURVEYOR, Role.ESTIMATOR, Role.ADMIN),
        "show_queue": role_at_least(role, Role.ESTIMATOR),
        "show_quotes": role_at_least(role, Role.SUPERVISOR),
    }
    context: dict[str, object] = {"user": user, "survey": [], "queue": [], "quotes": [], **show}
    if show["show_survey"]:
        in_progress = sites.areas_in_progress(session=session, org_id=user.org_id)
        buildings = sites.buildings_by_id(
            session=session, org_id=user.org_id, ids={item.area.building_id for item in in_progress}
        )
        context["survey"] = [
            {
                "area": item.area,
                "building": buildings[item.area.building_id],
                "fixtures": item.fixture_count,
            }
            for item in in_progress
        ]
    if show["show_queue"]:
        context["queue"] = proposals.estimator_queue(session=session, org_id=user.org_id)
    if show["show_quotes"]:
        quotes = proposals.quotes_awaiting_approval(session=session, org_id=user.org_id)
        names = sites.buildings_by_id(
            session=session, org_id=user.org_id, ids={quote.building_id for quote in quotes}
        )
        context["quotes"] = [
            {
                "quote": quote,
                "building": names.get(quote.building_id),
                "sent_on": f"{quote.state_changed_at:%d %b %Y}" if quote.state_changed_at else "",
            }
            for quote in quotes
        ]
    return render(request, "home.html", context)
