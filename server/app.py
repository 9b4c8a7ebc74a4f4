"""The application factory: ``create_app(settings)`` builds one app for one database."""

from __future__ import annotations

import gc
from collections.abc import AsyncIterator, Awaitable, Callable
from contextlib import asynccontextmanager
from typing import Any

from fastapi import FastAPI, Request, status
from fastapi.encoders import jsonable_encoder
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, RedirectResponse, Response
from fastapi.staticfiles import StaticFiles
from pydantic import ValidationError
from starlette.exceptions import HTTPException as StarletteHTTPException

from server.accounts.ratelimit import AttemptLog
from server.accounts.security import Signer
from server.common.errors import Conflict, Forbidden, InvalidInput, NotFound
from server.common.schemas import Problem
from server.config import Settings, get_settings
from server.db import make_engine, make_session_factory
from server.templating import ROOT

SECURITY_HEADERS = {
    "Content-Security-Policy": (
        "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data: blob:; "
        "connect-src 'self'; object-src 'none'; base-uri 'self'; form-action 'self'; "
        "frame-ancestors 'none'"
    ),
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "same-origin",
    "X-Frame-Options": "DENY",
    "Permissions-Policy": "geolocation=(), microphone=()",
}


def include_routers(app: FastAPI) -> None:
    from server.accounts import api as accounts_api
    from server.accounts import pages as accounts_pages
    from server.calc import api as calc_api
    from server.catalogue import api as catalogue_api
    from server.catalogue import pages as catalogue_pages
    from server.escape import api as escape_api
    from server.escape import pages as escape_pages
    from server.maintenance import api as maintenance_api
    from server.maintenance import pages as maintenance_pages
    from server.offline import pages as offline_pages
    from server.proposals import api as proposals_api
    from server.proposals import pages as proposals_pages
    from server.quotes import api as quotes_api
    from server.quotes import pages as quotes_pages
    from server.sites import api as sites_api
    from server.sites import pages as sites_pages
    from server.workorders import api as workorders_api
    from server.workorders import pages as workorders_pages

    app.include_router(accounts_api.router)
    app.include_router(accounts_pages.router)
    app.include_router(sites_api.router)
    app.include_router(catalogue_api.router)
    app.include_router(proposals_api.router)
    app.include_router(sites_pages.router)
    app.include_router(proposals_pages.router)
    app.include_router(catalogue_pages.router)
    app.include_router(calc_api.router)
    app.include_router(escape_api.router)
    app.include_router(escape_pages.router)
    app.include_router(quotes_api.router)
    app.include_router(workorders_api.router)
    app.include_router(quotes_pages.router)
    app.include_router(workorders_pages.router)
    app.include_router(maintenance_api.router)
    app.include_router(maintenance_pages.router)
    app.include_router(offline_pages.router)


def _field_named_in(message: str) -> str | None:
    """Rules across fields name their field first: ``"loaded_v: the loaded ..."``."""
    head, sep, _ = message.removeprefix("Value error, ").partition(": ")
    return head if sep and head.isidentifier() else None


def validation_details(errors: list[Any], *, prefix: tuple[str, ...] = ()) -> list[dict[str, Any]]:
    """FastAPI's 422 detail list, with the field added where a cross-field rule named it."""
    details = []
    for error in errors:
        loc = (*prefix, *error.get("loc", ()))
        field = _field_named_in(str(error.get("msg", "")))
        if field and (not loc or loc[-1] != field):
            loc = (*loc, field)
        details.append(
            {
                "loc": list(loc),
                "msg": error.get("msg", ""),
                "type": error.get("type", "value_error"),
            }
        )
    return details


def _wants_html(request: Request) -> bool:
    return not request.url.path.startswith("/api/") and "text/html" in request.headers.get(
        "accept", ""
    )


def install_error_handlers(app: FastAPI) -> None:
    @app.exception_handler(RequestValidationError)
    async def _request_invalid(_: Request, exc: RequestValidationError) -> JSONResponse:
        return JSONResponse(
            jsonable_encoder({"detail": validation_details(list(exc.errors()))}),
            status_code=status.HTTP_422_UNPROCESSABLE_CONTENT,
        )

    @app.exception_handler(ValidationError)
    async def _service_invalid(_: Request, exc: ValidationError) -> JSONResponse:
        return JSONResponse(
            jsonable_encoder({"detail": validation_details(list(exc.errors()), prefix=("body",))}),
            status_code=status.HTTP_422_UNPROCESSABLE_CONTENT,
        )

    @app.exception_handler(InvalidInput)
    async def _invalid(_: Request, exc: InvalidInput) -> JSONResponse:
        return JSONResponse(
            {"detail": [{"loc": ["body", exc.field], "msg": exc.message, "type": "value_error"}]},
            status_code=status.HTTP_422_UNPROCESSABLE_CONTENT,
        )

    @app.exception_handler(NotFound)
    async def _not_found(_: Request, exc: NotFound) -> JSONResponse:
        return JSONResponse({"detail": f"No such {exc.entity}."}, status_code=404)

    @app.exception_handler(Conflict)
    async def _conflict(_: Request, exc: Conflict) -> JSONResponse:
        return JSONResponse(
            jsonable_encoder({"detail": exc.message, "current": exc.current}), status_code=409
        )

    @app.exception_handler(Forbidden)
    async def _forbidden(_: Request, exc: Forbidden) -> JSONResponse:
        return JSONResponse({"detail": exc.message}, status_code=403)

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException) -> Response:
        if exc.status_code == status.HTTP_401_UNAUTHORIZED and _wants_html(request):
            return RedirectResponse(f"/signin?next={request.url.path}", status_code=303)
        return JSONResponse(
            {"detail": exc.detail}, status_code=exc.status_code, headers=exc.headers
        )


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or get_settings()
    engine = make_engine(settings.database_url, busy_timeout_ms=settings.sqlite_busy_timeout_ms)

    @asynccontextmanager
    async def lifespan(_: FastAPI) -> AsyncIterator[None]:
        # What start-up built (routes, schemas, templates) lives as long as the
        # process: keep it out of the garbage collector's walks, which otherwise
        # add 100 ms and more to the slowest requests.
        gc.freeze()
        yield
        engine.dispose()

    app = FastAPI(
        responses={
            401: {"model": Problem, "description": "Not signed in, or the token expired."},
            403: {"model": Problem, "description": "Your role may not do this, or no CSRF token."},
        },
        title="Emergency Lighting Retrofit Planner",
        version="0.1.0",
        summary="Survey, check, price, document and maintain emergency luminaire conversions.",
        lifespan=lifespan,
    )
    app.state.settings = settings
    app.state.engine = engine
    app.state.session_factory = make_session_factory(engine)
    app.state.signer = Signer(
        settings.secret_key,
        session_max_age_s=settings.session_max_age_s,
        token_max_age_s=settings.token_max_age_s,
    )
    app.state.signin_attempts = AttemptLog()

    @app.middleware("http")
    async def _security_headers(
        request: Request, call_next: Callable[[Request], Awaitable[Response]]
    ) -> Response:
        response = await call_next(request)
        for name, value in SECURITY_HEADERS.items():
            response.headers.setdefault(name, value)
        return response

    @app.get("/healthz", tags=["operations"], summary="Liveness probe (touches no database)")
    def healthz() -> dict[str, str]:
        return {"status": "ok"}

    install_error_handlers(app)
    app.mount("/static", StaticFiles(directory=str(ROOT / "static")), name="static")
    include_routers(app)
    return app
