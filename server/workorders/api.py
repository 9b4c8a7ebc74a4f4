"""JSON API for work orders: issue from an accepted quote, read, the crew's task updates, close.

Roles: anyone signed in reads and updates tasks (crews use the surveyor
role); only a supervisor (or admin) issues, changes, and completes an order.
Another firm's work order answers 404.
"""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Response, status

from server.common.api import ERROR_RESPONSES
from server.common.schemas import Problem
from server.deps import CurrentUser, SessionDep, SettingsDep, SupervisorUser, SurveyorUser
from server.quotes import service as quotes
from server.quotes.models import Quote
from server.workorders import documents, schemas, service
from server.workorders.models import WorkOrder

router = APIRouter(prefix="/api/v1", tags=["work orders"])

RESPONSES: dict[int | str, dict[str, Any]] = {
    **ERROR_RESPONSES,
    409: {
        "model": Problem,
        "description": "Quote not accepted, order already completed, open tasks, or a stale "
        "version (the answer carries what is stored).",
    },
}


def owned_quote(quote_id: str, session: SessionDep, user: CurrentUser) -> Quote:
    return quotes.get_quote(session=session, user=user, quote_id=quote_id)


def owned_work_order(work_order_id: str, session: SessionDep, user: CurrentUser) -> WorkOrder:
    """The caller's firm's work order (404 before anything else, whatever the body)."""
    return service.get_work_order(session=session, user=user, work_order_id=work_order_id)


WorkOrderDep = Annotated[WorkOrder, Depends(owned_work_order)]


@router.post(
    "/quotes/{quote_id}/work-order",
    response_model=schemas.WorkOrderRead,
    status_code=status.HTTP_201_CREATED,
    summary="Issue the work order of an accepted quote (idempotent)",
    responses={
        200: {"model": schemas.WorkOrderRead, "description": "Already issued."},
        **RESPONSES,
    },
)
def issue(
    quote: Annotated[Quote, Depends(owned_quote)],
    body: schemas.WorkOrderIssue,
    response: Response,
    session: SessionDep,
    user: SupervisorUser,
) -> schemas.WorkOrderRead:
    """A task per quoted fixture, with its wiring notes; the quote becomes ``issued``."""
    order, created = service.issue(session=session, user=user, quote_id=quote.id, body=body)
    response.status_code = status.HTTP_201_CREATED if created else status.HTTP_200_OK
    return service.read_work_order(session=session, order=order)


@router.get("/work-orders", response_model=schemas.WorkOrderPage, summary="List work orders")
def list_work_orders(
    session: SessionDep,
    user: SurveyorUser,
    state: schemas.WorkOrderStateName | None = None,
    limit: int = Query(50, ge=1, le=500),
    offset: int = Query(0, ge=0, le=1_000_000),
) -> schemas.WorkOrderPage:
    return service.list_work_orders(
        session=session, user=user, state=state, limit=limit, offset=offset
    )


@router.get(
    "/work-orders/{work_order_id}",
    response_model=schemas.WorkOrderRead,
    summary="Read a work order: its tasks and progress",
    responses=RESPONSES,
)
def read_work_order(
    order: WorkOrderDep, session: SessionDep, user: SurveyorUser
) -> schemas.WorkOrderRead:
    return service.read_work_order(session=session, order=order)


@router.patch(
    "/work-orders/{work_order_id}",
    response_model=schemas.WorkOrderRead,
    summary="Change the crew, the date or the crew's notes",
    responses=RESPONSES,
)
def update_work_order(
    order: WorkOrderDep, body: schemas.WorkOrderUpdate, session: SessionDep, user: SupervisorUser
) -> schemas.WorkOrderRead:
    updated = service.update_work_order(
        session=session, user=user, work_order_id=order.id, body=body
    )
    return service.read_work_order(session=session, order=updated)


@router.patch(
    "/work-orders/{work_order_id}/tasks/{task_id}",
    response_model=schemas.TaskRead,
    summary="Tick a fixture done with its readings, record a problem, or reopen it",
    responses=RESPONSES,
)
def update_task(
    order: WorkOrderDep,
    task_id: str,
    body: schemas.TaskUpdate,
    session: SessionDep,
    user: SurveyorUser,
) -> schemas.TaskRead:
    """Done needs the charge indicator on and the function test passed; a problem needs
    its description. The same update sent twice changes nothing."""
    task = service.update_task(
        session=session, user=user, work_order_id=order.id, task_id=task_id, body=body
    )
    return service.task_read(session=session, task=task)


@router.post(
    "/work-orders/{work_order_id}/complete",
    response_model=schemas.WorkOrderRead,
    summary="Close and sign off the order (every fixture done)",
    responses=RESPONSES,
)
def complete(
    order: WorkOrderDep, body: schemas.CompleteBody, session: SessionDep, user: SupervisorUser
) -> schemas.WorkOrderRead:
    """The quote becomes ``completed`` with it."""
    done = service.complete(
        session=session, user=user, work_order_id=order.id, version=body.version
    )
    return service.read_work_order(session=session, order=done)


@router.get(
    "/work-orders/{work_order_id}/pdf",
    response_class=Response,
    summary="The work order as the crew's PDF",
    responses={200: {"content": {"application/pdf": {}}}, **RESPONSES},
)
def work_order_pdf(
    order: WorkOrderDep, session: SessionDep, settings: SettingsDep, user: SurveyorUser
) -> Response:
    sheet = service.work_order_sheet(session=session, user=user, order=order, settings=settings)
    return Response(
        documents.work_order_pdf(sheet),
        media_type="application/pdf",
        headers={"Content-Disposition": f'inline; filename="{order.number}.pdf"'},
    )
