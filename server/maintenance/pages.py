"""The maintenance pages: due lists, the floor walk, a fixture's log and condition,
calendar links and the CSV import.

The floor walk is the tablet's page: every commissioned fixture of an area
(or of a whole floor) in walking order, each preset to "pass"; the
technician flips the exceptions and sends the lot once. A single test or a
correction uses the same form with one row. Views parse, check the role,
call :mod:`server.maintenance.service` and hand the templates ready values.
"""

from __future__ import annotations

import base64
import binascii
import uuid
from dataclasses import dataclass, field
from datetime import date, timedelta
from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from starlette.datastructures import FormData, UploadFile

from server.accounts.models import Role, User, role_at_least
from server.common.errors import Conflict, InvalidInput, NotFound
from server.common.forms import FormDep
from server.deps import CurrentUser, SessionDep, SettingsDep, SupervisorUser, SurveyorUser
from server.engineering.schedule import DEFAULT_DUE_SOON_DAYS, DueState, NextTest, TestKind
from server.maintenance import api, schemas, service
from server.maintenance.models import TestRecord
from server.maintenance.service import FixtureLog
from server.templating import render

router = APIRouter(include_in_schema=False)

KIND_WORDS = {TestKind.FUNCTION: "Function test", TestKind.DURATION: "Duration test"}
KIND_HINTS = {
    TestKind.FUNCTION: "Monthly: switch to battery, check every lamp lights, restore the supply.",
    TestKind.DURATION: "Annual: run on battery for the full required duration.",
}
STATE_WORDS = {
    DueState.OVERDUE: ("Overdue", "fail"),
    DueState.DUE: ("Due today", "warn"),
    DueState.DUE_SOON: ("Due soon", "info"),
    DueState.SCHEDULED: ("Scheduled", "none"),
}
RESULT_WORDS = {"pass": ("Pass", "pass"), "fail": ("Fail", "fail"), "void": ("Withdrawn", "none")}
REASON_WORDS = {
    "short-duration": "Ran short",
    "low-capacity": "Low capacity",
    "runtime-forecast": "Run-time forecast",
    "capacity-forecast": "Capacity forecast",
    "service-life": "Service life",
    "high-resistance": "High resistance",
    "sag-below-cutoff": "Collapses under load",
    "resistance-watch": "Resistance to watch",
}
ENTRY_FIELDS = (
    "result",
    "observed_duration_min",
    "ended",
    "open_circuit_v",
    "loaded_v",
    "load_a",
    "load_ohm",
    "pack_replaced",
    "action_taken",
    "notes",
)
DETAIL_FIELDS = frozenset(ENTRY_FIELDS) - {"result", "observed_duration_min", "ended"}
# Fields with an input of their own on the walk form; other messages show above the row.
INPUT_FIELDS = frozenset(DETAIL_FIELDS | {"observed_duration_min"}) - {"pack_replaced"}


def _redirect(path: str) -> RedirectResponse:
    return RedirectResponse(path, status_code=303)


def _can_record(user: User) -> bool:
    return role_at_least(user.role_enum, Role.SURVEYOR)


def _can_link(user: User) -> bool:
    return role_at_least(user.role_enum, Role.SUPERVISOR)


def _days_words(days_left: int) -> str:
    if days_left < 0:
        return f"{-days_left} day{'s' if days_left != -1 else ''} late"
    if days_left == 0:
        return "today"
    return f"in {days_left} day{'s' if days_left != 1 else ''}"


def _due_row(item: schemas.DueItem) -> dict[str, Any]:
    word, badge = STATE_WORDS[item.state]
    return {
        "fixture_id": item.fixture_id,
        "tag": item.fixture_tag,
        "where": ", ".join(part for part in (item.location, item.area_name) if part),
        "floor": item.floor,
        "building": item.building_name,
        "building_id": item.building_id,
        "kind": KIND_WORDS[item.kind],
        "due_on": item.due_on.isoformat(),
        "when": _days_words(item.days_left),
        "state": word,
        "badge": badge,
        "failed": item.basis == "failed",
    }


def _reason_rows(reasons: list[schemas.ReasonRead]) -> list[dict[str, str]]:
    return [
        {
            "label": REASON_WORDS.get(reason.code, reason.code),
            "message": reason.message,
            "source": reason.source,
            "due_on": reason.due_on.isoformat() if reason.due_on else "",
            "badge": "fail" if reason.urgency == "replace" else "warn",
        }
        for reason in reasons
    ]


def _replacement_rows(listing: schemas.ReplacementList) -> list[dict[str, Any]]:
    return [
        {
            "fixture_id": item.fixture_id,
            "tag": item.fixture_tag,
            "where": ", ".join(part for part in (item.location, item.area_name) if part),
            "pack": item.pack_name,
            "replace_by": item.replace_by.isoformat(),
            "overdue": item.overdue,
            "reasons": _reason_rows(item.reasons),
        }
        for item in listing.items
    ]


def _due_soon_days(request: Request) -> int:
    text = request.query_params.get("within", "")
    if text.isdigit() and int(text) <= 365:
        return int(text)
    return DEFAULT_DUE_SOON_DAYS


# ---- the firm's overview ------------------------------------------------------------


@router.get("/maintenance", response_class=HTMLResponse)
def overview_page(request: Request, session: SessionDep, user: CurrentUser) -> HTMLResponse:
    on = service.today()
    within = _due_soon_days(request)
    logs = service.firm_logs(session=session, org_id=user.org_id)
    due = service.due_list(logs, on=on, due_soon_days=within)
    per_building: dict[str, list[FixtureLog]] = {}
    for log in logs:
        per_building.setdefault(log.building.id, []).append(log)
    buildings: list[dict[str, Any]] = []
    for building_logs in per_building.values():
        building = building_logs[0].building
        counts = service.due_list(building_logs, on=on, due_soon_days=within).counts
        packs = service.replacements(
            building_logs, on=on, within_days=service.DEFAULT_REPLACEMENT_HORIZON_DAYS
        )
        converted = sum(1 for log in building_logs if log.fixture.commissioned_on is not None)
        buildings.append(
            {
                "id": building.id,
                "name": building.name,
                "converted": converted,
                "overdue": counts["overdue"],
                "due": counts["due"] + counts["due-soon"],
                "packs": len(packs.items),
            }
        )
    buildings.sort(key=lambda row: (-row["overdue"], -row["due"], row["name"]))
    return render(
        request,
        "maintenance/overview.html",
        {
            "section": "maintenance",
            "today": on.isoformat(),
            "within": within,
            "rows": [_due_row(item) for item in due.items],
            "counts": due.counts,
            "buildings": buildings,
        },
    )


# ---- a building ---------------------------------------------------------------------


def _floors(logs: list[FixtureLog]) -> list[dict[str, Any]]:
    """Floors with their areas and how many commissioned fixtures each has, for walking."""
    floors: dict[str, dict[str, Any]] = {}
    for log in logs:
        if log.fixture.commissioned_on is None:
            continue
        floor = floors.setdefault(
            log.area.floor,
            {"floor": log.area.floor, "label": log.area.floor or "No floor given", "areas": {}},
        )
        area = floor["areas"].setdefault(
            log.area.id, {"id": log.area.id, "name": log.area.name, "count": 0}
        )
        area["count"] += 1
    result = []
    for floor in sorted(floors.values(), key=lambda item: item["floor"]):
        areas = sorted(floor["areas"].values(), key=lambda item: item["name"])
        result.append({**floor, "areas": areas, "count": sum(a["count"] for a in areas)})
    return result


def _years(logs: list[FixtureLog], on: date) -> list[int]:
    starts = [log.fixture.commissioned_on.year for log in logs if log.fixture.commissioned_on]
    starts += [record.tested_on.year for log in logs for record in log.records]
    first = min(starts, default=on.year)
    return list(range(on.year, first - 1, -1))


def _building_page(
    request: Request,
    session: Any,
    user: User,
    building_id: str,
    *,
    new_link: str = "",
    status_code: int = 200,
) -> HTMLResponse:
    on = service.today()
    within = _due_soon_days(request)
    building = service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    logs = service.load_logs(session, org_id=user.org_id, buildings=[building])
    due = service.due_list(logs, on=on, due_soon_days=within)
    packs = service.replacements(logs, on=on, within_days=service.DEFAULT_REPLACEMENT_HORIZON_DAYS)
    link = service.active_link(session=session, org_id=user.org_id, building_id=building.id)
    saved = request.query_params.get("saved", "")
    notice = ""
    if saved.isdigit():
        notice = f"{saved} test{'s' if saved != '1' else ''} recorded in the log."
    elif request.query_params.get("repeated"):
        notice = "That walk was already recorded: nothing was added twice."
    elif request.query_params.get("revoked"):
        notice = "The calendar link was revoked: calendars using it stop updating."
    return render(
        request,
        "maintenance/building.html",
        {
            "section": "maintenance",
            "building": building,
            "today": on.isoformat(),
            "within": within,
            "rows": [_due_row(item) for item in due.items],
            "counts": due.counts,
            "floors": _floors(logs),
            "packs": _replacement_rows(packs),
            "unassessed": packs.unassessed,
            "horizon_days": packs.within_days,
            "fixtures": [
                {"id": log.fixture.id, "tag": log.fixture.tag, "area": log.area.name}
                for log in logs
                if log.fixture.commissioned_on is not None
            ],
            "not_commissioned": sum(1 for log in logs if log.fixture.commissioned_on is None),
            "years": _years(logs, on),
            "can_record": _can_record(user),
            "can_link": _can_link(user),
            "link": link,
            "link_made": link.created_at.strftime("%Y-%m-%d %H:%M UTC") if link else "",
            "new_link": new_link,
            "notice": notice,
        },
        status_code=status_code,
    )


@router.get("/maintenance/buildings/{building_id}", response_class=HTMLResponse)
def building_page(
    request: Request, building_id: str, session: SessionDep, user: CurrentUser
) -> HTMLResponse:
    return _building_page(request, session, user, building_id)


@router.post("/maintenance/buildings/{building_id}/calendar-link", response_class=HTMLResponse)
def make_calendar_link(
    request: Request,
    building_id: str,
    session: SessionDep,
    settings: SettingsDep,
    user: SupervisorUser,
) -> HTMLResponse:
    _, token = service.make_calendar_link(
        session=session, org_id=user.org_id, user=user, building_id=building_id
    )
    url = api.calendar_url(settings, request, token)
    return _building_page(request, session, user, building_id, new_link=url)


@router.post("/maintenance/buildings/{building_id}/calendar-link/revoke")
def revoke_calendar_link(building_id: str, session: SessionDep, user: SupervisorUser) -> Response:
    try:
        service.revoke_calendar_link(
            session=session, org_id=user.org_id, user=user, building_id=building_id
        )
    except NotFound:
        service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    return _redirect(f"/maintenance/buildings/{building_id}?revoked=1")


# ---- the walk: one form, every fixture preset to pass ----------------------------------


@dataclass
class WalkRow:
    """One fixture's line on the walk form: what it shows and what was typed."""

    fixture_id: str
    tag: str
    location: str
    area: str
    last: str
    due: str
    due_badge: str
    values: dict[str, str]
    errors: dict[str, str] = field(default_factory=dict)

    @property
    def open_details(self) -> bool:
        filled = any(self.values.get(name) for name in DETAIL_FIELDS - {"pack_replaced"})
        return (
            filled
            or self.values.get("pack_replaced") == "true"
            or bool(DETAIL_FIELDS & set(self.errors))
        )

    @property
    def general_errors(self) -> list[str]:
        """Messages about the row as a whole (the result), not about one input."""
        return [message for name, message in self.errors.items() if name not in INPUT_FIELDS]

    def name(self, field_name: str) -> str:
        return f"{self.fixture_id}.{field_name}"

    def error(self, field_name: str) -> str:
        return self.errors.get(field_name, "")


def _last_words(log: FixtureLog) -> str:
    standing = log.standing
    if not standing:
        commissioned = log.fixture.commissioned_on
        return f"commissioned {commissioned}" if commissioned else "not commissioned"
    last = standing[-1]
    return f"last: {KIND_WORDS[TestKind(last.kind)].lower()} {last.tested_on}, {last.result}"


def _due_words(planned: NextTest | None) -> tuple[str, str]:
    if planned is None:
        return "", "none"
    word, badge = STATE_WORDS[planned.state]
    return f"{word}: {planned.due_on} ({_days_words(planned.days_left)})", badge


def _default_values(
    log: FixtureLog, kind: TestKind, corrected: TestRecord | None
) -> dict[str, str]:
    if corrected is not None:
        return {
            "result": corrected.result,
            "observed_duration_min": _shown(corrected.observed_duration_min),
            "ended": "out" if corrected.ran_to_cutoff else "lit",
            "open_circuit_v": _shown(corrected.open_circuit_v),
            "loaded_v": _shown(corrected.loaded_v),
            "load_a": _shown(corrected.load_a),
            "load_ohm": _shown(corrected.load_ohm),
            "pack_replaced": "true" if corrected.pack_replaced else "false",
            "action_taken": corrected.action_taken,
            "notes": corrected.notes,
        }
    values = {name: "" for name in ENTRY_FIELDS}
    values["result"] = "pass"
    values["pack_replaced"] = "false"
    if kind is TestKind.DURATION:
        values["observed_duration_min"] = _shown(log.area.required_duration_min)
        values["ended"] = "lit"
    return values


def _shown(value: float | None) -> str:
    return "" if value is None else f"{value:g}"


def _walk_rows(
    logs: list[FixtureLog],
    kind: TestKind,
    on: date,
    *,
    typed: dict[str, dict[str, str]] | None = None,
    errors: dict[str, dict[str, str]] | None = None,
    corrected: TestRecord | None = None,
) -> list[WalkRow]:
    rows = []
    for log in logs:
        planned = log.schedule(on=on, due_soon_days=DEFAULT_DUE_SOON_DAYS)
        next_of_kind = next((item for item in planned or () if item.kind is kind), None)
        due, badge = _due_words(next_of_kind)
        rows.append(
            WalkRow(
                fixture_id=log.fixture.id,
                tag=log.fixture.tag,
                location=log.fixture.location,
                area=log.area.name,
                last=_last_words(log),
                due=due,
                due_badge=badge,
                values=(typed or {}).get(log.fixture.id) or _default_values(log, kind, corrected),
                errors=(errors or {}).get(log.fixture.id, {}),
            )
        )
    return rows


def _kind_of(text: str | None) -> TestKind:
    try:
        return TestKind(text or TestKind.FUNCTION.value)
    except ValueError:
        raise InvalidInput("kind", "choose the function test or the duration test") from None


@dataclass
class WalkContext:
    """What the walk form is for: its title, where it posts, where it goes back to."""

    title: str
    action: str
    back: str
    building_id: str
    building_name: str
    scope: str
    kind_links: list[dict[str, Any]]
    corrects: TestRecord | None = None


def _walk_page(
    request: Request,
    context: WalkContext,
    logs: list[FixtureLog],
    kind: TestKind,
    user: User,
    *,
    rows: list[WalkRow] | None = None,
    tested_on: str = "",
    tested_by: str = "",
    batch_id: str = "",
    form_errors: dict[str, str] | None = None,
    status_code: int = 200,
) -> HTMLResponse:
    on = service.today()
    results = [("pass", "Pass"), ("fail", "Fail")]
    if context.corrects is not None:
        results.append(("void", "Entered in error (withdraw)"))
    else:
        results.append(("skip", "Not tested"))
    error_count = sum(1 for row in rows or () if row.errors) + len(form_errors or {})
    return render(
        request,
        "maintenance/walk.html",
        {
            "section": "maintenance",
            "context": context,
            "kind": kind.value,
            "kind_word": KIND_WORDS[kind],
            "kind_hint": KIND_HINTS[kind],
            "is_duration": kind is TestKind.DURATION,
            "rows": rows if rows is not None else _walk_rows(logs, kind, on),
            "results": results,
            "tested_on": tested_on or on.isoformat(),
            "tested_by": tested_by or user.name or user.email,
            "batch_id": batch_id or str(uuid.uuid4()),
            "form_errors": form_errors or {},
            "error_count": error_count,
            "can_record": _can_record(user),
        },
        status_code=status_code,
    )


def _scope_logs(
    session: Any, user: User, building_id: str, area_id: str | None, floor: str | None
) -> tuple[list[FixtureLog], str, str]:
    logs = service.walk_logs(
        session=session, org_id=user.org_id, building_id=building_id, area_id=area_id, floor=floor
    )
    if area_id:
        area_name = logs[0].area.name if logs else ""
        return logs, f"area={area_id}", area_name or "this area"
    label = f"floor {floor}" if floor else "the floor with no name"
    return logs, f"floor={floor or ''}", label


def _walk_context(
    building_id: str, building_name: str, scope_query: str, scope_label: str, kind: TestKind
) -> WalkContext:
    base = f"/maintenance/buildings/{building_id}/walk?{scope_query}"
    return WalkContext(
        title=f"{KIND_WORDS[kind]}: {scope_label}",
        action=base + f"&kind={kind.value}",
        back=f"/maintenance/buildings/{building_id}",
        building_id=building_id,
        building_name=building_name,
        scope=scope_label,
        kind_links=[
            {"href": base + f"&kind={k.value}", "label": KIND_WORDS[k], "current": k is kind}
            for k in TestKind
        ],
    )


@router.get("/maintenance/buildings/{building_id}/walk", response_class=HTMLResponse)
def walk_page(
    request: Request, building_id: str, session: SessionDep, user: CurrentUser
) -> HTMLResponse:
    params = request.query_params
    kind = _kind_of(params.get("kind"))
    area_id = params.get("area") or None
    floor = params.get("floor") if area_id is None else None
    building = service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    logs, scope_query, scope_label = _scope_logs(session, user, building.id, area_id, floor)
    context = _walk_context(building.id, building.name, scope_query, scope_label, kind)
    return _walk_page(request, context, logs, kind, user)


def _read_entries(
    form: FormData, logs: list[FixtureLog], kind: TestKind, common: dict[str, Any]
) -> tuple[dict[str, dict[str, Any]], dict[str, dict[str, str]]]:
    """The tests a walk form reports (skipped rows left out) and the values as typed."""
    entries: dict[str, dict[str, Any]] = {}
    typed: dict[str, dict[str, str]] = {}
    for log in logs:
        prefix = log.fixture.id + "."
        values = {name: str(form.get(prefix + name) or "").strip() for name in ENTRY_FIELDS}
        values["pack_replaced"] = "true" if values["pack_replaced"] == "true" else "false"
        typed[log.fixture.id] = values
        if values["result"] == "skip":
            continue
        fields: dict[str, Any] = {**common, "result": values["result"] or "pass"}
        for name in ("open_circuit_v", "loaded_v", "load_a", "load_ohm"):
            if values[name]:
                fields[name] = values[name].replace(",", ".")
        if kind is TestKind.DURATION:
            observed = values["observed_duration_min"].replace(",", ".")
            fields["observed_duration_min"] = observed or None
            fields["ran_to_cutoff"] = values["ended"] == "out"
        fields["pack_replaced"] = values["pack_replaced"] == "true"
        fields["action_taken"] = values["action_taken"]
        fields["notes"] = values["notes"]
        entries[log.fixture.id] = fields
    return entries, typed


def _common_fields(form: FormData, kind: TestKind) -> tuple[dict[str, Any], dict[str, str]]:
    tested_on = str(form.get("tested_on") or "").strip()
    tested_by = str(form.get("tested_by") or "").strip()
    errors: dict[str, str] = {}
    try:
        date.fromisoformat(tested_on)
    except ValueError:
        errors["tested_on"] = "Enter the date of the test."
    if not tested_by:
        errors["tested_by"] = "Enter who did the tests (the name for the log book)."
    elif len(tested_by) > 200:
        errors["tested_by"] = "Use at most 200 characters."
    return {"kind": kind.value, "tested_on": tested_on, "tested_by": tested_by}, errors


def _submit(
    request: Request,
    session: Any,
    user: User,
    form: FormData,
    context: WalkContext,
    logs: list[FixtureLog],
    kind: TestKind,
) -> Response:
    common, form_errors = _common_fields(form, kind)
    entries, typed = _read_entries(form, logs, kind, common)
    if context.corrects is not None:
        for fields in entries.values():
            fields["corrects_id"] = context.corrects.id
    batch_id = str(form.get("batch_id") or "")
    outcome = service.WalkOutcome()
    if not form_errors:
        if not entries:
            form_errors["rows"] = "Every fixture is marked 'not tested': nothing to record."
        else:
            try:
                outcome = service.record_walk(
                    session=session,
                    org_id=user.org_id,
                    user=user,
                    logs=logs,
                    batch_id=batch_id,
                    entries=entries,
                    on=service.today(),
                )
            except Conflict as exc:
                session.rollback()
                form_errors["rows"] = exc.message
    form_errors.update(outcome.errors.pop("", {}))
    if form_errors or outcome.errors:
        rows = _walk_rows(
            logs,
            kind,
            service.today(),
            typed=typed,
            errors=outcome.errors,
            corrected=context.corrects,
        )
        return _walk_page(
            request,
            context,
            logs,
            kind,
            user,
            rows=rows,
            tested_on=common["tested_on"],
            tested_by=common["tested_by"],
            batch_id=batch_id,
            form_errors=form_errors,
            status_code=422,
        )
    if outcome.repeated:
        return _redirect(context.back + "?repeated=1")
    return _redirect(context.back + f"?saved={outcome.saved}")


@router.post("/maintenance/buildings/{building_id}/walk")
def record_walk(
    request: Request,
    building_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    params = request.query_params
    kind = _kind_of(params.get("kind"))
    area_id = params.get("area") or None
    floor = params.get("floor") if area_id is None else None
    building = service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    logs, scope_query, scope_label = _scope_logs(session, user, building.id, area_id, floor)
    context = _walk_context(building.id, building.name, scope_query, scope_label, kind)
    return _submit(request, session, user, form, context, logs, kind)


# ---- one fixture: its log, its schedule, its pack ----------------------------------------


def _fixture_context(log: FixtureLog, kind: TestKind, corrects: TestRecord | None) -> WalkContext:
    fixture_id = log.fixture.id
    query = f"?kind={kind.value}" + (f"&corrects={corrects.id}" if corrects else "")
    title = (
        f"Correct the {KIND_WORDS[TestKind(corrects.kind)].lower()} of {corrects.tested_on}"
        if corrects
        else f"{KIND_WORDS[kind]}: {log.fixture.tag}"
    )
    return WalkContext(
        title=title,
        action=f"/maintenance/fixtures/{fixture_id}/record{query}",
        back=f"/maintenance/fixtures/{fixture_id}",
        building_id=log.building.id,
        building_name=log.building.name,
        scope=log.fixture.tag,
        kind_links=[]
        if corrects
        else [
            {
                "href": f"/maintenance/fixtures/{fixture_id}/record?kind={k.value}",
                "label": KIND_WORDS[k],
                "current": k is kind,
            }
            for k in TestKind
        ],
        corrects=corrects,
    )


def _corrected(log: FixtureLog, record_id: str | None) -> TestRecord | None:
    if not record_id:
        return None
    record = next((r for r in log.records if r.id == record_id), None)
    if record is None:
        raise NotFound("TestRecord")
    return record


def _one_fixture(
    session: Any, user: User, request: Request, fixture_id: str
) -> tuple[FixtureLog, TestKind, TestRecord | None]:
    log = service.fixture_log(session=session, org_id=user.org_id, fixture_id=fixture_id)
    corrects = _corrected(log, request.query_params.get("corrects"))
    kind = TestKind(corrects.kind) if corrects else _kind_of(request.query_params.get("kind"))
    return log, kind, corrects


@router.get("/maintenance/fixtures/{fixture_id}/record", response_class=HTMLResponse)
def record_page(
    request: Request, fixture_id: str, session: SessionDep, user: CurrentUser
) -> HTMLResponse:
    log, kind, corrects = _one_fixture(session, user, request, fixture_id)
    context = _fixture_context(log, kind, corrects)
    rows = _walk_rows([log], kind, service.today(), corrected=corrects)
    return _walk_page(request, context, [log], kind, user, rows=rows)


@router.post("/maintenance/fixtures/{fixture_id}/record")
def record_one(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    log, kind, corrects = _one_fixture(session, user, request, fixture_id)
    context = _fixture_context(log, kind, corrects)
    return _submit(request, session, user, form, context, [log], kind)


def _record_rows(log: FixtureLog) -> list[dict[str, Any]]:
    replaced = log.superseded_by
    dates = {record.id: record.tested_on.isoformat() for record in log.records}
    rows = []
    for record in reversed(log.records):
        word, badge = RESULT_WORDS.get(record.result, (record.result, "none"))
        duration = ""
        if record.observed_duration_min is not None:
            ended = "lamp went out" if record.ran_to_cutoff else "stopped, lamp lit"
            duration = f"{record.observed_duration_min:g} min ({ended})"
        readings = ""
        if record.open_circuit_v is not None:
            readings = f"{record.open_circuit_v:g} V open, {record.loaded_v:g} V loaded"
        superseded = record.id in replaced
        status = []
        if superseded:
            status.append(f"superseded by the correction of {dates.get(replaced[record.id])}")
        if record.corrects_id:
            status.append(f"corrects the entry of {dates.get(record.corrects_id, '?')}")
        if record.pack_replaced:
            status.append("pack replaced")
        rows.append(
            {
                "id": record.id,
                "tested_on": record.tested_on.isoformat(),
                "kind": KIND_WORDS[TestKind(record.kind)],
                "result": word,
                "badge": badge,
                "duration": duration,
                "readings": readings,
                "by": record.tested_by,
                "action": record.action_taken,
                "notes": record.notes,
                "status": "; ".join(status),
                "superseded": superseded,
                "correctable": not superseded,
            }
        )
    return rows


def _schedule_rows(log: FixtureLog, on: date) -> list[dict[str, str]]:
    planned = log.schedule(on=on, due_soon_days=DEFAULT_DUE_SOON_DAYS)
    rows = []
    for item in planned or ():
        word, badge = STATE_WORDS[item.state]
        basis = {
            "commissioned": f"{item.interval_days} days after commissioning ({item.counted_from})",
            "last-pass": f"{item.interval_days} days after the pass of {item.counted_from}",
            "failed": f"failed on {item.counted_from}: repair and test again",
        }[item.basis.value]
        rows.append(
            {
                "kind": KIND_WORDS[item.kind],
                "kind_value": item.kind.value,
                "due_on": item.due_on.isoformat(),
                "when": _days_words(item.days_left),
                "state": word,
                "badge": badge,
                "basis": basis,
            }
        )
    return rows


@router.get("/maintenance/fixtures/{fixture_id}", response_class=HTMLResponse)
def fixture_page(
    request: Request, fixture_id: str, session: SessionDep, user: CurrentUser
) -> HTMLResponse:
    on = service.today()
    log = service.fixture_log(session=session, org_id=user.org_id, fixture_id=fixture_id)
    condition, _ = service.assess(log, on=on)
    return render(
        request,
        "maintenance/fixture.html",
        {
            "section": "maintenance",
            "log": log,
            "building": log.building,
            "fixture": log.fixture,
            "area": log.area,
            "schedule": _schedule_rows(log, on),
            "records": _record_rows(log),
            "condition": _condition_view(condition),
            "plot": capacity_plot(condition, on),
            "can_record": _can_record(user),
        },
    )


def _condition_view(read: schemas.ConditionRead) -> dict[str, Any]:
    if not read.available:
        return {"available": False, "reason": read.unavailable_reason}
    figures = [
        ("Module", read.module_name or ""),
        ("Pack", read.pack_name or ""),
        ("Battery current", f"{read.current_a:.2f} A"),
        ("Required duration", f"{read.required_duration_min:g} min"),
        ("Rated capacity", f"{read.rated_capacity_ah:g} Ah"),
        ("Needed for the duration", f"{read.runtime_threshold_ah:.2f} Ah"),
        ("End-of-life capacity", f"{read.end_of_life_ah:.2f} Ah"),
        (
            f"Installed ({read.installed_basis})" if read.installed_on else "Installed",
            str(read.installed_on or "unknown"),
        ),
        ("Service life here", f"{read.service_life_years:.1f} years"),
        ("Life ends", str(read.life_ends_on or "—")),
    ]
    if read.internal_ohm is not None:
        figures.append(("Internal resistance", f"{read.internal_ohm:.2f} Ω"))
        figures.append(("Under the module's draw", f"{read.terminal_v:.2f} V"))
    if read.trend is not None:
        figures.append(("Trend", f"{read.trend.slope_ah_per_year:+.2f} Ah per year"))
    forecast = (
        f"From {read.runtime_short_on} the pack is forecast to run less than the required "
        f"{read.required_duration_min:g} min."
        if read.runtime_short_on
        else "No forecast date: it needs duration tests that ran until the lamp went out."
        if read.trend is None
        else "The trend does not fall to the capacity the duration needs."
    )
    estimates = [
        {
            "tested_on": point.tested_on.isoformat(),
            "observed": f"{point.observed_min:g} min",
            "capacity": ("at least " if point.lower_bound else "") + f"{point.capacity_ah:.2f} Ah",
            "share": ("≥ " if point.lower_bound else "") + f"{point.share_of_rated:.0%}",
        }
        for point in read.estimates
    ]
    return {
        "available": True,
        "figures": figures,
        "forecast": forecast,
        "replace_by": read.replace_by.isoformat() if read.replace_by else "",
        "replace_overdue": bool(read.replace_by and read.replace_by < service.today()),
        "reasons": _reason_rows(read.reasons),
        "assumptions": read.assumptions,
        "estimates": estimates,
    }


# ---- the capacity plot (inline SVG, drawn from ready coordinates) -----------------------


@dataclass(frozen=True)
class PlotLine:
    x1: float
    y1: float
    x2: float
    y2: float
    label: str = ""
    label_x: float = 0.0
    label_y: float = 0.0


@dataclass(frozen=True)
class PlotPoint:
    x: float
    y: float
    lower_bound: bool
    marker: str  # SVG points of a triangle for a lower bound
    label: str


@dataclass(frozen=True)
class Plot:
    width: int
    height: int
    left: float
    right: float
    top: float
    bottom: float
    x_ticks: list[tuple[float, str]]
    y_ticks: list[tuple[float, float, str]]  # line y, label y, label
    tick_label_x: float  # right end of the y labels
    tick_label_y: float  # baseline of the x labels
    unit_y: float  # middle of the y axis, where its unit stands
    threshold: PlotLine
    end_of_life: PlotLine
    trend: PlotLine | None
    forecast: PlotLine | None
    points: list[PlotPoint]
    title: str
    description: str


PLOT_W, PLOT_H = 900, 320
MARGIN = {"left": 64.0, "right": 18.0, "top": 16.0, "bottom": 44.0}
FORECAST_SPAN_DAYS = 8 * 365  # our choice: draw a forecast up to eight years ahead


def capacity_plot(read: schemas.ConditionRead, on: date) -> Plot | None:
    """Capacity against time with the threshold lines, as ready SVG coordinates."""
    if not read.available or not read.estimates or read.runtime_threshold_ah is None:
        return None
    days = [point.tested_on for point in read.estimates]
    start = min([read.installed_on or days[0], *days])
    end_candidates = [max(days), on]
    if read.runtime_short_on and read.runtime_short_on <= start + timedelta(FORECAST_SPAN_DAYS):
        end_candidates.append(read.runtime_short_on)
    end = max(end_candidates)
    span = max((end - start).days, 60)
    start -= timedelta(days=round(span * 0.04))
    end += timedelta(days=round(span * 0.06))
    capacities = [point.capacity_ah for point in read.estimates]
    top_ah = max([*capacities, read.rated_capacity_ah or 0.0, read.runtime_threshold_ah]) * 1.15
    left, right = MARGIN["left"], PLOT_W - MARGIN["right"]
    top, bottom = MARGIN["top"], PLOT_H - MARGIN["bottom"]

    def x_of(day: date) -> float:
        return round(left + (right - left) * (day - start).days / (end - start).days, 1)

    def y_of(capacity_ah: float) -> float:
        return round(bottom - (bottom - top) * max(0.0, capacity_ah) / top_ah, 1)

    step = next(s for s in (0.25, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0) if top_ah / s <= 7)
    y_ticks = [
        (y_of(i * step), y_of(i * step) + 4, f"{i * step:g}") for i in range(int(top_ah / step) + 1)
    ]
    years = range(start.year + 1, end.year + 1)
    year_step = max(1, len(years) // 8)
    x_ticks = [(x_of(date(year, 1, 1)), str(year)) for year in years if year % year_step == 0]
    threshold_y = y_of(read.runtime_threshold_ah)
    eol_y = y_of(read.end_of_life_ah or 0.0)
    threshold = PlotLine(
        left,
        threshold_y,
        right,
        threshold_y,
        f"needed for {read.required_duration_min:g} min: {read.runtime_threshold_ah:.2f} Ah",
        left + 6,
        threshold_y + 17,  # below the line: healthy packs plot above it
    )
    end_of_life = PlotLine(
        left,
        eol_y,
        right,
        eol_y,
        f"end of life: {read.end_of_life_ah:.2f} Ah",
        right - 6,
        eol_y - 5,
    )
    trend = None
    if read.trend is not None:
        origin = read.trend.origin

        def trend_at(day: date) -> float:
            assert read.trend is not None
            return read.trend.intercept_ah + read.trend.slope_ah_per_year * (
                (day - origin).days / 365.25
            )

        trend = PlotLine(x_of(origin), y_of(trend_at(origin)), right, y_of(trend_at(end)))
    forecast = None
    if read.runtime_short_on and start <= read.runtime_short_on <= end:
        x = x_of(read.runtime_short_on)
        forecast = PlotLine(
            x, top, x, bottom, f"falls short {read.runtime_short_on}", x - 4, top + 12
        )
    points = []
    for point in read.estimates:
        x, y = x_of(point.tested_on), y_of(point.capacity_ah)
        marker = f"{x},{y - 7} {x - 6},{y + 5} {x + 6},{y + 5}"
        label = f"{point.tested_on}: " + ("at least " if point.lower_bound else "")
        points.append(
            PlotPoint(x, y, point.lower_bound, marker, label + f"{point.capacity_ah:.2f} Ah")
        )
    description = (
        f"{len(points)} duration test(s) since {read.installed_on or start}. "
        f"The line at {read.runtime_threshold_ah:.2f} Ah is the capacity the "
        f"{read.required_duration_min:g} min duration needs"
        + (f"; the trend reaches it on {read.runtime_short_on}." if read.runtime_short_on else ".")
    )
    return Plot(
        width=PLOT_W,
        height=PLOT_H,
        left=left,
        right=right,
        top=top,
        bottom=bottom,
        x_ticks=x_ticks,
        y_ticks=y_ticks,
        tick_label_x=left - 6,
        tick_label_y=bottom + 18,
        unit_y=(top + bottom) / 2,
        threshold=threshold,
        end_of_life=end_of_life,
        trend=trend,
        forecast=forecast,
        points=points,
        title="Pack capacity from the duration tests",
        description=description,
    )


# ---- CSV import ------------------------------------------------------------------------


def _import_page(
    request: Request,
    building: Any,
    *,
    report: schemas.ImportReport | None = None,
    csv_b64: str = "",
    error: str = "",
    status_code: int = 200,
) -> HTMLResponse:
    rows = []
    for row in report.rows if report else ():
        rows.append(
            {
                "line": row.line,
                "status": {"ok": "Ready", "error": "Refused", "duplicate": "Already logged"}[
                    row.status
                ],
                "badge": {"ok": "pass", "error": "fail", "duplicate": "none"}[row.status],
                "summary": " · ".join(
                    part for part in (row.fixture_tag, row.kind, row.tested_on, row.result) if part
                ),
                "message": row.message,
            }
        )
    return render(
        request,
        "maintenance/import.html",
        {
            "section": "maintenance",
            "building": building,
            "report": report,
            "rows": rows,
            "csv_b64": csv_b64,
            "error": error,
            "columns": ", ".join(
                ("fixture_tag", "area", "kind", "tested_on", "tested_by", "result")
            ),
        },
        status_code=status_code,
    )


@router.get("/maintenance/buildings/{building_id}/import", response_class=HTMLResponse)
def import_page(
    request: Request, building_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    building = service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    return _import_page(request, building)


def _uploaded_text(form: FormData, limit_bytes: int) -> str:
    """The CSV sent: a file, pasted text, or the preview's own copy (base64) when confirming."""
    upload = form.get("file")
    if isinstance(upload, UploadFile):
        with upload.file:
            body = upload.file.read(limit_bytes + 1)
        if upload.filename:
            return api.decode_upload(body, limit_bytes=limit_bytes)
    kept = str(form.get("csv_b64") or "")
    if kept:
        try:
            body = base64.b64decode(kept, validate=True)
        except (binascii.Error, ValueError):
            raise InvalidInput("file", "the checked file was damaged: check it again") from None
        return api.decode_upload(body, limit_bytes=limit_bytes)
    text = str(form.get("csv_text") or "")
    if len(text.encode("utf-8")) > limit_bytes:
        raise InvalidInput("file", f"the text is larger than {limit_bytes // 1024} kB: split it")
    if not text.strip():
        raise InvalidInput("file", "choose a CSV file (or paste its text)")
    return text


@router.post("/maintenance/buildings/{building_id}/import", response_class=HTMLResponse)
def import_preview_or_confirm(
    request: Request,
    building_id: str,
    session: SessionDep,
    settings: SettingsDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> HTMLResponse:
    """Preview (writes nothing) or, with ``confirm``, keep the good rows of the same text."""
    building = service.get_building(session=session, org_id=user.org_id, building_id=building_id)
    confirm = form.get("confirm") == "yes"
    try:
        text = _uploaded_text(form, settings.upload_max_bytes)
        report = service.import_tests(
            session=session,
            org_id=user.org_id,
            user=user,
            building_id=building.id,
            text=text,
            confirm=confirm,
            on=service.today(),
        )
    except InvalidInput as exc:
        return _import_page(request, building, error=exc.message, status_code=422)
    kept = "" if confirm else base64.b64encode(text.encode("utf-8")).decode("ascii")
    return _import_page(request, building, report=report, csv_b64=kept)
