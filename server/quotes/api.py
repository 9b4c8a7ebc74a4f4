"""JSON API for quotes: build from proposals, edit a draft, move through the states, PDF.

Roles: anyone signed in reads; estimators make, edit and send quotes and
record a client's refusal; only a supervisor (or admin) accepts for the firm
(and issues and completes the work order). Another firm's quote answers 404.
"""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Response, status

from server.common.api import ERROR_RESPONSES
from server.common.schemas import Problem
from server.deps import CurrentUser, EstimatorUser, SessionDep, SurveyorUser
from server.quotes import documents, schemas, service
from server.quotes.models import Quote

router = APIRouter(prefix="/api/v1", tags=["quotes"])

RESPONSES: dict[int | str, dict[str, Any]] = {
    **ERROR_RESPONSES,
    409: {
        "model": Problem,
        "description": "Not a draft, a stale version, or a state change "
        "that is not allowed (the answer lists the allowed ones).",
    },
}


def owned_quote(quote_id: str, session: SessionDep, user: CurrentUser) -> Quote:
    """The caller's firm's quote (404 before anything else, whatever the body)."""
    return service.get_quote(session=session, user=user, quote_id=quote_id)


QuoteDep = Annotated[Quote, Depends(owned_quote)]


def _read(session: SessionDep, user: Any, quote: Quote) -> schemas.QuoteRead:
    return service.read_quote(session=session, user=user, quote=quote)


@router.post(
    "/buildings/{building_id}/quotes",
    response_model=schemas.QuoteRead,
    status_code=status.HTTP_201_CREATED,
    summary="Make a draft quote from the building's accepted proposals",
    responses={
        200: {"model": schemas.QuoteRead, "description": "Same create seen before."},
        **RESPONSES,
    },
)
def create_quote(
    building_id: str,
    body: schemas.QuoteCreate,
    response: Response,
    session: SessionDep,
    user: EstimatorUser,
) -> schemas.QuoteRead:
    """Fixtures whose checks fail are left out (listed in ``needs_override``) unless
    ``overrides`` names them with a reason."""
    quote, created = service.create_quote(
        session=session, user=user, building_id=building_id, body=body
    )
    response.status_code = status.HTTP_201_CREATED if created else status.HTTP_200_OK
    return _read(session, user, quote)


@router.get("/quotes", response_model=schemas.QuotePage, summary="List quotes")
def list_quotes(
    session: SessionDep,
    user: SurveyorUser,
    building_id: str | None = None,
    state: schemas.QuoteStateName | None = None,
    limit: int = Query(50, ge=1, le=500),
    offset: int = Query(0, ge=0, le=1_000_000),
) -> schemas.QuotePage:
    return service.list_quotes(
        session=session,
        user=user,
        building_id=building_id,
        state=state,
        limit=limit,
        offset=offset,
    )


@router.get(
    "/quotes/{quote_id}",
    response_model=schemas.QuoteRead,
    summary="Read a quote: lines, totals, what needs an override",
    responses=RESPONSES,
)
def read_quote(quote: QuoteDep, session: SessionDep, user: SurveyorUser) -> schemas.QuoteRead:
    return _read(session, user, quote)


@router.patch(
    "/quotes/{quote_id}",
    response_model=schemas.QuoteRead,
    summary="Change a draft's client block, rates, allowances, validity, scope",
    responses=RESPONSES,
)
def update_quote(
    quote: QuoteDep, body: schemas.QuoteSettings, session: SessionDep, user: EstimatorUser
) -> schemas.QuoteRead:
    """A change of the labour rate or an allowance re-prices the generated lines."""
    updated = service.update_settings(session=session, user=user, quote_id=quote.id, body=body)
    return _read(session, user, updated)


@router.post(
    "/quotes/{quote_id}/lines",
    response_model=schemas.QuoteRead,
    status_code=status.HTTP_201_CREATED,
    summary="Add a line by hand to a draft (idempotent on the line's id)",
    responses=RESPONSES,
)
def add_line(
    quote: QuoteDep, body: schemas.LineCreate, session: SessionDep, user: EstimatorUser
) -> schemas.QuoteRead:
    updated = service.add_line(session=session, user=user, quote_id=quote.id, body=body)
    return _read(session, user, updated)


@router.patch(
    "/quotes/{quote_id}/lines/{line_id}",
    response_model=schemas.QuoteRead,
    summary="Change a line of a draft by hand",
    responses=RESPONSES,
)
def update_line(
    quote: QuoteDep,
    line_id: str,
    body: schemas.LineUpdate,
    session: SessionDep,
    user: EstimatorUser,
) -> schemas.QuoteRead:
    updated = service.update_line(
        session=session, user=user, quote_id=quote.id, line_id=line_id, body=body
    )
    return _read(session, user, updated)


@router.delete(
    "/quotes/{quote_id}/lines/{line_id}",
    response_model=schemas.QuoteRead,
    summary="Remove a line from a draft",
    responses=RESPONSES,
)
def delete_line(
    quote: QuoteDep,
    line_id: str,
    session: SessionDep,
    user: EstimatorUser,
    version: int | None = Query(None, ge=1, description="Refuse if the quote moved on."),
) -> schemas.QuoteRead:
    updated = service.delete_line(
        session=session, user=user, quote_id=quote.id, line_id=line_id, version=version
    )
    return _read(session, user, updated)


@router.post(
    "/quotes/{quote_id}/overrides",
    response_model=schemas.QuoteRead,
    summary="Quote a fixture whose checks fail, with the reason printed on the quote",
    responses=RESPONSES,
)
def add_override(
    quote: QuoteDep, body: schemas.OverrideCreate, session: SessionDep, user: EstimatorUser
) -> schemas.QuoteRead:
    updated = service.add_override(session=session, user=user, quote_id=quote.id, body=body)
    return _read(session, user, updated)


@router.post(
    "/quotes/{quote_id}/rebuild",
    response_model=schemas.QuoteRead,
    summary="Make the generated lines again from the proposals accepted now",
    responses=RESPONSES,
)
def rebuild(
    quote: QuoteDep, body: schemas.VersionOnly, session: SessionDep, user: EstimatorUser
) -> schemas.QuoteRead:
    """Lines changed or added by hand are kept as they are."""
    updated = service.rebuild(session=session, user=user, quote_id=quote.id, version=body.version)
    return _read(session, user, updated)


@router.post(
    "/quotes/{quote_id}/transitions",
    response_model=schemas.QuoteRead,
    summary="Move a quote to another state",
    responses=RESPONSES,
)
def transition(
    quote: QuoteDep, body: schemas.Transition, session: SessionDep, user: EstimatorUser
) -> schemas.QuoteRead:
    """draft → sent (estimator) → accepted (supervisor) or declined (estimator);
    accepted → issued (supervisor: issues the work order); issued → completed
    (supervisor: every task done). Anything else answers 409 with the allowed states."""
    moved = service.transition(
        session=session, user=user, quote_id=quote.id, to=body.to, version=body.version
    )
    return _read(session, user, moved)


@router.get(
    "/quotes/{quote_id}/pdf",
    response_class=Response,
    summary="The quote as the client's PDF",
    responses={200: {"content": {"application/pdf": {}}}, **RESPONSES},
)
def quote_pdf(quote: QuoteDep, session: SessionDep, user: SurveyorUser) -> Response:
    sheet = service.quote_sheet(session=session, user=user, quote=quote)
    return Response(
        documents.quote_pdf(sheet),
        media_type="application/pdf",
        headers={"Content-Disposition": f'inline; filename="{sheet.quote.number}.pdf"'},
    )
