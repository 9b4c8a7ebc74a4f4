"""Routes of the offline survey: the service worker, its rules, the session probe, the page
of changes kept on the tablet.

``/sw.js`` is served from the root so that its scope covers every survey page
(a service worker only controls pages under its script's path).
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import FileResponse, HTMLResponse, JSONResponse

from server.deps import CurrentUser, SurveyorUser
from server.offline import service
from server.sites import service as sites_service
from server.sites.schemas import FixtureCreate
from server.templating import ROOT, render

router = APIRouter(include_in_schema=False)

SERVICE_WORKER = ROOT / "static" / "sw.js"
NO_STORE = {"Cache-Control": "no-store"}


@router.get("/sw.js")
def service_worker() -> FileResponse:
    """The service worker script; browsers check it for a new version on every visit."""
    return FileResponse(
        SERVICE_WORKER,
        media_type="application/javascript",
        headers={"Service-Worker-Allowed": "/", "Cache-Control": "no-cache"},
    )


@router.get("/offline/rules/fixture.json")
def fixture_rules() -> dict[str, Any]:
    """The limits of the fixture create schema, and of a copy request, for working offline."""
    return {
        "fields": service.field_rules(schema=FixtureCreate),
        "max_copies": sites_service.MAX_COPIES,
    }


@router.get("/offline/session")
def session_probe(request: Request, user: CurrentUser) -> JSONResponse:
    """Who is signed in and the session's CSRF token: the queue sends with a fresh one."""
    return JSONResponse(
        {"user_id": user.id, "csrf_token": getattr(request.state, "csrf_token", "")},
        headers=NO_STORE,
    )


@router.get("/offline/changes", response_class=HTMLResponse)
def changes_page(request: Request, user: SurveyorUser) -> HTMLResponse:
    """The changes kept on this tablet (the script fills the page from the browser's storage)."""
    return render(request, "offline/changes.html", {"section": "offline"})
