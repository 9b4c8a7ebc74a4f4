"""JSON API of the maintenance log, the calendar feed, the log book PDF and CSV.

Who may call what (the rule of each route is in its ``summary``):
- read (lists, condition, exports, the PDF): anyone signed in;
- record a test, import tests: a surveyor or above (technicians use the
  surveyor role);
- make or revoke a calendar link: a supervisor or above;
- the calendar feed itself: no sign-in, the secret token in the address is
  the key.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Annotated, Any

from fastapi import APIRouter, Query, Request, Response, status

from server.common.api import ERROR_RESPONSES
from server.common.errors import InvalidInput, NotFound
from server.deps import CurrentUser, SessionDep, SettingsDep, SupervisorUser, SurveyorUser
from server.maintenance import calendar, csvio, documents, schemas, service

router = APIRouter(tags=["maintenance"])
V1 = "/api/v1"

DueSoon = Annotated[
    int,
    Query(ge=0, le=365, description="Days ahead that count as due soon (default 7). [day]"),
]
Horizon = Annotated[
    int,
    Query(ge=0, le=3650, description="List packs due for replacement within this many days."),
]
CSV_MEDIA = "text/csv"


@router.post(
    V1 + "/fixtures/{fixture_id}/tests",
    response_model=schemas.TestRecordRead,
    status_code=status.HTTP_201_CREATED,
    summary="Record a test or a correction (surveyor or above; idempotent on the client's id)",
    responses={200: {"description": "The same test sent before."}, **ERROR_RESPONSES},
)
def record_test(
    fixture_id: str,
    body: schemas.TestRecordCreate,
    response: Response,
    session: SessionDep,
    user: SurveyorUser,
) -> schemas.TestRecordRead:
    record, created = service.record_test(
        session=session,
        org_id=user.org_id,
        user=user,
        fixture_id=fixture_id,
        data=body,
        on=service.today(),
    )
    if not created:
        response.status_code = status.HTTP_200_OK
    return record


@router.get(
    V1 + "/fixtures/{fixture_id}/tests",
    response_model=schemas.TestRecordList,
    summary="A fixture's test log, newest first, corrections marked (anyone signed in)",
    responses=ERROR_RESPONSES,
)
def list_tests(fixture_id: str, session: SessionDep, user: CurrentUser) -> schemas.TestRecordList:
    return service.list_tests(session=session, org_id=user.org_id, fixture_id=fixture_id)


@router.get(
    V1 + "/fixtures/{fixture_id}/schedule",
    response_model=list[schemas.NextTestRead],
    summary="The fixture's next function and duration tests (anyone signed in)",
    responses=ERROR_RESPONSES,
)
def fixture_schedule(
    fixture_id: str, session: SessionDep, user: CurrentUser, due_soon_days: DueSoon = 7
) -> list[schemas.NextTestRead]:
    log = service.fixture_log(session=session, org_id=user.org_id, fixture_id=fixture_id)
    planned = log.schedule(on=service.today(), due_soon_days=due_soon_days)
    return [service.next_test_read(item) for item in planned or ()]


@router.get(
    V1 + "/fixtures/{fixture_id}/condition",
    response_model=schemas.ConditionRead,
    summary="Pack capacity from each duration test, its trend and forecast (anyone signed in)",
    responses=ERROR_RESPONSES,
)
def fixture_condition(
    fixture_id: str, session: SessionDep, user: CurrentUser
) -> schemas.ConditionRead:
    return service.fixture_condition(
        session=session, org_id=user.org_id, fixture_id=fixture_id, on=service.today()
    )


@router.get(
    V1 + "/buildings/{building_id}/due",
    response_model=schemas.DueList,
    summary="Tests overdue, due today and due soon in a building (anyone signed in)",
    responses=ERROR_RESPONSES,
)
def building_due(
    building_id: str, session: SessionDep, user: CurrentUser, due_soon_days: DueSoon = 7
) -> schemas.DueList:
    return service.building_due(
        session=session,
        org_id=user.org_id,
        building_id=building_id,
        on=service.today(),
        due_soon_days=due_soon_days,
    )


@router.get(
    V1 + "/maintenance/due",
    response_model=schemas.DueList,
    summary="Tests overdue, due today and due soon across the firm (anyone signed in)",
    responses=ERROR_RESPONSES,
)
def firm_due(session: SessionDep, user: CurrentUser, due_soon_days: DueSoon = 7) -> schemas.DueList:
    return service.firm_due(
        session=session, org_id=user.org_id, on=service.today(), due_soon_days=due_soon_days
    )


@router.get(
    V1 + "/buildings/{building_id}/replacements",
    response_model=schemas.ReplacementList,
    summary="Packs to replace, with the reason and the date each is due (anyone signed in)",
    responses=ERROR_RESPONSES,
)
def building_replacements(
    building_id: str,
    session: SessionDep,
    user: CurrentUser,
    within_days: Horizon = service.DEFAULT_REPLACEMENT_HORIZON_DAYS,
) -> schemas.ReplacementList:
    return service.building_replacements(
        session=session,
        org_id=user.org_id,
        building_id=building_id,
        on=service.today(),
        within_days=within_days,
    )


def calendar_url(settings: Any, request: Request, token: str) -> str:
    base = str(settings.public_base_url or request.base_url).rstrip("/")
    return f"{base}/calendar/{token}.ics"


@router.get(
    V1 + "/buildings/{building_id}/calendar-link",
    response_model=schemas.CalendarLinkRead,
    summary="Whether the building has a live calendar link (supervisor or above)",
    responses=ERROR_RESPONSES,
)
def calendar_link_status(
    building_id: str, session: SessionDep, user: SupervisorUser
) -> schemas.CalendarLinkRead:
    service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    link = service.active_link(session=session, org_id=user.org_id, building_id=building_id)
    if link is None:
        raise NotFound("calendar link")
    return schemas.CalendarLinkRead(
        building_id=building_id, created_at=link.created_at, active=True
    )


@router.post(
    V1 + "/buildings/{building_id}/calendar-link",
    response_model=schemas.CalendarLinkRead,
    status_code=status.HTTP_201_CREATED,
    summary="Make a secret calendar link; an older one stops working (supervisor or above)",
    responses=ERROR_RESPONSES,
)
def make_calendar_link(
    building_id: str,
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    user: SupervisorUser,
) -> schemas.CalendarLinkRead:
    link, token = service.make_calendar_link(
        session=session, org_id=user.org_id, user=user, building_id=building_id
    )
    return schemas.CalendarLinkRead(
        building_id=building_id,
        url=calendar_url(settings, request, token),
        created_at=link.created_at,
        active=True,
    )


@router.delete(
    V1 + "/buildings/{building_id}/calendar-link",
    status_code=status.HTTP_204_NO_CONTENT,
    summary="Revoke the building's calendar link: it then answers 404 (supervisor or above)",
    responses=ERROR_RESPONSES,
)
def revoke_calendar_link(building_id: str, session: SessionDep, user: SupervisorUser) -> Response:
    service.revoke_calendar_link(
        session=session, org_id=user.org_id, user=user, building_id=building_id
    )
    return Response(status_code=status.HTTP_204_NO_CONTENT)


@router.get(
    "/calendar/{token}.ics",
    summary="A building's coming tests as iCalendar (no sign-in: the secret link is the key)",
    response_class=Response,
    responses={
        200: {"content": {"text/calendar": {}}, "description": "RFC 5545 calendar"},
        404: {"description": "No such link, or it was revoked."},
    },
)
def calendar_feed(token: str, session: SessionDep) -> Response:
    building, events = service.calendar_feed(session=session, token=token, on=service.today())
    text = calendar.ics_calendar(
        name=f"Emergency lighting tests: {building.name}",
        events=events,
        stamp=datetime.now(UTC),
    )
    return Response(
        text.encode("utf-8"),
        media_type="text/calendar; charset=utf-8",
        headers={
            "Cache-Control": "private, max-age=900",
            "Referrer-Policy": "no-referrer",
            "Content-Disposition": 'inline; filename="tests.ics"',
        },
    )


@router.get(
    V1 + "/buildings/{building_id}/logbook/{year}/pdf",
    summary="The log book of one year as PDF, for the inspector (anyone signed in)",
    response_class=Response,
    responses={200: {"content": {"application/pdf": {}}}, **ERROR_RESPONSES},
)
def logbook_pdf(building_id: str, year: int, session: SessionDep, user: CurrentUser) -> Response:
    book = service.logbook(
        session=session, org_id=user.org_id, building_id=building_id, year=year, on=service.today()
    )
    pdf = documents.logbook_pdf(book)
    return Response(
        pdf,
        media_type="application/pdf",
        headers={"Content-Disposition": f'inline; filename="logbook-{year}.pdf"'},
    )


@router.get(
    V1 + "/buildings/{building_id}/tests.csv",
    summary="The building's whole log as CSV, spreadsheet formulas neutralised (anyone signed in)",
    response_class=Response,
    responses={200: {"content": {CSV_MEDIA: {}}}, **ERROR_RESPONSES},
)
def export_csv(
    building_id: str,
    session: SessionDep,
    user: CurrentUser,
    year: Annotated[int | None, Query(ge=2000, le=2100)] = None,
) -> Response:
    logs = service.building_logs(session=session, org_id=user.org_id, building_id=building_id)
    text = csvio.write_csv(service.export_rows(logs, year=year))
    name = f"test-log-{year}.csv" if year else "test-log.csv"
    return Response(
        ("\ufeff" + text).encode("utf-8"),
        media_type=f"{CSV_MEDIA}; charset=utf-8",
        headers={"Content-Disposition": f'attachment; filename="{name}"'},
    )


@router.post(
    V1 + "/buildings/{building_id}/tests/import",
    response_model=schemas.ImportReport,
    summary=(
        "Check a CSV of past tests row by row; with confirm=true keep the good rows "
        "(surveyor or above)"
    ),
    openapi_extra={
        "requestBody": {
            "required": True,
            "content": {CSV_MEDIA: {"schema": {"type": "string"}}},
            "description": "The CSV, with the columns of the export (UTF-8).",
        }
    },
    responses=ERROR_RESPONSES,
)
async def import_csv(
    building_id: str,
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    user: SurveyorUser,
    confirm: Annotated[
        bool, Query(description="false: a preview that writes nothing; true: keep the good rows")
    ] = False,
) -> schemas.ImportReport:
    body = await request.body()
    text = decode_upload(body, limit_bytes=settings.upload_max_bytes)
    return service.import_tests(
        session=session,
        org_id=user.org_id,
        user=user,
        building_id=building_id,
        text=text,
        confirm=confirm,
        on=service.today(),
    )


def decode_upload(body: bytes, *, limit_bytes: int) -> str:
    """The uploaded CSV as text; InvalidInput for an empty, too large or non-UTF-8 file."""
    if not body:
        raise InvalidInput("file", "the file is empty")
    if len(body) > limit_bytes:
        raise InvalidInput("file", f"the file is larger than {limit_bytes // 1024} kB: split it")
    try:
        return body.decode("utf-8-sig")
    except UnicodeDecodeError:
        try:
            return body.decode("cp1252")
        except UnicodeDecodeError:
            raise InvalidInput(
                "file", "the file is not text in UTF-8; save it as 'CSV UTF-8' and try again"
            ) from None
