"""The survey pages: buildings, areas, the fixture list and the fixture form.

Forms validate with the API's create schemas (:mod:`server.sites.schemas`),
carry a client UUID (create) or the version read (edit), and come back with
the user's input and a message beside each wrong field (422), or with both
values side by side after someone else saved first (409).
"""

from __future__ import annotations

import uuid
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from sqlalchemy import select
from sqlalchemy.orm import Session
from starlette.datastructures import FormData, UploadFile

from server.accounts.models import Role, User, role_at_least
from server.common import crud, forms
from server.common.errors import Conflict, InvalidInput
from server.common.forms import FormDep, FormView
from server.common.labels import choices, fixture_situation, fixture_summary, label
from server.deps import SessionDep, SettingsDep, SurveyorUser
from server.engineering.profiles import AreaKind
from server.engineering.vocabulary import BallastTech, Chemistry, DateCodeFormat, LampType, Wiring
from server.proposals import pages as proposal_pages
from server.proposals import service as proposals
from server.proposals.models import Proposal
from server.sites import api as sites_api
from server.sites import service
from server.sites.models import Area, Building, Fixture
from server.sites.schemas import AreaCreate, BuildingCreate, FixtureCreate
from server.templating import render

router = APIRouter(include_in_schema=False)

BUILDING_LABELS = {
    "name": "Building name",
    "address": "Address",
    "client_name": "Client",
    "client_contact": "Client contact",
    "notes": "Notes",
}
AREA_LABELS = {
    "name": "Area name",
    "floor": "Floor or level",
    "kind": "Kind of area",
    "length_m": "Length",
    "width_m": "Width",
    "mounting_height_m": "Mounting height",
    "required_duration_min": "Required duration",
    "profile_id": "Requirement profile",
    "survey_complete": "Survey of this area is complete",
    "notes": "Notes",
}
FIXTURE_LABELS = {
    "tag": "Tag",
    "location": "Where it is",
    "position_m": "Position along the route",
    "x_m": "Plan x",
    "y_m": "Plan y",
    "mounting_height_m": "Mounting height",
    "lamp_type": "Lamp type",
    "lamp_w": "Lamp watts",
    "lamp_length_mm": "Lamp length",
    "lamp_count": "Lamps in the fixture",
    "lamps_to_back_up": "Lamps to run in emergency",
    "ballast": "Ballast",
    "wiring": "Lamp wiring",
    "unswitched_supply": "Permanent unswitched supply at the fixture",
    "ambient_c": "Ceiling temperature",
    "accessible": "Fixture accessible",
    "existing_kit": "Emergency kit already fitted",
    "pack_chemistry": "Pack chemistry",
    "pack_cells": "Pack cells",
    "pack_capacity_ah": "Pack capacity",
    "pack_date_code": "Pack date code",
    "pack_date_format": "Date code format",
    "open_circuit_v": "Open-circuit voltage",
    "loaded_v": "Voltage under load",
    "load_a": "Test load current",
    "load_ohm": "Test load resistor",
    "commissioned_on": "Commissioned on",
    "notes": "Notes",
    "module_id": "Module",
    "pack_id": "Pack",
    "profile_id": "Requirement profile",
    "required_duration_min": "Area's required duration",
}
FIXTURE_MESSAGES = {
    ("pack_date_code", "string_pattern_mismatch"): "Use the four digits on the pack, like 1834.",
}
FIXTURE_DEFAULTS = {
    "lamp_type": LampType.T8,
    "ballast": BallastTech.ELECTRONIC_PROGRAMMED_START,
    "wiring": Wiring.SINGLE,
}
COUNTS = [(str(n), str(n)) for n in range(1, 9)]


def _choices() -> dict[str, list[tuple[str, str]]]:
    return {
        "lamp_types": choices(LampType),
        "ballasts": choices(BallastTech),
        "wirings": choices(Wiring),
        "chemistries": choices(Chemistry),
        "date_formats": choices(DateCodeFormat),
        "kinds": choices(AreaKind),
        "counts": COUNTS,
    }


def _can_estimate(user: User) -> bool:
    return role_at_least(user.role_enum, Role.ESTIMATOR)


def _redirect(path: str) -> RedirectResponse:
    return RedirectResponse(path, status_code=303)


def _status_of(view: FormView) -> int:
    return 422 if view.has_errors else (409 if view.notice else 200)


# ---- buildings ----


@router.get("/buildings", response_class=HTMLResponse)
def buildings_page(request: Request, session: SessionDep, user: SurveyorUser) -> HTMLResponse:
    summaries = service.list_buildings(session=session, org_id=user.org_id)
    return render(request, "sites/buildings.html", {"section": "sites", "buildings": summaries})


def _building_form(
    request: Request, view: FormView, *, building: Building | None = None
) -> HTMLResponse:
    return render(
        request,
        "sites/building_form.html",
        {"section": "sites", "form": view, "building": building, "labels": BUILDING_LABELS},
        status_code=_status_of(view),
    )


@router.get("/buildings/new", response_class=HTMLResponse)
def new_building_page(request: Request, user: SurveyorUser) -> HTMLResponse:
    return _building_form(request, forms.blank_form(BuildingCreate))


@router.post("/buildings/new")
def create_building(
    request: Request, session: SessionDep, user: SurveyorUser, form: FormData = FormDep
) -> Response:
    body, view = forms.read_form(BuildingCreate, form)
    if body is None:
        return _building_form(request, view)
    try:
        record, _ = forms.create_from_form(session, sites_api.BUILDINGS, user=user, body=body)
    except Conflict as exc:
        session.rollback()
        view = forms.show_id_taken(view, exc)
        return _building_form(request, view)
    return _redirect(f"/buildings/{record.id}")


@router.get("/buildings/{building_id}", response_class=HTMLResponse)
def building_page(
    request: Request, building_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=building_id)
    areas = service.building_areas(session=session, org_id=user.org_id, building_id=building.id)
    rows = [
        {
            "area": summary.area,
            "kind": label(summary.area.kind, AreaKind),
            "fixtures": summary.fixture_count,
        }
        for summary in areas
    ]
    return render(
        request,
        "sites/building.html",
        {
            "section": "sites",
            "building": building,
            "areas": rows,
            "can_estimate": _can_estimate(user),
        },
    )


@router.get("/buildings/{building_id}/edit", response_class=HTMLResponse)
def edit_building_page(
    request: Request, building_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=building_id)
    return _building_form(request, forms.record_form(BuildingCreate, building), building=building)


@router.post("/buildings/{building_id}/edit")
def update_building(
    request: Request,
    building_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=building_id)
    body, view = forms.read_form(BuildingCreate, form)
    if body is None:
        return _building_form(request, view, building=building)
    try:
        forms.update_from_form(
            session, sites_api.BUILDINGS, building, user=user, body=body, version=view.version
        )
    except Conflict as exc:
        session.rollback()
        return _building_form(request, forms.show_conflict(view, exc), building=building)
    return _redirect(f"/buildings/{building.id}")


# ---- areas ----


def _area_form(
    request: Request,
    session: Session,
    user: User,
    view: FormView,
    *,
    building: Building,
    area: Area | None = None,
) -> HTMLResponse:
    return render(
        request,
        "sites/area_form.html",
        {
            "section": "sites",
            "form": view,
            "building": building,
            "area": area,
            "labels": AREA_LABELS,
            "choices": _choices(),
            "profiles": service.profile_choices(session=session, org_id=user.org_id),
        },
        status_code=_status_of(view),
    )


def _read_area(session: Session, user: User, form: FormData) -> tuple[AreaCreate | None, FormView]:
    body, view = forms.read_form(AreaCreate, form)
    if body is None:
        return None, view
    try:
        service.check_profile_id(session=session, org_id=user.org_id, profile_id=body.profile_id)
    except InvalidInput as exc:
        view.errors[exc.field] = forms.sentence(exc.message)
        return None, view
    return body, view


@router.get("/buildings/{building_id}/areas/new", response_class=HTMLResponse)
def new_area_page(
    request: Request, building_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=building_id)
    return _area_form(request, session, user, forms.blank_form(AreaCreate), building=building)


@router.post("/buildings/{building_id}/areas/new")
def create_area(
    request: Request,
    building_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=building_id)
    body, view = _read_area(session, user, form)
    if body is None:
        return _area_form(request, session, user, view, building=building)
    try:
        record, _ = forms.create_from_form(
            session, sites_api.AREAS, user=user, body=body, parent_id=building.id
        )
    except Conflict as exc:
        session.rollback()
        view = forms.show_id_taken(view, exc)
        return _area_form(request, session, user, view, building=building)
    return _redirect(f"/areas/{record.id}")


@router.get("/areas/{area_id}/edit", response_class=HTMLResponse)
def edit_area_page(
    request: Request, area_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=area.building_id)
    view = forms.record_form(AreaCreate, area)
    return _area_form(request, session, user, view, building=building, area=area)


@router.post("/areas/{area_id}/edit")
def update_area(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=area.building_id)
    body, view = _read_area(session, user, form)
    if body is None:
        return _area_form(request, session, user, view, building=building, area=area)
    try:
        forms.update_from_form(
            session, sites_api.AREAS, area, user=user, body=body, version=view.version
        )
    except Conflict as exc:
        session.rollback()
        view = forms.show_conflict(view, exc)
        return _area_form(request, session, user, view, building=building, area=area)
    return _redirect(f"/areas/{area.id}")


# ---- the fixture list of an area ----


@dataclass(frozen=True, slots=True)
class FixtureRow:
    id: str
    tag: str
    summary: str
    situation: str
    verdict: str
    verdict_label: str
    highlight: bool


def _verdicts(session: Session, org_id: str, area_id: str) -> dict[str, str | None]:
    rows = session.execute(
        select(Proposal.fixture_id, Proposal.verdict)
        .join(Fixture, Fixture.id == Proposal.fixture_id)
        .where(Proposal.org_id == org_id, Fixture.area_id == area_id)
    ).all()
    return {fixture_id: verdict for fixture_id, verdict in rows}


def _area_page(
    request: Request,
    session: Session,
    user: User,
    area: Area,
    *,
    highlight: set[str] | None = None,
    message: str = "",
    copy_count: str = "5",
    copy_error: str = "",
    status_code: int = 200,
) -> HTMLResponse:
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=area.building_id)
    fixtures = service.area_fixtures(session=session, org_id=user.org_id, area_id=area.id)
    verdicts = _verdicts(session, user.org_id, area.id)
    marked = highlight or set()
    rows = []
    for fixture in fixtures:
        verdict = verdicts.get(fixture.id) or "none"
        rows.append(
            FixtureRow(
                id=fixture.id,
                tag=fixture.tag,
                summary=fixture_summary(fixture),
                situation=fixture_situation(fixture),
                verdict=verdict,
                verdict_label="No proposal" if verdict == "none" else label(verdict),
                highlight=fixture.id in marked,
            )
        )
    last = fixtures[-1] if fixtures else None
    taken = {fixture.tag for fixture in fixtures}
    return render(
        request,
        "sites/area.html",
        {
            "section": "sites",
            "area": area,
            "building": building,
            "kind": label(area.kind, AreaKind),
            "rows": rows,
            "last": last,
            "next_tag": service.next_tag(last.tag, taken) if last else "T-01",
            "batch_id": str(uuid.uuid4()),
            "message": message,
            "copy_count": copy_count,
            "copy_error": copy_error,
            "max_copies": service.MAX_COPIES,
            "can_estimate": _can_estimate(user),
        },
        status_code=status_code,
    )


@router.get("/areas/{area_id}", response_class=HTMLResponse)
def area_page(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    saved: str = "",
    batch: str = "",
    n: int = 0,
) -> HTMLResponse:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    highlight: set[str] = set()
    message = ""
    if saved:
        fixture = session.get(Fixture, saved)
        if fixture is not None and fixture.org_id == user.org_id:
            highlight, message = {fixture.id}, f"Fixture {fixture.tag} saved."
    elif batch and 1 <= n <= service.MAX_COPIES:
        made = service.copies_of(session=session, org_id=user.org_id, batch_id=batch, count=n)
        if made:
            highlight = {fixture.id for fixture in made}
            message = (
                f"Fixture {made[0].tag} added."
                if len(made) == 1
                else f"{len(made)} fixtures added: {made[0].tag} to {made[-1].tag}."
            )
    return _area_page(request, session, user, area, highlight=highlight, message=message)


@router.post("/areas/{area_id}/fixtures/copies")
def copy_fixtures(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    count_text = str(form.get("count") or "1").strip()
    batch_id = str(form.get("batch_id") or "")
    source_id = str(form.get("source_id") or "") or None
    if not count_text.isdigit():
        return _area_page(
            request,
            session,
            user,
            area,
            copy_count=count_text,
            copy_error="Enter a whole number.",
            status_code=422,
        )
    try:
        made = service.add_copies(
            session=session,
            user=user,
            area_id=area.id,
            batch_id=batch_id,
            count=int(count_text),
            source_id=source_id,
        )
    except (InvalidInput, Conflict) as exc:
        session.rollback()
        return _area_page(
            request,
            session,
            user,
            area,
            copy_count=count_text,
            copy_error=forms.sentence(exc.message),
            status_code=422,
        )
    return _redirect(f"/areas/{area.id}?batch={batch_id}&n={len(made)}")


# ---- the fixture form ----


def _panel(
    session: Session,
    user: User,
    area: Area,
    body: Any,
    problems: Mapping[str, str],
    form: FormData | None,
    *,
    fixture: Fixture | None = None,
) -> dict[str, Any]:
    module_id = str(form.get("check_module_id") or "") if form is not None else ""
    pack_id = str(form.get("check_pack_id") or "") if form is not None else ""
    if form is None and fixture is not None:
        proposal = proposals.proposal_of(session=session, org_id=user.org_id, fixture_id=fixture.id)
        if proposal is not None:
            module_id, pack_id = proposal.module_id, proposal.pack_id
    return proposal_pages.findings_panel(
        session=session,
        user=user,
        area=area,
        fixture=body,
        problems=problems,
        field_labels=FIXTURE_LABELS,
        module_id=module_id,
        pack_id=pack_id,
    )


def _fixture_form(
    request: Request,
    session: Session,
    user: User,
    view: FormView,
    *,
    area: Area,
    body: Any,
    form: FormData | None = None,
    fixture: Fixture | None = None,
    photo_error: str = "",
    problems: Mapping[str, str] | None = None,
    status_code: int | None = None,
) -> HTMLResponse:
    """The fixture form beside its findings; ``problems`` names what keeps the checks from
    running (the form's own errors unless given)."""
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=area.building_id)
    photos = (
        service.photos_of(session=session, org_id=user.org_id, fixture_id=fixture.id)
        if fixture is not None
        else []
    )
    return render(
        request,
        "sites/fixture_form.html",
        {
            "section": "sites",
            "form": view,
            "area": area,
            "building": building,
            "fixture": fixture,
            "labels": FIXTURE_LABELS,
            "choices": _choices(),
            "panel": _panel(
                session, user, area, body, problems or view.errors, form, fixture=fixture
            ),
            "photos": photos,
            "photo_id": str(uuid.uuid4()),
            "photo_error": photo_error,
            "can_estimate": _can_estimate(user),
        },
        status_code=status_code if status_code is not None else _status_of(view),
    )


@router.get("/areas/{area_id}/fixtures/new", response_class=HTMLResponse)
def new_fixture_page(
    request: Request, area_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    tag = service.suggested_tag(session=session, org_id=user.org_id, area_id=area.id)
    view = forms.blank_form(FixtureCreate, tag=tag, **FIXTURE_DEFAULTS)
    # What the blank form still lacks before the checks can run (the lamp watts).
    _, unchecked = forms.read_form(FixtureCreate, FormData(list(view.values.items())))
    return _fixture_form(
        request, session, user, view, area=area, body=None, problems=unchecked.errors
    )


@router.post("/areas/{area_id}/fixtures/new")
def create_fixture(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    body, view = forms.read_form(FixtureCreate, form, messages=FIXTURE_MESSAGES)
    if body is None:
        return _fixture_form(request, session, user, view, area=area, body=None, form=form)
    try:
        record, _ = forms.create_from_form(
            session, sites_api.FIXTURES, user=user, body=body, parent_id=area.id
        )
    except Conflict as exc:
        session.rollback()
        view = forms.show_id_taken(view, exc)
        return _fixture_form(request, session, user, view, area=area, body=body, form=form)
    return _redirect(f"/areas/{area.id}?saved={record.id}")


@router.post("/areas/{area_id}/findings", response_class=HTMLResponse)
def findings_fragment(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> HTMLResponse:
    """The findings panel for the form as typed (htmx); nothing is saved."""
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    body, view = forms.read_form(FixtureCreate, form, messages=FIXTURE_MESSAGES)
    return render(
        request,
        "proposals/_findings_panel.html",
        {"panel": _panel(session, user, area, body, view.errors, form), "area": area},
    )


@router.get("/fixtures/{fixture_id}", response_class=HTMLResponse)
def fixture_page(
    request: Request, fixture_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    fixture = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=fixture_id)
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=fixture.area_id)
    view = forms.record_form(FixtureCreate, fixture)
    return _fixture_form(request, session, user, view, area=area, body=fixture, fixture=fixture)


@router.post("/fixtures/{fixture_id}")
def update_fixture(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=fixture_id)
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=fixture.area_id)
    body, view = forms.read_form(FixtureCreate, form, messages=FIXTURE_MESSAGES)
    if body is None:
        return _fixture_form(
            request, session, user, view, area=area, body=None, form=form, fixture=fixture
        )
    try:
        forms.update_from_form(
            session, sites_api.FIXTURES, fixture, user=user, body=body, version=view.version
        )
    except Conflict as exc:
        session.rollback()
        view = forms.show_conflict(view, exc)
        return _fixture_form(
            request, session, user, view, area=area, body=body, form=form, fixture=fixture
        )
    return _redirect(f"/areas/{area.id}?saved={fixture.id}")


@router.post("/fixtures/{fixture_id}/delete")
def delete_fixture(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=fixture_id)
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=fixture.area_id)
    version = str(form.get("version") or "")
    if version != str(fixture.version):
        view = forms.record_form(FixtureCreate, fixture)
        view.notice = (
            f"Someone else changed this fixture (now version {fixture.version}); it was not "
            "deleted. Check it below and delete again if it should go."
        )
        return _fixture_form(
            request,
            session,
            user,
            view,
            area=area,
            body=fixture,
            fixture=fixture,
            status_code=409,
        )
    crud.delete_owned(session, fixture, user=user)
    return _redirect(f"/areas/{area.id}")


# ---- photos ----


@router.post("/fixtures/{fixture_id}/photos")
def upload_photo(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    settings: SettingsDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=fixture_id)
    upload = form.get("photo")
    data = b""
    if isinstance(upload, UploadFile):
        with upload.file:
            # One byte more than allowed is enough to know it is too large.
            data = upload.file.read(settings.upload_max_bytes + 1)
    try:
        photo_id = str(uuid.UUID(str(form.get("photo_id") or "")))
    except ValueError:
        photo_id = str(uuid.uuid4())
    try:
        service.add_photo(
            session=session,
            user=user,
            fixture=fixture,
            data=data,
            caption=str(form.get("caption") or ""),
            photo_id=photo_id,
            max_bytes=settings.upload_max_bytes,
        )
    except (InvalidInput, Conflict) as exc:
        session.rollback()
        area = crud.get_owned(session, Area, org_id=user.org_id, record_id=fixture.area_id)
        view = forms.record_form(FixtureCreate, fixture)
        return _fixture_form(
            request,
            session,
            user,
            view,
            area=area,
            body=fixture,
            fixture=fixture,
            photo_error=forms.sentence(exc.message),
            status_code=422,
        )
    return _redirect(f"/fixtures/{fixture.id}#photos")


@router.get("/photos/{photo_id}")
def photo(photo_id: str, session: SessionDep, user: SurveyorUser) -> Response:
    stored = service.get_photo(session=session, org_id=user.org_id, photo_id=photo_id)
    return Response(
        content=stored.data,
        media_type=stored.content_type,
        headers={"Cache-Control": "private, max-age=86400"},
    )
