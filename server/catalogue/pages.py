"""Catalogue pages: ballast types, emergency modules and battery packs.

The forms validate with the API's create schemas (:mod:`server.catalogue.schemas`)
so a page and the API accept and refuse the same entries. Anyone signed in may
read the catalogue; an estimator or above changes it.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from decimal import Decimal
from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from sqlalchemy import func, or_, select
from sqlalchemy.orm import Session
from starlette.datastructures import FormData

from server.accounts.models import Role, User, role_at_least
from server.catalogue import api as catalogue_api
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common import crud, forms
from server.common.api import Resource
from server.common.errors import Conflict
from server.common.forms import FormDep, FormView
from server.common.labels import choices, label
from server.common.models import OrgOwned
from server.deps import EstimatorUser, SessionDep, SurveyorUser
from server.engineering.profiles import AreaKind, Evaluation
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    LampType,
    Waveform,
)
from server.proposals.models import Proposal
from server.templating import render

router = APIRouter(include_in_schema=False)

BALLAST_LABELS = {
    "name": "Name",
    "technology": "Technology",
    "lamp_type": "Lamp type",
    "lamp_count": "Lamps it runs",
    "notes": "Notes",
}
MODULE_LABELS = {
    "name": "Name",
    "battery_w": "Battery-side power",
    "battery_a": "Battery-side current",
    "output_w": "Power to the lamp",
    "declared_eblf": "Declared EBLF",
    "chemistry": "Pack chemistry it charges",
    "cells": "Cells it charges",
    "cutoff_v": "Cut-off voltage",
    "charge_a": "Charge current",
    "rated_min": "Rated duration",
    "lamp_types": "Lamp types it is listed for",
    "lamp_w_min": "Lowest lamp watts",
    "lamp_w_max": "Highest lamp watts",
    "ballasts": "Ballasts it is listed for",
    "changeover": "Changeover",
    "max_lamps": "Lamps it can run",
    "waveform": "Output to the lamp",
    "self_test": "Self-test built in",
    "price": "Price",
    "labour_h": "Fitting time",
    "notes": "Notes",
}
PACK_LABELS = {
    "name": "Name",
    "chemistry": "Chemistry",
    "cells": "Cells",
    "nominal_v": "Nominal voltage",
    "capacity_ah": "Rated capacity",
    "rated_hours": "Capacity rated at",
    "peukert_k": "Peukert exponent",
    "max_c": "Marked maximum ambient",
    "design_life_years": "Design life",
    "new_internal_ohm": "Internal resistance when new",
    "price": "Price",
    "notes": "Notes",
}
PROFILE_LABELS = {
    "name": "Name",
    "area_kind": "Kind of area",
    "evaluation": "Where the levels are checked",
    "duration_min": "Required duration",
    "min_lux": "Minimum illuminance",
    "avg_lux": "Minimum average",
    "end_min_lux": "Minimum at end of duration",
    "end_avg_lux": "Average at end of duration",
    "max_min_ratio": "Largest max:min ratio",
    "monthly_test_days": "Function test every",
    "annual_test_days": "Duration test every",
    "source": "Source (code, clause, client's specification)",
}


def _money(value: Decimal) -> str:
    return f"{value:,.2f}"


def _ballast_cells(item: Any) -> list[str]:
    return [
        label(item.technology, BallastTech),
        label(item.lamp_type, LampType),
        str(item.lamp_count),
    ]


def _module_cells(item: Any) -> list[str]:
    battery = f"{item.battery_w:g} W" if item.battery_w is not None else f"{item.battery_a:g} A"
    lamps = ", ".join(label(value, LampType) for value in item.lamp_types)
    return [
        f"{battery}, {label(item.chemistry, Chemistry)} {item.cells} cells",
        f"{lamps}; {item.lamp_w_min:g}\u2013{item.lamp_w_max:g} W",
        label(item.changeover, Changeover),
        f"{item.rated_min:g} min",
        _money(item.price),
    ]


def _pack_cells(item: Any) -> list[str]:
    return [
        f"{label(item.chemistry, Chemistry)}, {item.cells} cells",
        f"{item.capacity_ah:g} Ah",
        f"{item.max_c:g} \u00b0C",
        _money(item.price),
    ]


def _profile_cells(item: Any) -> list[str]:
    return [
        label(item.area_kind, AreaKind),
        f"{item.duration_min:g} min",
        f"{item.min_lux:g} lx",
        f"{item.max_min_ratio:g}:1",
    ]


@dataclass(frozen=True, slots=True)
class Kind:
    """One list of the catalogue and how its pages show it."""

    slug: str
    resource: Resource
    title: str
    singular: str
    template: str
    labels: dict[str, str]
    headings: tuple[str, ...]
    cells: Callable[[Any], list[str]]


KINDS: dict[str, Kind] = {
    kind.slug: kind
    for kind in (
        Kind(
            "ballast-types",
            catalogue_api.BALLAST_TYPES,
            "Ballast types",
            "ballast type",
            "catalogue/ballast_type_form.html",
            BALLAST_LABELS,
            ("Technology", "Lamp type", "Lamps"),
            _ballast_cells,
        ),
        Kind(
            "modules",
            catalogue_api.MODULES,
            "Emergency modules",
            "module",
            "catalogue/module_form.html",
            MODULE_LABELS,
            ("Battery side", "Lamps", "Changeover", "Rated", "Price"),
            _module_cells,
        ),
        Kind(
            "packs",
            catalogue_api.PACKS,
            "Battery packs",
            "pack",
            "catalogue/pack_form.html",
            PACK_LABELS,
            ("Chemistry", "Capacity", "Max ambient", "Price"),
            _pack_cells,
        ),
        Kind(
            "profiles",
            catalogue_api.PROFILES,
            "Requirement profiles of our own",
            "requirement profile",
            "catalogue/profile_form.html",
            PROFILE_LABELS,
            ("Kind of area", "Duration", "Minimum", "Max:min"),
            _profile_cells,
        ),
    )
}
MODULE_DEFAULTS = {
    "chemistry": Chemistry.NICD,
    "cells": 4,
    "lamp_types": [LampType.T8, LampType.T5],
    "ballasts": [tech for tech in BallastTech if not tech.is_magnetic],
}
PACK_DEFAULTS = {"chemistry": Chemistry.NICD, "cells": 4}


def _choices() -> dict[str, list[tuple[str, str]]]:
    return {
        "lamp_types": choices(LampType),
        "ballasts": choices(BallastTech),
        "chemistries": choices(Chemistry),
        "changeovers": choices(Changeover),
        "waveforms": choices(Waveform),
        "counts": [(str(n), str(n)) for n in range(1, 9)],
        "module_lamps": [(str(n), str(n)) for n in range(1, 5)],
        "area_kinds": choices(AreaKind),
        "evaluations": choices(Evaluation),
    }


def _can_edit(user: User) -> bool:
    return role_at_least(user.role_enum, Role.ESTIMATOR)


def _used_by(session: Session, record: OrgOwned) -> int:
    """How many proposals name this module or pack (a ballast type is named by none)."""
    if not isinstance(record, EmergencyModule | BatteryPack):
        return 0
    return (
        session.scalar(
            select(func.count())
            .select_from(Proposal)
            .where(
                Proposal.org_id == record.org_id,
                or_(Proposal.module_id == record.id, Proposal.pack_id == record.id),
            )
        )
        or 0
    )


@router.get("/catalogue", response_class=HTMLResponse)
def catalogue_page(request: Request, session: SessionDep, user: SurveyorUser) -> HTMLResponse:
    lists = []
    for kind in KINDS.values():
        _, total = crud.list_owned(session, kind.resource.model, org_id=user.org_id, limit=1)
        lists.append({"kind": kind, "total": total})
    return render(
        request,
        "catalogue/index.html",
        {"section": "catalogue", "lists": lists, "can_edit": _can_edit(user)},
    )


def _form_page(
    request: Request,
    kind: Kind,
    view: FormView,
    *,
    record: OrgOwned | None = None,
    delete_error: str = "",
    status_code: int | None = None,
) -> HTMLResponse:
    if status_code is None:
        status_code = 422 if view.has_errors else (409 if view.notice else 200)
    return render(
        request,
        kind.template,
        {
            "section": "catalogue",
            "kind": kind,
            "form": view,
            "record": record,
            "labels": kind.labels,
            "choices": _choices(),
            "delete_error": delete_error,
        },
        status_code=status_code,
    )


def _blank(kind: Kind) -> FormView:
    defaults: dict[str, Any] = {}
    if kind.slug == "modules":
        defaults = MODULE_DEFAULTS
    elif kind.slug == "packs":
        defaults = PACK_DEFAULTS
    return forms.blank_form(kind.resource.create, **defaults)


def _list(request: Request, kind: Kind, session: Session, user: User, removed: bool) -> Response:
    model: Any = kind.resource.model
    items = session.scalars(
        select(model).where(model.org_id == user.org_id).order_by(model.name, model.id)
    ).all()
    return render(
        request,
        "catalogue/list.html",
        {
            "section": "catalogue",
            "kind": kind,
            "rows": [{"item": item, "cells": kind.cells(item)} for item in items],
            "can_edit": _can_edit(user),
            "removed": removed,
        },
    )


def _create(request: Request, kind: Kind, session: Session, user: User, form: FormData) -> Response:
    body, view = forms.read_form(kind.resource.create, form)
    if body is None:
        return _form_page(request, kind, view)
    try:
        record, _ = forms.create_from_form(session, kind.resource, user=user, body=body)
    except Conflict as exc:
        session.rollback()
        view = forms.show_id_taken(view, exc)
        return _form_page(request, kind, view)
    return RedirectResponse(f"/catalogue/{kind.slug}#item-{record.id}", status_code=303)


def _edit(request: Request, kind: Kind, session: Session, user: User, record_id: str) -> Response:
    record = crud.get_owned(session, kind.resource.model, org_id=user.org_id, record_id=record_id)
    view = forms.record_form(kind.resource.create, record)
    return _form_page(request, kind, view, record=record)


def _update(
    request: Request, kind: Kind, session: Session, user: User, record_id: str, form: FormData
) -> Response:
    record = crud.get_owned(session, kind.resource.model, org_id=user.org_id, record_id=record_id)
    body, view = forms.read_form(kind.resource.create, form)
    if body is None:
        return _form_page(request, kind, view, record=record)
    try:
        forms.update_from_form(
            session, kind.resource, record, user=user, body=body, version=view.version
        )
    except Conflict as exc:
        session.rollback()
        return _form_page(request, kind, forms.show_conflict(view, exc), record=record)
    return RedirectResponse(f"/catalogue/{kind.slug}#item-{record.id}", status_code=303)


def _delete(
    request: Request, kind: Kind, session: Session, user: User, record_id: str, form: FormData
) -> Response:
    record = crud.get_owned(session, kind.resource.model, org_id=user.org_id, record_id=record_id)
    problem = ""
    if str(form.get("version") or "") != str(record.version):
        problem = (
            f"Someone else changed this {kind.singular} (now version {record.version}); it was "
            "not deleted. Check it and delete again if it should go."
        )
    elif used := _used_by(session, record):
        problem = (
            f"{used} proposal(s) use this {kind.singular}, so it stays. Choose another "
            f"{kind.singular} for those fixtures first."
        )
    if problem:
        view = forms.record_form(kind.resource.create, record)
        return _form_page(request, kind, view, record=record, delete_error=problem, status_code=409)
    crud.delete_owned(session, record, user=user)
    return RedirectResponse(f"/catalogue/{kind.slug}?removed=1", status_code=303)


def _add_routes(kind: Kind) -> None:
    """The list, new, edit and delete pages of one catalogue list, at its own paths.

    Reading needs any role; the forms and every change an estimator or above.
    """
    base = f"/catalogue/{kind.slug}"

    def list_page(
        request: Request, session: SessionDep, user: SurveyorUser, removed: bool = False
    ) -> Response:
        return _list(request, kind, session, user, removed)

    def new_page(request: Request, user: EstimatorUser) -> Response:
        return _form_page(request, kind, _blank(kind))

    def create(
        request: Request, session: SessionDep, user: EstimatorUser, form: FormData = FormDep
    ) -> Response:
        return _create(request, kind, session, user, form)

    def edit_page(
        request: Request, record_id: str, session: SessionDep, user: EstimatorUser
    ) -> Response:
        return _edit(request, kind, session, user, record_id)

    def update(
        request: Request,
        record_id: str,
        session: SessionDep,
        user: EstimatorUser,
        form: FormData = FormDep,
    ) -> Response:
        return _update(request, kind, session, user, record_id, form)

    def delete(
        request: Request,
        record_id: str,
        session: SessionDep,
        user: EstimatorUser,
        form: FormData = FormDep,
    ) -> Response:
        return _delete(request, kind, session, user, record_id, form)

    name = kind.slug.replace("-", "_")
    for path, method, endpoint in (
        (base, "GET", list_page),
        (base + "/new", "GET", new_page),
        (base + "/new", "POST", create),
        (base + "/{record_id}", "GET", edit_page),
        (base + "/{record_id}", "POST", update),
        (base + "/{record_id}/delete", "POST", delete),
    ):
        router.add_api_route(
            path,
            endpoint,
            methods=[method],
            name=f"catalogue_{name}_{endpoint.__name__}",
            response_class=HTMLResponse,
        )


for _kind in KINDS.values():
    _add_routes(_kind)
