"""The quote pages: the list, making a quote for a building, and the quote builder.

Every form posts the CSRF token; creates carry a UUID made with the form (a
double tap makes one record), edits carry the quote's version (a stale edit
comes back with the stored values beside the user's). A refused form is
shown again with the user's input and the message beside the field.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable
from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import BaseModel
from sqlalchemy import select
from sqlalchemy.orm import Session
from starlette.datastructures import FormData

from server.accounts.models import Role, User, role_at_least
from server.common import forms
from server.common.errors import Conflict, Forbidden, InvalidInput
from server.common.forms import FormDep, FormView
from server.deps import EstimatorUser, SessionDep, SupervisorUser, SurveyorUser
from server.quotes import schemas, service
from server.quotes.models import QuoteState
from server.sites.models import Building
from server.templating import render
from server.workorders import schemas as workorder_schemas
from server.workorders import service as workorders

router = APIRouter(include_in_schema=False)

SETTINGS_LABELS = {
    "client_name": "Client",
    "client_address": "Client address",
    "client_contact": "Client contact",
    "labour_rate": "Labour rate",
    "markup_pct": "Overheads and margin",
    "discount_pct": "Discount",
    "tax_pct": "Tax",
    "series_link_h": "Breaking a series link",
    "supply_run_h": "New unswitched feed",
    "commissioning_h": "Commissioning tests",
    "sundries_per_fixture": "Sundries per fixture",
    "supply_run_materials": "Materials per new feed",
    "valid_until": "Prices hold until",
    "scope": "Scope, in your words (printed after the generated scope)",
    "assumptions": "Further assumptions",
}
STATE_ACTIONS = {
    QuoteState.SENT: "Mark as sent to the client",
    QuoteState.ACCEPTED: "Accept for the firm",
    QuoteState.DECLINED: "Client declined",
    QuoteState.ISSUED: "Issue the work order",
    QuoteState.COMPLETED: "Complete",
}
STATE_BADGES = {
    QuoteState.DRAFT: "none",
    QuoteState.SENT: "info",
    QuoteState.ACCEPTED: "pass",
    QuoteState.DECLINED: "fail",
    QuoteState.ISSUED: "action",
    QuoteState.COMPLETED: "accepted",
}


class NewQuoteForm(BaseModel):
    id: uuid.UUID | None = None
    building_id: str


def _redirect(path: str) -> RedirectResponse:
    return RedirectResponse(path, status_code=303)


def _buildings(session: Session, user: User) -> list[tuple[str, str]]:
    rows = session.execute(
        select(Building.id, Building.name)
        .where(Building.org_id == user.org_id)
        .order_by(Building.name)
    ).all()
    return [(row.id, row.name) for row in rows]


def _list_page(
    request: Request, session: Session, user: User, view: FormView, status_code: int = 200
) -> HTMLResponse:
    page = service.list_quotes(session=session, user=user, limit=200)
    return render(
        request,
        "quotes/list.html",
        {
            "section": "quotes",
            "quotes": page.items,
            "total": page.total,
            "badges": STATE_BADGES,
            "buildings": _buildings(session, user),
            "form": view,
            "can_estimate": role_at_least(user.role_enum, Role.ESTIMATOR),
        },
        status_code=status_code,
    )


@router.get("/quotes", response_class=HTMLResponse)
def quotes_page(
    request: Request, session: SessionDep, user: SurveyorUser, building: str = ""
) -> HTMLResponse:
    view = forms.blank_form(NewQuoteForm, building_id=building)
    return _list_page(request, session, user, view)


@router.post("/quotes/new")
def create_quote(
    request: Request, session: SessionDep, user: EstimatorUser, form: FormData = FormDep
) -> Response:
    body, view = forms.read_form(NewQuoteForm, form)
    if body is None:
        return _list_page(request, session, user, view, 422)
    try:
        quote, _ = service.create_quote(
            session=session,
            user=user,
            building_id=body.building_id,
            body=schemas.QuoteCreate(id=body.id),
        )
    except InvalidInput as exc:
        session.rollback()
        view.errors["building_id"] = forms.sentence(exc.message)
        return _list_page(request, session, user, view, 422)
    return _redirect(f"/quotes/{quote.id}")


def _settings_form(read: schemas.QuoteRead) -> FormView:
    values = {name: forms.shown(getattr(read, name)) for name in SETTINGS_LABELS}
    return FormView(values=values, record_id=read.id, version=read.version)


def _builder(
    request: Request,
    session: Session,
    user: User,
    quote_id: str,
    *,
    status_code: int = 200,
    settings: FormView | None = None,
    new_line: FormView | None = None,
    line_forms: dict[str, FormView] | None = None,
    override_forms: dict[str, FormView] | None = None,
    issue_form: FormView | None = None,
    notice: str = "",
) -> HTMLResponse:
    quote = service.get_quote(session=session, user=user, quote_id=quote_id)
    read = service.read_quote(session=session, user=user, quote=quote)
    editable = read.state == QuoteState.DRAFT and role_at_least(user.role_enum, Role.ESTIMATOR)
    lines = {
        line.id: FormView(
            values={
                "description": line.description,
                "quantity": service.plain(line.quantity),
                "unit": line.unit,
                "unit_price": forms.shown(line.unit_price),
                "override_reason": line.override_reason,
            },
            record_id=line.id,
            version=read.version,
        )
        for line in read.lines
    }
    lines.update(line_forms or {})
    return render(
        request,
        "quotes/quote.html",
        {
            "section": "quotes",
            "quote": read,
            "badge": STATE_BADGES.get(read.state, "none"),
            "editable": editable,
            "settings": settings or _settings_form(read),
            "labels": SETTINGS_LABELS,
            "new_line": new_line
            or forms.blank_form(schemas.LineCreate, version=read.version, unit="ea"),
            "line_forms": lines,
            "override_forms": override_forms or {},
            "blank_override": FormView(values={}, record_id="", version=read.version),
            "actions": [
                (state, STATE_ACTIONS[state])
                for state in read.allowed_transitions
                if state != QuoteState.ISSUED
            ],
            "can_issue": QuoteState.ISSUED in read.allowed_transitions,
            "issue_form": issue_form or forms.blank_form(workorder_schemas.WorkOrderIssue),
            "kinds": [(kind, kind) for kind in ("manual", "material", "labour", "sundry")],
            "notice": notice,
            "percents": {
                "markup": service.plain(read.markup_pct),
                "discount": service.plain(read.discount_pct),
                "tax": service.plain(read.tax_pct),
            },
            "quantities": {line.id: service.plain(line.quantity) for line in read.lines},
        },
        status_code=status_code,
    )


@router.get("/quotes/{quote_id}", response_class=HTMLResponse)
def quote_page(
    request: Request, quote_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    return _builder(request, session, user, quote_id)


def _refused(exc: Exception) -> tuple[int, str]:
    if isinstance(exc, Conflict):
        return 409, exc.message
    if isinstance(exc, Forbidden):
        return 403, exc.message
    return 422, ""


def _apply(
    request: Request,
    session: Session,
    user: User,
    quote_id: str,
    view: FormView,
    action: Callable[[], object],
    shown_as: Callable[[FormView], dict[str, Any]],
    *,
    field: str | None = None,
    then: str = "",
) -> Response:
    """Run a change; on a refusal show the builder again with the form as typed.

    ``shown_as`` says where the form goes back in the builder; ``field`` names
    the field an InvalidInput is shown beside when the service names another.
    """
    try:
        action()
    except (Conflict, Forbidden, InvalidInput) as exc:
        session.rollback()
        status_code, message = _refused(exc)
        if isinstance(exc, InvalidInput):
            view.errors[field or exc.field] = forms.sentence(exc.message)
        if isinstance(exc, Conflict):
            view = forms.show_conflict(view, exc)
        return _builder(
            request,
            session,
            user,
            quote_id,
            status_code=status_code,
            notice=message,
            **shown_as(view),
        )
    return _redirect(f"/quotes/{quote_id}{then}")


@router.post("/quotes/{quote_id}/settings")
def update_settings(
    request: Request,
    quote_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_quote(session=session, user=user, quote_id=quote_id)
    body, view = forms.read_form(schemas.QuoteSettings, form)
    if body is None:
        return _builder(request, session, user, quote_id, status_code=422, settings=view)
    return _apply(
        request,
        session,
        user,
        quote_id,
        view,
        lambda: service.update_settings(session=session, user=user, quote_id=quote_id, body=body),
        lambda shown: {"settings": shown},
    )


@router.post("/quotes/{quote_id}/lines")
def add_line(
    request: Request,
    quote_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_quote(session=session, user=user, quote_id=quote_id)
    body, view = forms.read_form(schemas.LineCreate, form)
    if body is None:
        return _builder(request, session, user, quote_id, status_code=422, new_line=view)
    return _apply(
        request,
        session,
        user,
        quote_id,
        view,
        lambda: service.add_line(session=session, user=user, quote_id=quote_id, body=body),
        lambda shown: {"new_line": shown},
        then="#lines",
    )


@router.post("/quotes/{quote_id}/lines/{line_id}")
def update_line(
    request: Request,
    quote_id: str,
    line_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_quote(session=session, user=user, quote_id=quote_id)
    body, view = forms.read_form(schemas.LineUpdate, form)
    view.record_id = line_id
    if body is None:
        return _builder(
            request, session, user, quote_id, status_code=422, line_forms={line_id: view}
        )
    return _apply(
        request,
        session,
        user,
        quote_id,
        view,
        lambda: service.update_line(
            session=session, user=user, quote_id=quote_id, line_id=line_id, body=body
        ),
        lambda shown: {"line_forms": {line_id: shown}},
        then=f"#line-{line_id}",
    )


@router.post("/quotes/{quote_id}/lines/{line_id}/delete")
def delete_line(
    request: Request,
    quote_id: str,
    line_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    version = str(form.get("version") or "")
    try:
        service.delete_line(
            session=session,
            user=user,
            quote_id=quote_id,
            line_id=line_id,
            version=int(version) if version.isdigit() else None,
        )
    except Conflict as exc:
        session.rollback()
        return _builder(request, session, user, quote_id, status_code=409, notice=exc.message)
    return _redirect(f"/quotes/{quote_id}#lines")


@router.post("/quotes/{quote_id}/overrides")
def add_override(
    request: Request,
    quote_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_quote(session=session, user=user, quote_id=quote_id)
    body, view = forms.read_form(schemas.OverrideCreate, form)
    fixture_id = str(form.get("fixture_id") or "")
    if body is None:
        return _builder(
            request, session, user, quote_id, status_code=422, override_forms={fixture_id: view}
        )
    return _apply(
        request,
        session,
        user,
        quote_id,
        view,
        lambda: service.add_override(session=session, user=user, quote_id=quote_id, body=body),
        lambda shown: {"override_forms": {fixture_id: shown}},
        field="reason",
    )


@router.post("/quotes/{quote_id}/transitions")
def transition(
    request: Request,
    quote_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    to = str(form.get("to") or "")
    version = str(form.get("version") or "")
    try:
        schemas.Transition.model_validate({"to": to})
        service.transition(
            session=session,
            user=user,
            quote_id=quote_id,
            to=to,
            version=int(version) if version.isdigit() else None,
        )
    except (Conflict, Forbidden, InvalidInput) as exc:
        session.rollback()
        status_code, message = _refused(exc)
        if isinstance(exc, InvalidInput):
            message = f"It cannot be {to} yet: {exc.message}."
        return _builder(request, session, user, quote_id, status_code=status_code, notice=message)
    except ValueError:
        return _builder(
            request,
            session,
            user,
            quote_id,
            status_code=422,
            notice="That is not a state a quote can move to.",
        )
    return _redirect(f"/quotes/{quote_id}")


@router.post("/quotes/{quote_id}/work-order")
def issue_work_order(
    request: Request,
    quote_id: str,
    session: SessionDep,
    user: SupervisorUser,
    form: FormData = FormDep,
) -> Response:
    service.get_quote(session=session, user=user, quote_id=quote_id)
    body, view = forms.read_form(workorder_schemas.WorkOrderIssue, form)
    if body is None:
        return _builder(request, session, user, quote_id, status_code=422, issue_form=view)
    try:
        order, _ = workorders.issue(session=session, user=user, quote_id=quote_id, body=body)
    except (Conflict, InvalidInput) as exc:
        session.rollback()
        status_code, message = _refused(exc)
        return _builder(
            request,
            session,
            user,
            quote_id,
            status_code=status_code,
            issue_form=view,
            notice=message or str(exc),
        )
    return _redirect(f"/work-orders/{order.id}")
