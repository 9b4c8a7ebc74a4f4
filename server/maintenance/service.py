"""The maintenance log: recording tests, the schedule, pack condition, calendars.

Every function is keyword-only and scoped to one organisation; a record of
another firm answers exactly like a missing one. The log is append-only:
there is no function here that changes or deletes a test record. A
correction is a new record whose ``corrects_id`` names the one it replaces;
the replaced one stays in the log, shown as superseded, and only the
standing records (neither superseded nor void) feed the schedule and the
pack condition.

Roles: anyone signed in reads; a surveyor or above records tests
(technicians sign in with the surveyor role); a supervisor or above manages
calendar links. The views check the role, these functions the organisation.
"""

from __future__ import annotations

import hashlib
import secrets
import uuid
from collections import defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date, timedelta
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.accounts.models import Organisation, User
from server.audit import service as audit
from server.calc.service import find_profile
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common import crud
from server.common.errors import Conflict, InvalidInput, NotFound
from server.common.forms import friendly_message
from server.db import new_id, utcnow
from server.engineering import condition as core
from server.engineering.batteries import (
    Pack,
    PackReading,
    battery_current_a,
    constant_power_note,
    read_date_code,
)
from server.engineering.errors import InvalidInput as CoreInvalidInput
from server.engineering.schedule import (
    DUE_STATE_RANK,
    DueState,
    LoggedTest,
    NextTest,
    TestKind,
    fixture_schedule,
    longest_gap_days,
)
from server.engineering.vocabulary import DateCodeFormat
from server.maintenance import csvio, schemas
from server.maintenance.models import CalendarLink, TestRecord
from server.maintenance.schemas import TestRecordCreate, TestResult
from server.proposals import service as proposals_service
from server.proposals.models import Proposal
from server.sites.models import Area, Building, Fixture

ACCEPTED = "accepted"  # the proposal status of the module and pack that were installed
# A test may carry tomorrow's date: the server's day can lag a technician's by a time zone.
FUTURE_TOLERANCE_DAYS = 1
DEFAULT_REPLACEMENT_HORIZON_DAYS = 365  # our choice: a year of replacements to plan and price
FALLBACK_MONTHLY_DAYS = 30  # NFPA 101 §7.9.3 (checked against a page quoting it)
FALLBACK_ANNUAL_DAYS = 365


def today() -> date:
    """The server's date: the day lists are made for."""
    return date.today()


# ---- loading a building's log -----------------------------------------------


@dataclass(slots=True)
class Installed:
    """The module and pack of a fixture's accepted proposal."""

    module: EmergencyModule
    pack: BatteryPack


@dataclass(slots=True)
class FixtureLog:
    """One fixture with its place, its installed equipment and its test records."""

    fixture: Fixture
    area: Area
    building: Building
    monthly_test_days: int
    annual_test_days: int
    installed: Installed | None
    records: list[TestRecord] = field(default_factory=list)

    @property
    def superseded_by(self) -> dict[str, str]:
        """Record id -> id of the correction that replaced it."""
        return {record.corrects_id: record.id for record in self.records if record.corrects_id}

    @property
    def standing(self) -> list[TestRecord]:
        """Records that count: neither replaced by a correction nor void, oldest first."""
        replaced = self.superseded_by
        return [
            record
            for record in self.records
            if record.id not in replaced and record.result != TestResult.VOID
        ]

    def schedule(self, *, on: date, due_soon_days: int) -> tuple[NextTest, NextTest] | None:
        """The next function and duration tests; None before commissioning."""
        commissioned = self.fixture.commissioned_on
        if commissioned is None:
            return None
        return fixture_schedule(
            commissioned_on=commissioned,
            tests=logged_tests(self.standing),
            monthly_test_days=self.monthly_test_days,
            annual_test_days=self.annual_test_days,
            today=on,
            due_soon_days=due_soon_days,
        )


def logged_tests(records: Iterable[TestRecord]) -> list[LoggedTest]:
    return [
        LoggedTest(
            tested_on=record.tested_on,
            kind=TestKind(record.kind),
            passed=record.result == TestResult.PASS,
        )
        for record in records
    ]


def _by_id(session: Session, model: Any, ids: set[str]) -> dict[str, Any]:
    if not ids:
        return {}
    return {row.id: row for row in session.scalars(select(model).where(model.id.in_(ids)))}


def _intervals(session: Session, org_id: str, profile_id: str, cache: dict[str, Any]) -> Any:
    if profile_id not in cache:
        try:
            profile = find_profile(session=session, org_id=org_id, profile_id=profile_id)
            cache[profile_id] = (profile.monthly_test_days, profile.annual_test_days)
        except InvalidInput:
            cache[profile_id] = (FALLBACK_MONTHLY_DAYS, FALLBACK_ANNUAL_DAYS)
    return cache[profile_id]


def load_logs(
    session: Session,
    *,
    org_id: str,
    buildings: Sequence[Building],
    area_id: str | None = None,
    fixture_id: str | None = None,
) -> list[FixtureLog]:
    """Every fixture of ``buildings`` (or of one area or one fixture) with its log."""
    building_of = {building.id: building for building in buildings}
    area_query = select(Area).where(Area.org_id == org_id, Area.building_id.in_(building_of))
    if area_id is not None:
        area_query = area_query.where(Area.id == area_id)
    areas = {area.id: area for area in session.scalars(area_query)}
    fixture_query = select(Fixture).where(Fixture.org_id == org_id, Fixture.area_id.in_(areas))
    if fixture_id is not None:
        fixture_query = fixture_query.where(Fixture.id == fixture_id)
    fixtures = list(session.scalars(fixture_query))
    ids = {fixture.id for fixture in fixtures}
    proposals = {
        proposal.fixture_id: proposal
        for proposal in session.scalars(
            select(Proposal).where(
                Proposal.org_id == org_id,
                Proposal.fixture_id.in_(ids),
                Proposal.status == ACCEPTED,
            )
        )
    }
    modules = _by_id(session, EmergencyModule, {p.module_id for p in proposals.values()})
    packs = _by_id(session, BatteryPack, {p.pack_id for p in proposals.values()})
    records: dict[str, list[TestRecord]] = defaultdict(list)
    for record in session.scalars(
        select(TestRecord)
        .where(TestRecord.org_id == org_id, TestRecord.fixture_id.in_(ids))
        .order_by(TestRecord.tested_on, TestRecord.recorded_at, TestRecord.id)
    ):
        records[record.fixture_id].append(record)
    cache: dict[str, Any] = {}
    logs = []
    for fixture in fixtures:
        area = areas[fixture.area_id]
        monthly, annual = _intervals(session, org_id, area.profile_id, cache)
        proposal = proposals.get(fixture.id)
        installed = (
            Installed(module=modules[proposal.module_id], pack=packs[proposal.pack_id])
            if proposal is not None
            else None
        )
        logs.append(
            FixtureLog(
                fixture=fixture,
                area=area,
                building=building_of[area.building_id],
                monthly_test_days=monthly,
                annual_test_days=annual,
                installed=installed,
                records=records.get(fixture.id, []),
            )
        )
    logs.sort(key=lambda log: (log.building.name, log.area.floor, log.area.name, log.fixture.tag))
    return logs


def get_building(*, session: Session, org_id: str, building_id: str) -> Building:
    return crud.get_owned(session, Building, org_id=org_id, record_id=building_id)


def fixture_log(*, session: Session, org_id: str, fixture_id: str) -> FixtureLog:
    fixture = crud.get_owned(session, Fixture, org_id=org_id, record_id=fixture_id)
    area = crud.get_owned(session, Area, org_id=org_id, record_id=fixture.area_id)
    building = get_building(session=session, org_id=org_id, building_id=area.building_id)
    return load_logs(session, org_id=org_id, buildings=[building], fixture_id=fixture.id)[0]


def building_logs(*, session: Session, org_id: str, building_id: str) -> list[FixtureLog]:
    building = get_building(session=session, org_id=org_id, building_id=building_id)
    return load_logs(session, org_id=org_id, buildings=[building])


def firm_logs(*, session: Session, org_id: str) -> list[FixtureLog]:
    buildings = list(session.scalars(select(Building).where(Building.org_id == org_id)))
    return load_logs(session, org_id=org_id, buildings=buildings)


# ---- reading the log ----------------------------------------------------------


def record_read(record: TestRecord, superseded_by: dict[str, str]) -> schemas.TestRecordRead:
    read = schemas.TestRecordRead.model_validate(record)
    read.superseded_by = superseded_by.get(record.id)
    return read


def list_tests(*, session: Session, org_id: str, fixture_id: str) -> schemas.TestRecordList:
    """A fixture's whole log, newest first, superseded records marked."""
    log = fixture_log(session=session, org_id=org_id, fixture_id=fixture_id)
    replaced = log.superseded_by
    items = [record_read(record, replaced) for record in reversed(log.records)]
    return schemas.TestRecordList(items=items, total=len(items))


def next_test_read(item: NextTest) -> schemas.NextTestRead:
    return schemas.NextTestRead(
        kind=item.kind,
        due_on=item.due_on,
        state=item.state,
        days_left=item.days_left,
        basis=item.basis.value,
        counted_from=item.counted_from,
        interval_days=item.interval_days,
    )


def due_items(
    logs: Iterable[FixtureLog], *, on: date, due_soon_days: int, include_scheduled: bool = False
) -> list[schemas.DueItem]:
    """The tests overdue, due and due soon (and, if asked, the rest), most urgent first."""
    items = []
    for log in logs:
        planned = log.schedule(on=on, due_soon_days=due_soon_days)
        if planned is None:
            continue
        for item in planned:
            if item.state is DueState.SCHEDULED and not include_scheduled:
                continue
            items.append(
                schemas.DueItem(
                    building_id=log.building.id,
                    building_name=log.building.name,
                    area_id=log.area.id,
                    area_name=log.area.name,
                    floor=log.area.floor,
                    fixture_id=log.fixture.id,
                    fixture_tag=log.fixture.tag,
                    location=log.fixture.location,
                    kind=item.kind,
                    due_on=item.due_on,
                    state=item.state,
                    days_left=item.days_left,
                    basis=item.basis.value,
                )
            )
    items.sort(
        key=lambda i: (
            i.due_on,
            DUE_STATE_RANK[i.state],
            i.building_name,
            i.area_name,
            i.fixture_tag,
        )
    )
    return items


def due_list(logs: Iterable[FixtureLog], *, on: date, due_soon_days: int) -> schemas.DueList:
    items = due_items(logs, on=on, due_soon_days=due_soon_days)
    counts = {state.value: 0 for state in DueState if state is not DueState.SCHEDULED}
    for item in items:
        counts[item.state.value] += 1
    return schemas.DueList(today=on, due_soon_days=due_soon_days, items=items, counts=counts)


def building_due(
    *, session: Session, org_id: str, building_id: str, on: date, due_soon_days: int
) -> schemas.DueList:
    logs = building_logs(session=session, org_id=org_id, building_id=building_id)
    return due_list(logs, on=on, due_soon_days=due_soon_days)


def firm_due(*, session: Session, org_id: str, on: date, due_soon_days: int) -> schemas.DueList:
    return due_list(firm_logs(session=session, org_id=org_id), on=on, due_soon_days=due_soon_days)


# ---- recording tests ------------------------------------------------------------


def _values(data: TestRecordCreate, *, required_min: float) -> dict[str, Any]:
    values = data.model_dump(exclude={"id"})
    values["kind"] = data.kind.value
    values["result"] = data.result.value
    values["corrects_id"] = str(data.corrects_id) if data.corrects_id else None
    observed = data.observed_duration_min
    if data.kind is TestKind.DURATION and observed is not None and data.ran_to_cutoff is None:
        values["ran_to_cutoff"] = observed < required_min
    return values


def check_against_log(
    session: Session,
    *,
    org_id: str,
    log: FixtureLog,
    data: TestRecordCreate,
    on: date,
) -> None:
    """The rules that need the stored data; raises InvalidInput or Conflict."""
    fixture, required_min = log.fixture, log.area.required_duration_min
    if data.tested_on > on + timedelta(days=FUTURE_TOLERANCE_DAYS):
        raise InvalidInput("tested_on", f"the test date {data.tested_on} is in the future")
    if fixture.commissioned_on is not None and data.tested_on < fixture.commissioned_on:
        raise InvalidInput(
            "tested_on",
            f"{data.tested_on} is before the fixture was commissioned "
            f"({fixture.commissioned_on}); tests of the luminaire before its conversion do not "
            "belong in this log",
        )
    if (
        data.kind is TestKind.DURATION
        and data.result is TestResult.PASS
        and data.observed_duration_min is not None
        and data.observed_duration_min < required_min
    ):
        raise InvalidInput(
            "result",
            f"the lamp stayed lit {data.observed_duration_min:g} min, less than the "
            f"{required_min:g} min the area requires: record the test as a fail",
        )
    if data.corrects_id is not None:
        corrected = session.get(TestRecord, str(data.corrects_id))
        if corrected is None or corrected.org_id != org_id:
            raise InvalidInput("corrects_id", "no such test record to correct")
        if corrected.fixture_id != fixture.id:
            raise InvalidInput(
                "corrects_id",
                "a correction belongs to the same fixture as the record it corrects; to move a "
                "test to another fixture, void it here and record it there",
            )
        later = log.superseded_by.get(corrected.id)
        if later is not None:
            raise Conflict(
                f"That record was already corrected (by record {later}); correct the latest "
                "one instead. Nothing was saved.",
                current={"superseded_by": later},
            )


def _existing_retry(
    session: Session, *, org_id: str, record_id: str, values: dict[str, Any]
) -> TestRecord | None:
    existing = session.get(TestRecord, record_id)
    if existing is None:
        return None
    if existing.org_id != org_id:
        raise Conflict("This id is already used by another record; make a new id.")
    different = sorted(name for name, value in values.items() if getattr(existing, name) != value)
    if different:
        raise Conflict(
            "A test record with this id exists with other values "
            f"({', '.join(different)}); this is not a retry of the same test. Nothing was saved."
        )
    return existing


def _add_record(
    session: Session,
    *,
    org_id: str,
    user: User,
    fixture_id: str,
    values: dict[str, Any],
    record_id: str | None,
    batch_id: str | None = None,
) -> TestRecord:
    record = TestRecord(
        org_id=org_id,
        fixture_id=fixture_id,
        recorded_by=user.id,
        recorded_at=utcnow(),
        batch_id=batch_id,
        **values,
    )
    # The id is made here, not at flush, so a batch (a walk, an import) is written
    # in one flush at commit instead of a round trip per record.
    record.id = record_id or new_id()
    session.add(record)
    audit.record(
        session=session,
        user=user,
        org_id=org_id,
        entity=TestRecord.__tablename__,
        entity_id=record.id,
        action="correct" if values.get("corrects_id") else "create",
        changes=values,
    )
    return record


def record_test(
    *,
    session: Session,
    org_id: str,
    user: User,
    fixture_id: str,
    data: TestRecordCreate,
    on: date,
) -> tuple[schemas.TestRecordRead, bool]:
    """Append one test (or a correction) to a fixture's log.

    Returns the stored record and whether it was made now (False for a
    retry of the same create).
    """
    log = fixture_log(session=session, org_id=org_id, fixture_id=fixture_id)
    values = _values(data, required_min=log.area.required_duration_min)
    record_id = str(data.id) if data.id else None
    if record_id is not None:
        existing = _existing_retry(
            session, org_id=org_id, record_id=record_id, values={**values, "fixture_id": fixture_id}
        )
        if existing is not None:
            return record_read(existing, log.superseded_by), False
    check_against_log(session, org_id=org_id, log=log, data=data, on=on)
    record = _add_record(
        session, org_id=org_id, user=user, fixture_id=fixture_id, values=values, record_id=record_id
    )
    session.commit()
    return record_read(record, {}), True


# ---- a floor walk: every fixture of an area (or a floor) in one submission ----------


@dataclass(slots=True)
class WalkOutcome:
    """What a walk submission did: records made, or the errors per fixture."""

    saved: int = 0
    repeated: bool = False
    errors: dict[str, dict[str, str]] = field(default_factory=dict)  # fixture id -> field -> msg


def walk_logs(
    *, session: Session, org_id: str, building_id: str, area_id: str | None, floor: str | None
) -> list[FixtureLog]:
    """The commissioned fixtures of an area, or of one floor of a building, in walking order."""
    building = get_building(session=session, org_id=org_id, building_id=building_id)
    logs = load_logs(session, org_id=org_id, buildings=[building], area_id=area_id)
    if area_id is not None and not logs:
        crud.get_owned(session, Area, org_id=org_id, record_id=area_id)
    if floor is not None:
        logs = [log for log in logs if log.area.floor == floor]
    walked = [log for log in logs if log.fixture.commissioned_on is not None]
    walked.sort(
        key=lambda log: (
            log.area.floor,
            log.area.name,
            log.fixture.position_m if log.fixture.position_m is not None else float("inf"),
            log.fixture.tag,
        )
    )
    return walked


def _walk_errors(exc: ValidationError) -> dict[str, str]:
    errors: dict[str, str] = {}
    for error in exc.errors():
        loc = [part for part in error.get("loc", ()) if isinstance(part, str)]
        name = loc[0] if loc else ""
        if not name:
            head, sep, _ = str(error.get("msg", "")).removeprefix("Value error, ").partition(": ")
            name = head if sep else "result"
        errors.setdefault(name, friendly_message(error))
    return errors


def record_walk(
    *,
    session: Session,
    org_id: str,
    user: User,
    logs: Sequence[FixtureLog],
    batch_id: str,
    entries: dict[str, dict[str, Any]],
    on: date,
) -> WalkOutcome:
    """Record one test per walked fixture in one transaction, or nothing.

    ``entries`` maps a fixture id to the fields of its test (a
    :class:`TestRecordCreate` as a dict); fixtures left out were skipped.
    A walk sent twice (same ``batch_id``) is recorded once.
    """
    outcome = WalkOutcome()
    try:
        uuid.UUID(batch_id)
    except ValueError:
        outcome.errors[""] = {"batch": "This form is damaged: reload the page and enter it again."}
        return outcome
    seen = session.scalars(
        select(TestRecord.id).where(TestRecord.org_id == org_id, TestRecord.batch_id == batch_id)
    ).first()
    if seen is not None:
        outcome.repeated = True
        return outcome
    by_fixture = {log.fixture.id: log for log in logs}
    ready: list[tuple[FixtureLog, dict[str, Any]]] = []
    for fixture_id, fields in entries.items():
        log = by_fixture.get(fixture_id)
        if log is None:
            raise NotFound("Fixture")
        try:
            data = TestRecordCreate.model_validate(fields)
            check_against_log(session, org_id=org_id, log=log, data=data, on=on)
        except ValidationError as exc:
            outcome.errors[fixture_id] = _walk_errors(exc)
            continue
        except InvalidInput as exc:
            outcome.errors[fixture_id] = {exc.field: exc.message}
            continue
        ready.append((log, _values(data, required_min=log.area.required_duration_min)))
    if outcome.errors:
        return outcome
    for log, values in ready:
        _add_record(
            session,
            org_id=org_id,
            user=user,
            fixture_id=log.fixture.id,
            values=values,
            record_id=None,
            batch_id=batch_id,
        )
    session.commit()
    outcome.saved = len(ready)
    return outcome


# ---- pack condition ---------------------------------------------------------------


def module_current(module: EmergencyModule, pack: Pack) -> tuple[float, str]:
    """Battery current of the module and how it was found. [A]"""
    if module.battery_a is not None:
        return module.battery_a, f"battery current {module.battery_a:g} A as the module states"
    if module.battery_w is None:
        raise InvalidInput("battery_w", "the module states neither its battery power nor current")
    nominal_v = pack.nominal_v_used
    return battery_current_a(module.battery_w, nominal_v), constant_power_note(
        module.battery_w, nominal_v
    )


def installed_on(log: FixtureLog, on: date) -> tuple[date | None, str]:
    """When the pack now in the fixture was installed, and how that is known.

    The latest pack replacement in the log; else the commissioning date, or
    the pack's date code when it reads earlier (the pack aged on the shelf).
    The date code counts only on a fixture surveyed without a kit: on one
    with a kit, the code on record is the old pack's.
    """
    replaced = [record.tested_on for record in log.standing if record.pack_replaced]
    if replaced:
        return max(replaced), "pack replaced (from the log)"
    fixture = log.fixture
    commissioned = fixture.commissioned_on
    if fixture.pack_date_code and fixture.pack_date_format and not fixture.existing_kit:
        try:
            made_on = read_date_code(
                fixture.pack_date_code, DateCodeFormat(fixture.pack_date_format), on
            ).made_on
        except (CoreInvalidInput, ValueError):
            made_on = None
        if made_on is not None and (commissioned is None or made_on < commissioned):
            return made_on, f"pack date code {fixture.pack_date_code} ({fixture.pack_date_format})"
    if commissioned is not None:
        return commissioned, "commissioned"
    return None, ""


def _latest_load_test(records: Sequence[TestRecord]) -> core.LoadTest | None:
    for record in reversed(records):
        if record.open_circuit_v is None or record.loaded_v is None:
            continue
        if record.load_a is None and record.load_ohm is None:
            continue
        try:
            reading = PackReading(
                open_circuit_v=record.open_circuit_v,
                loaded_v=record.loaded_v,
                load_a=record.load_a,
                load_ohm=record.load_ohm,
            )
        except CoreInvalidInput:
            continue
        return core.LoadTest(tested_on=record.tested_on, reading=reading)
    return None


def _survey_load_test(log: FixtureLog, installed: date | None) -> core.LoadTest | None:
    """The load test on the fixture's own record, when it can only be of the pack now in it.

    On a fixture surveyed without a kit, readings on its record were taken of
    the pack fitted at conversion; they count as of the installation date. On
    one surveyed with a kit they are the old pack's and are not used.
    """
    fixture = log.fixture
    if fixture.existing_kit or installed is None or installed != fixture.commissioned_on:
        return None
    if fixture.open_circuit_v is None or fixture.loaded_v is None:
        return None
    try:
        reading = PackReading(
            open_circuit_v=fixture.open_circuit_v,
            loaded_v=fixture.loaded_v,
            load_a=fixture.load_a,
            load_ohm=fixture.load_ohm,
        )
    except CoreInvalidInput:
        return None
    return core.LoadTest(tested_on=installed, reading=reading)


def _reason_read(reason: core.ReplacementReason) -> schemas.ReasonRead:
    return schemas.ReasonRead(
        code=reason.code.value,
        urgency=reason.urgency.value,
        due_on=reason.due_on,
        message=reason.message,
        source=reason.source,
    )


def assess(
    log: FixtureLog, *, on: date
) -> tuple[schemas.ConditionRead, core.PackAssessment | None]:
    """The pack condition of one fixture (and the core's assessment, for plots)."""
    fixture = log.fixture
    if fixture.commissioned_on is None:
        return schemas.ConditionRead(
            fixture_id=fixture.id,
            available=False,
            unavailable_reason="Not commissioned yet: the pack's log starts at commissioning.",
        ), None
    if log.installed is None:
        return schemas.ConditionRead(
            fixture_id=fixture.id,
            available=False,
            unavailable_reason=(
                "No accepted proposal: the module's draw and the pack are unknown, so no "
                "capacity can be worked out from the tests."
            ),
        ), None
    module, pack_row = log.installed.module, log.installed.pack
    pack = proposals_service.engine_pack(pack_row)
    current_a, current_note = module_current(module, pack)
    since, basis = installed_on(log, on)
    standing = [r for r in log.standing if since is None or r.tested_on >= since]
    tests = [
        core.DurationTestResult(
            tested_on=record.tested_on,
            observed_min=record.observed_duration_min,
            ran_to_cutoff=bool(record.ran_to_cutoff),
        )
        for record in standing
        if record.kind == TestKind.DURATION and record.observed_duration_min is not None
    ]
    required_min = log.area.required_duration_min
    base = schemas.ConditionRead(
        fixture_id=fixture.id,
        available=True,
        module_name=module.name,
        pack_name=pack_row.name,
        current_a=current_a,
        current_note=current_note,
        required_duration_min=required_min,
        ambient_c=fixture.ambient_c,
        rated_capacity_ah=pack.capacity_ah,
        installed_on=since,
        installed_basis=basis,
    )
    try:
        result = core.assess_pack(
            pack=pack,
            current_a=current_a,
            ambient_c=fixture.ambient_c,
            required_min=required_min,
            tests=tests,
            installed_on=since,
            load_test=_latest_load_test(standing) or _survey_load_test(log, since),
            module_cutoff_v=module.cutoff_v,
        )
    except CoreInvalidInput as exc:
        base.available = False
        base.unavailable_reason = f"{exc.field}: {exc.reason}"
        return base, None
    forecast = result.forecast
    trend = forecast.trend
    base.estimates = [
        schemas.CapacityPoint(
            tested_on=item.tested_on,
            observed_min=item.observed_min,
            capacity_ah=item.capacity_ah,
            share_of_rated=item.share_of_rated,
            lower_bound=item.lower_bound,
        )
        for item in result.estimates
    ]
    base.trend = (
        schemas.TrendRead(
            origin=trend.origin,
            intercept_ah=trend.intercept_ah,
            slope_ah_per_year=trend.slope_ah_per_year,
            assumed_start=forecast.assumed_start,
        )
        if trend
        else None
    )
    base.runtime_threshold_ah = forecast.runtime_threshold_ah
    base.end_of_life_ah = forecast.end_of_life_ah
    base.runtime_short_on = forecast.runtime_short_on
    base.end_of_life_on = forecast.end_of_life_on
    base.service_life_years = result.service_life_years
    base.life_ends_on = result.life_ends_on
    base.internal_ohm = result.internal_ohm
    base.terminal_v = result.terminal_v
    base.cutoff_v = result.cutoff_v
    base.reasons = [_reason_read(reason) for reason in result.reasons]
    base.replace_by = result.due_on
    base.assumptions = [current_note, *result.assumptions]
    return base, result


def fixture_condition(
    *, session: Session, org_id: str, fixture_id: str, on: date
) -> schemas.ConditionRead:
    log = fixture_log(session=session, org_id=org_id, fixture_id=fixture_id)
    return assess(log, on=on)[0]


def replacements(
    logs: Iterable[FixtureLog], *, on: date, within_days: int
) -> schemas.ReplacementList:
    """Packs to replace by ``on + within_days``, earliest first, with their reasons."""
    horizon = on + timedelta(days=within_days)
    items, unassessed = [], []
    for log in logs:
        if log.fixture.commissioned_on is None:
            continue
        read, _ = assess(log, on=on)
        if not read.available:
            unassessed.append(f"{log.fixture.tag}: {read.unavailable_reason}")
            continue
        if read.replace_by is None or read.replace_by > horizon:
            continue
        items.append(
            schemas.ReplacementItem(
                building_id=log.building.id,
                area_name=log.area.name,
                floor=log.area.floor,
                fixture_id=log.fixture.id,
                fixture_tag=log.fixture.tag,
                location=log.fixture.location,
                pack_name=read.pack_name or "",
                chemistry=log.installed.pack.chemistry if log.installed else "",
                replace_by=read.replace_by,
                overdue=read.replace_by < on,
                reasons=[r for r in read.reasons if r.urgency == core.Urgency.REPLACE],
            )
        )
    items.sort(key=lambda item: (item.replace_by, item.area_name, item.fixture_tag))
    return schemas.ReplacementList(
        today=on, within_days=within_days, items=items, unassessed=unassessed
    )


def building_replacements(
    *, session: Session, org_id: str, building_id: str, on: date, within_days: int
) -> schemas.ReplacementList:
    logs = building_logs(session=session, org_id=org_id, building_id=building_id)
    return replacements(logs, on=on, within_days=within_days)


# ---- calendar links ------------------------------------------------------------------


def token_digest(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def active_link(*, session: Session, org_id: str, building_id: str) -> CalendarLink | None:
    return session.scalars(
        select(CalendarLink)
        .where(
            CalendarLink.org_id == org_id,
            CalendarLink.building_id == building_id,
            CalendarLink.revoked_at.is_(None),
        )
        .order_by(CalendarLink.created_at.desc())
    ).first()


def _revoke_all(session: Session, *, org_id: str, building_id: str, user: User) -> int:
    links = session.scalars(
        select(CalendarLink).where(
            CalendarLink.org_id == org_id,
            CalendarLink.building_id == building_id,
            CalendarLink.revoked_at.is_(None),
        )
    ).all()
    for link in links:
        link.revoked_at = utcnow()
        link.revoked_by = user.id
        audit.record(
            session=session,
            user=user,
            org_id=org_id,
            entity=CalendarLink.__tablename__,
            entity_id=link.id,
            action="revoke",
        )
    return len(links)


def make_calendar_link(
    *, session: Session, org_id: str, user: User, building_id: str
) -> tuple[CalendarLink, str]:
    """A new secret link for a building's calendar; any older one stops working.

    Returns the link and its token (shown once: only its digest is kept).
    """
    get_building(session=session, org_id=org_id, building_id=building_id)
    _revoke_all(session, org_id=org_id, building_id=building_id, user=user)
    token = secrets.token_urlsafe(32)  # 256 random bits
    link = CalendarLink(
        org_id=org_id,
        building_id=building_id,
        token_sha256=token_digest(token),
        created_at=utcnow(),
        created_by=user.id,
    )
    session.add(link)
    session.flush()
    audit.record(
        session=session,
        user=user,
        org_id=org_id,
        entity=CalendarLink.__tablename__,
        entity_id=link.id,
        action="create",
    )
    session.commit()
    return link, token


def revoke_calendar_link(*, session: Session, org_id: str, user: User, building_id: str) -> None:
    get_building(session=session, org_id=org_id, building_id=building_id)
    if not _revoke_all(session, org_id=org_id, building_id=building_id, user=user):
        raise NotFound("calendar link")
    session.commit()


@dataclass(frozen=True, slots=True)
class CalendarEvent:
    """One day's test round in one area, as a calendar shows it."""

    uid: str
    day: date
    summary: str
    description: str


KIND_NAMES = {TestKind.FUNCTION: "Monthly function test", TestKind.DURATION: "Annual duration test"}


def calendar_events(logs: Iterable[FixtureLog], *, on: date) -> list[CalendarEvent]:
    """The next test of each kind for every fixture, one event per area, kind and day.

    Overdue tests are put on today, with the day they fell due in the title:
    a past-dated event would hide in a calendar's history.
    """
    groups: dict[tuple[str, TestKind, date], list[tuple[FixtureLog, NextTest]]] = defaultdict(list)
    for log in logs:
        planned = log.schedule(on=on, due_soon_days=0)
        for item in planned or ():
            groups[(log.area.id, item.kind, item.due_on)].append((log, item))
    events = []
    for (area_id, kind, due_on), members in sorted(
        groups.items(), key=lambda g: (g[0][2], g[0][0])
    ):
        area = members[0][0].area
        where = f"{area.name}" + (f", floor {area.floor}" if area.floor else "")
        count = len(members)
        overdue = due_on < on
        title = f"{KIND_NAMES[kind]}: {where} ({count} luminaire{'s' if count != 1 else ''})"
        if overdue:
            title = f"OVERDUE since {due_on:%Y-%m-%d}: {title}"
        tags = ", ".join(sorted(log.fixture.tag for log, _ in members))
        failed = [log.fixture.tag for log, item in members if item.basis.value == "failed"]
        lines = [f"Building: {members[0][0].building.name}", f"Luminaires: {tags}"]
        if failed:
            lines.append(f"Failed last time, repair and test again: {', '.join(sorted(failed))}")
        if kind is TestKind.DURATION:
            lines.append(
                f"Run the full {area.required_duration_min:g} min on battery; note the time if "
                "the lamp goes out."
            )
        lines.append("Isolate the supply AND unplug the pack before working on a luminaire.")
        events.append(
            CalendarEvent(
                uid=f"{kind.value}-{area_id}-{due_on:%Y%m%d}@retrofit-planner",
                day=max(due_on, on),
                summary=title,
                description="\n".join(lines),
            )
        )
    return events


def calendar_feed(
    *, session: Session, token: str, on: date
) -> tuple[Building, list[CalendarEvent]]:
    """The building and events behind a secret calendar token; NotFound when revoked."""
    link = session.scalars(
        select(CalendarLink).where(CalendarLink.token_sha256 == token_digest(token))
    ).first()
    if link is None or link.revoked_at is not None:
        raise NotFound("calendar")
    building = session.get(Building, link.building_id)
    if building is None or building.org_id != link.org_id:
        raise NotFound("calendar")
    logs = load_logs(session, org_id=link.org_id, buildings=[building])
    return building, calendar_events(logs, on=on)


# ---- the log book -------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class LogbookEntry:
    record: TestRecord
    status: str  # standing, superseded, void


@dataclass(frozen=True, slots=True)
class LogbookFixture:
    log: FixtureLog
    entries: list[LogbookEntry]
    function_tests: int
    duration_tests: int
    longest_function_gap_days: int | None
    longest_duration_gap_days: int | None


@dataclass(frozen=True, slots=True)
class LogbookFailure:
    log: FixtureLog
    record: TestRecord
    retested_on: date | None


@dataclass(frozen=True, slots=True)
class Logbook:
    organisation: Organisation
    building: Building
    year: int
    made_on: date
    fixtures: list[LogbookFixture]
    failures: list[LogbookFailure]


def _entry_status(record: TestRecord, replaced: dict[str, str]) -> str:
    if record.id in replaced:
        return "superseded"
    return "void" if record.result == TestResult.VOID else "standing"


def logbook(*, session: Session, org_id: str, building_id: str, year: int, on: date) -> Logbook:
    """Everything the log book of ``year`` prints for a building."""
    if not 2000 <= year <= on.year + 1:
        raise InvalidInput("year", f"choose a year from 2000 to {on.year + 1}")
    logs = building_logs(session=session, org_id=org_id, building_id=building_id)
    organisation = session.get(Organisation, org_id)
    if organisation is None:
        raise NotFound("Organisation")
    start, end = date(year, 1, 1), date(year, 12, 31)
    until = min(end, on)
    fixtures, failures = [], []
    for log in logs:
        replaced = log.superseded_by
        entries = [
            LogbookEntry(record=record, status=_entry_status(record, replaced))
            for record in log.records
            if start <= record.tested_on <= end
        ]
        commissioned = log.fixture.commissioned_on
        if commissioned is None and not entries:
            continue
        standing = [entry.record for entry in entries if entry.status == "standing"]
        gaps: dict[TestKind, int | None] = {TestKind.FUNCTION: None, TestKind.DURATION: None}
        if commissioned is not None and commissioned <= until:
            tests = logged_tests(log.standing)
            for kind in gaps:
                gaps[kind] = longest_gap_days(
                    commissioned_on=max(commissioned, _last_pass_before(tests, kind, start)),
                    tests=tests,
                    kind=kind,
                    until=until,
                )
        fixtures.append(
            LogbookFixture(
                log=log,
                entries=entries,
                function_tests=sum(1 for r in standing if r.kind == TestKind.FUNCTION),
                duration_tests=sum(1 for r in standing if r.kind == TestKind.DURATION),
                longest_function_gap_days=gaps[TestKind.FUNCTION],
                longest_duration_gap_days=gaps[TestKind.DURATION],
            )
        )
        for record in standing:
            if record.result == TestResult.FAIL:
                failures.append(
                    LogbookFailure(
                        log=log, record=record, retested_on=_retest_after(log.standing, record)
                    )
                )
    return Logbook(
        organisation=organisation,
        building=logs[0].building
        if logs
        else get_building(session=session, org_id=org_id, building_id=building_id),
        year=year,
        made_on=on,
        fixtures=fixtures,
        failures=failures,
    )


def _last_pass_before(tests: Sequence[LoggedTest], kind: TestKind, start: date) -> date:
    """The start of the stretch running into the year: the last pass before it."""
    earlier = [
        test.tested_on
        for test in tests
        if test.passed
        and test.tested_on < start
        and (test.kind is kind or kind is TestKind.FUNCTION)
    ]
    return max(earlier, default=date.min)


def _retest_after(records: Sequence[TestRecord], failed: TestRecord) -> date | None:
    """Day of the first passing test of the same kind after a failure."""
    later = [
        record.tested_on
        for record in records
        if record.kind == failed.kind
        and record.result == TestResult.PASS
        and (record.tested_on, record.recorded_at) > (failed.tested_on, failed.recorded_at)
    ]
    return min(later, default=None)


def export_rows(logs: Iterable[FixtureLog], *, year: int | None = None) -> list[dict[str, Any]]:
    """Every record of the logs as flat rows for the CSV, oldest first."""
    rows = []
    for log in logs:
        replaced = log.superseded_by
        for record in log.records:
            if year is not None and record.tested_on.year != year:
                continue
            rows.append(
                {
                    "building": log.building.name,
                    "area": log.area.name,
                    "floor": log.area.floor,
                    "fixture_tag": log.fixture.tag,
                    "fixture_id": log.fixture.id,
                    "kind": record.kind,
                    "tested_on": record.tested_on.isoformat(),
                    "tested_by": record.tested_by,
                    "result": record.result,
                    "observed_duration_min": record.observed_duration_min,
                    "ran_to_cutoff": record.ran_to_cutoff,
                    "open_circuit_v": record.open_circuit_v,
                    "loaded_v": record.loaded_v,
                    "load_a": record.load_a,
                    "load_ohm": record.load_ohm,
                    "pack_replaced": record.pack_replaced,
                    "action_taken": record.action_taken,
                    "notes": record.notes,
                    "record_id": record.id,
                    "corrects_id": record.corrects_id or "",
                    "status": _entry_status(record, replaced),
                    "recorded_at": record.recorded_at.isoformat(timespec="seconds"),
                }
            )
    rows.sort(key=lambda row: (row["tested_on"], row["recorded_at"]))
    return rows


# ---- CSV import of past tests ------------------------------------------------------------


def _fixture_finder(logs: Sequence[FixtureLog]) -> Any:
    by_id = {log.fixture.id: log for log in logs}
    by_tag: dict[str, list[FixtureLog]] = defaultdict(list)
    for log in logs:
        by_tag[log.fixture.tag.casefold()].append(log)

    def find(cells: dict[str, str]) -> FixtureLog:
        fixture_id = cells.get("fixture_id", "")
        if fixture_id:
            found = by_id.get(fixture_id)
            if found is None:
                raise InvalidInput("fixture_id", f"no fixture {fixture_id} in this building")
            return found
        tag = cells.get("fixture_tag", "")
        if not tag:
            raise InvalidInput("fixture_tag", "give the fixture's tag (or its fixture_id)")
        matches = by_tag.get(tag.casefold(), [])
        area = cells.get("area", "").casefold()
        if area:
            matches = [log for log in matches if log.area.name.casefold() == area]
        if not matches:
            where = f" in area {cells.get('area')!r}" if area else ""
            raise InvalidInput("fixture_tag", f"no fixture tagged {tag!r}{where} in this building")
        if len(matches) > 1:
            raise InvalidInput(
                "fixture_tag",
                f"{len(matches)} fixtures are tagged {tag!r} in this building; add the area "
                "column (or use fixture_id) to say which",
            )
        return matches[0]

    return find


def _same_test_key(fixture_id: str, values: dict[str, Any]) -> tuple[Any, ...]:
    return (
        fixture_id,
        values["kind"],
        values["tested_on"],
        values["result"],
        str(values["tested_by"]).casefold(),
        values.get("observed_duration_min"),
    )


def import_tests(
    *,
    session: Session,
    org_id: str,
    user: User,
    building_id: str,
    text: str,
    confirm: bool,
    on: date,
) -> schemas.ImportReport:
    """Check a CSV of past tests row by row; with ``confirm``, keep the good rows.

    Without ``confirm`` nothing is written (the preview). A row that repeats
    a test already in the log, or an earlier row of the file, is reported as
    a duplicate and not kept. Corrections are not imported: make them in the
    log, where the record they correct is at hand.
    """
    logs = building_logs(session=session, org_id=org_id, building_id=building_id)
    try:
        rows = csvio.read_csv(text)
    except csvio.CsvFileError as exc:
        raise InvalidInput("file", str(exc)) from None
    find = _fixture_finder(logs)
    seen = {
        _same_test_key(log.fixture.id, _values_of(record))
        for log in logs
        for record in log.standing
    }
    report_rows: list[schemas.ImportRowRead] = []
    good: list[tuple[FixtureLog, dict[str, Any]]] = []
    for row in rows:
        cells = row.cells
        shown = schemas.ImportRowRead(
            line=row.line,
            status="ok",
            fixture_tag=cells.get("fixture_tag", ""),
            kind=cells.get("kind", ""),
            tested_on=cells.get("tested_on", ""),
            result=cells.get("result", ""),
        )
        report_rows.append(shown)
        fields, problems = csvio.record_fields(cells)
        try:
            if problems:
                name, message = next(iter(problems.items()))
                raise InvalidInput(name, message)
            log = find(cells)
            shown.fixture_tag = log.fixture.tag
            data = TestRecordCreate.model_validate(fields)
            check_against_log(session, org_id=org_id, log=log, data=data, on=on)
        except InvalidInput as exc:
            shown.status, shown.message = "error", f"{exc.field}: {exc.message}"
            continue
        except ValidationError as exc:
            shown.status, shown.message = "error", _first_error(exc)
            continue
        values = _values(data, required_min=log.area.required_duration_min)
        key = _same_test_key(log.fixture.id, values)
        if key in seen:
            shown.status, shown.message = "duplicate", "this test is already in the log"
            continue
        seen.add(key)
        good.append((log, values))
    saved = 0
    if confirm and good:
        batch_id = str(uuid.uuid4())
        for log, values in good:
            _add_record(
                session,
                org_id=org_id,
                user=user,
                fixture_id=log.fixture.id,
                values=values,
                record_id=None,
                batch_id=batch_id,
            )
        session.commit()
        saved = len(good)
    return schemas.ImportReport(
        confirmed=confirm,
        saved=saved,
        ok=len(good),
        errors=sum(1 for row in report_rows if row.status == "error"),
        duplicates=sum(1 for row in report_rows if row.status == "duplicate"),
        rows=report_rows,
    )


def _values_of(record: TestRecord) -> dict[str, Any]:
    return {
        "kind": record.kind,
        "tested_on": record.tested_on,
        "result": record.result,
        "tested_by": record.tested_by,
        "observed_duration_min": record.observed_duration_min,
    }


def _first_error(exc: ValidationError) -> str:
    error = exc.errors()[0]
    loc = [str(part) for part in error.get("loc", ()) if isinstance(part, str)]
    message = friendly_message(error)
    head, sep, _ = str(error.get("msg", "")).removeprefix("Value error, ").partition(": ")
    name = loc[0] if loc else (head if sep else "row")
    return f"{name}: {message}"
