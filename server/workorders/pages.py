"""The crew's pages on a tablet: the work orders, the task list, ticking a fixture off.

A task form carries the task's version: sent twice (a weak signal, a double
tap) it changes nothing the second time; sent after someone else saved the
task, it comes back with the user's readings kept and the stored ones beside
them. The supervisor sees the progress, changes the crew and date, and closes
the order.
"""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from sqlalchemy.orm import Session
from starlette.datastructures import FormData

from server.accounts.models import Role, User, role_at_least
from server.common import forms
from server.common.errors import Conflict, InvalidInput
from server.common.forms import FormDep, FormView
from server.deps import SessionDep, SupervisorUser, SurveyorUser
from server.templating import render
from server.workorders import schemas, service

router = APIRouter(include_in_schema=False)

STATUS_BADGES = {"open": "none", "done": "pass", "problem": "fail"}
STATUS_WORDS = {"open": "To do", "done": "Done", "problem": "Problem"}


def _redirect(path: str) -> RedirectResponse:
    return RedirectResponse(path, status_code=303)


@router.get("/work-orders", response_class=HTMLResponse)
def work_orders_page(request: Request, session: SessionDep, user: SurveyorUser) -> HTMLResponse:
    page = service.list_work_orders(session=session, user=user, limit=200)
    return render(
        request,
        "workorders/list.html",
        {"section": "workorders", "orders": page.items, "total": page.total},
    )


def _task_form(task: schemas.TaskRead) -> FormView:
    return FormView(
        values={
            "charge_indicator_ok": forms.shown(task.charge_indicator_ok),
            "function_test_ok": forms.shown(task.function_test_ok),
            "duration_test_min": forms.shown(task.duration_test_min),
            "problem": task.problem,
        },
        record_id=task.id,
        version=task.version,
    )


def _order_page(
    request: Request,
    session: Session,
    user: User,
    work_order_id: str,
    *,
    status_code: int = 200,
    task_forms: dict[str, FormView] | None = None,
    details: FormView | None = None,
    notice: str = "",
) -> HTMLResponse:
    order = service.get_work_order(session=session, user=user, work_order_id=work_order_id)
    read = service.read_work_order(session=session, order=order)
    views = {task.id: _task_form(task) for task in read.tasks}
    views.update(task_forms or {})
    supervisor = role_at_least(user.role_enum, Role.SUPERVISOR)
    return render(
        request,
        "workorders/order.html",
        {
            "section": "workorders",
            "order": read,
            "task_forms": views,
            "badges": STATUS_BADGES,
            "words": STATUS_WORDS,
            "open": read.state == service.ISSUED,
            "supervisor": supervisor,
            "details": details
            or FormView(
                values={
                    "crew": read.crew,
                    "scheduled_on": forms.shown(read.scheduled_on),
                    "crew_notes": read.crew_notes,
                },
                record_id=read.id,
                version=read.version,
            ),
            "percent_done": read.progress.percent_done,
            "notice": notice,
        },
        status_code=status_code,
    )


@router.get("/work-orders/{work_order_id}", response_class=HTMLResponse)
def work_order_page(
    request: Request, work_order_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    return _order_page(request, session, user, work_order_id)


@router.post("/work-orders/{work_order_id}/tasks/{task_id}")
def update_task(
    request: Request,
    work_order_id: str,
    task_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_work_order(session=session, user=user, work_order_id=work_order_id)
    body, view = forms.read_form(schemas.TaskUpdate, form)
    view.record_id = task_id
    if body is None:
        return _order_page(
            request, session, user, work_order_id, status_code=422, task_forms={task_id: view}
        )
    try:
        service.update_task(
            session=session, user=user, work_order_id=work_order_id, task_id=task_id, body=body
        )
    except InvalidInput as exc:
        session.rollback()
        view.errors[exc.field] = forms.sentence(exc.message)
        return _order_page(
            request, session, user, work_order_id, status_code=422, task_forms={task_id: view}
        )
    except Conflict as exc:
        session.rollback()
        view = forms.show_conflict(view, exc)
        return _order_page(
            request, session, user, work_order_id, status_code=409, task_forms={task_id: view}
        )
    return _redirect(f"/work-orders/{work_order_id}#task-{task_id}")


@router.post("/work-orders/{work_order_id}/details")
def update_details(
    request: Request,
    work_order_id: str,
    session: SessionDep,
    user: SupervisorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_work_order(session=session, user=user, work_order_id=work_order_id)
    body, view = forms.read_form(schemas.WorkOrderUpdate, form)
    if body is None:
        return _order_page(request, session, user, work_order_id, status_code=422, details=view)
    try:
        service.update_work_order(
            session=session, user=user, work_order_id=work_order_id, body=body
        )
    except (Conflict, InvalidInput) as exc:
        session.rollback()
        if isinstance(exc, InvalidInput):
            view.errors[exc.field] = forms.sentence(exc.message)
            return _order_page(request, session, user, work_order_id, status_code=422, details=view)
        return _order_page(
            request,
            session,
            user,
            work_order_id,
            status_code=409,
            details=forms.show_conflict(view, exc),
        )
    return _redirect(f"/work-orders/{work_order_id}")


@router.post("/work-orders/{work_order_id}/complete")
def complete(
    request: Request,
    work_order_id: str,
    session: SessionDep,
    user: SupervisorUser,
    form: FormData = FormDep,
) -> Response:
    version = str(form.get("version") or "")
    try:
        service.complete(
            session=session,
            user=user,
            work_order_id=work_order_id,
            version=int(version) if version.isdigit() else None,
        )
    except Conflict as exc:
        session.rollback()
        return _order_page(
            request, session, user, work_order_id, status_code=409, notice=exc.message
        )
    return _redirect(f"/work-orders/{work_order_id}")
