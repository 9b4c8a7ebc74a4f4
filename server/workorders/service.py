"""Work orders: issued from an accepted quote, a task per fixture, ticked off by the crew.

The wiring notes, commissioning checks, sketches and pack labels are made
here from the fixture, its proposal's findings, the module and the pack, so
the crew's tablet page and the printed order say the same thing.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from datetime import date, timedelta
from enum import StrEnum
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session
from sqlalchemy.orm.attributes import set_committed_value

from server.accounts.models import Organisation, Role, User, role_at_least
from server.audit import service as audit
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common.crud import get_owned
from server.common.errors import Conflict, Forbidden, InvalidInput, NotFound
from server.common.labels import label
from server.config import Settings
from server.db import utcnow
from server.engineering import batteries, calculators
from server.engineering.errors import InvalidInput as EngineeringInvalidInput
from server.engineering.vocabulary import BallastTech, Changeover, Chemistry, Wiring
from server.escape import service as escape_routes
from server.proposals import service as proposals_service
from server.proposals.models import Proposal
from server.quotes import service as quotes
from server.quotes.models import Quote, QuoteState
from server.sites.models import Area, Building, Fixture
from server.workorders import schemas
from server.workorders.models import WorkOrder, WorkOrderTask

ISSUED = "issued"
COMPLETED = "completed"
FIXTURE_PAGE_PATH = "/fixtures/{fixture_id}"
"""The fixture's page in the app, opened by the QR code on the work order."""


# --- what kind of conversion, and what to tell the crew -------------------


class ConversionKind(StrEnum):
    SINGLE = "single"
    SERIES = "series"
    PARALLEL = "parallel"
    GLOW_STARTER = "glow-starter"


KIND_TITLES = {
    ConversionKind.SINGLE: "Single lamp",
    ConversionKind.SERIES: "Two lamps in series",
    ConversionKind.PARALLEL: "Lamps in parallel",
    ConversionKind.GLOW_STARTER: "Glow-starter circuit",
}


@dataclass(frozen=True, slots=True, order=True)
class Conversion:
    """One kind of conversion on an order; each has its own wiring sketch."""

    kind: ConversionKind
    new_feed: bool

    @property
    def title(self) -> str:
        feed = "new unswitched feed" if self.new_feed else "unswitched supply present"
        return f"{KIND_TITLES[self.kind]}, {feed}"


def conversion_of(fixture: Fixture) -> Conversion:
    if fixture.ballast == BallastTech.MAGNETIC_GLOW_STARTER.value:
        kind = ConversionKind.GLOW_STARTER
    elif fixture.wiring == Wiring.SERIES.value:
        kind = ConversionKind.SERIES
    elif fixture.wiring == Wiring.PARALLEL.value and fixture.lamp_count > 1:
        kind = ConversionKind.PARALLEL
    else:
        kind = ConversionKind.SINGLE
    return Conversion(kind, new_feed=not fixture.unswitched_supply)


def _lamps(numbers: list[int]) -> str:
    if len(numbers) == 1:
        return f"lamp {numbers[0]}"
    return "lamps " + ", ".join(str(n) for n in numbers[:-1]) + f" and {numbers[-1]}"


HANDLED_CODES = frozenset(
    {"wiring.series-link", "supply.unswitched-missing", "ballast.glow-starter"}
)


def wiring_notes(
    fixture: Fixture,
    module: EmergencyModule,
    findings: list[dict[str, Any]],
    *,
    override_reason: str = "",
) -> list[str]:
    """What the crew must do at this fixture, in plain words, from the fixture and findings."""
    notes: list[str] = []
    codes = {str(finding.get("code", "")) for finding in findings}
    both_ends = module.changeover == Changeover.BOTH_ENDS.value
    ends = "both ends" if both_ends else "one end, as the module's diagram shows"
    conversion = conversion_of(fixture)
    count = max(fixture.lamp_count, 1)
    if fixture.wiring == Wiring.SERIES.value:
        dark = _lamps(list(range(2, count + 1)))
        notes.append(
            f"Two lamps in series: break the series link and run the module on lamp 1, both "
            f"ends; {dark} {'stays' if count == 2 else 'stay'} dark in emergency."
        )
    elif count > 1:
        backed = max(1, min(fixture.lamps_to_back_up, module.max_lamps))
        lit = _lamps(list(range(1, backed + 1)))
        note = f"Lamps in parallel: run the module on {lit}, {ends}"
        if backed < count:
            dark = _lamps(list(range(backed + 1, count + 1)))
            note += f"; {dark} {'stays' if count - backed == 1 else 'stay'} dark in emergency"
        notes.append(note + ".")
    else:
        notes.append(f"Single lamp: take the lamp leads through the module's changeover, {ends}.")
    if conversion.kind is ConversionKind.GLOW_STARTER or "ballast.glow-starter" in codes:
        notes.append(
            "Glow starter: isolate the starter in emergency mode: wire it through the module's "
            "changeover contacts (or remove it, as the module's diagram shows)."
        )
    if conversion.new_feed or "supply.unswitched-missing" in codes:
        notes.append(
            "No unswitched supply: take one from the area's lighting circuit ahead of the "
            "switch to the module's charger; the switched live stays on the ballast."
        )
    else:
        notes.append(
            "Unswitched live is there: connect it to the module's charger; the switched live "
            "stays on the ballast."
        )
    if fixture.existing_kit:
        notes.append(
            "An emergency kit is fitted now: take it out with its pack, and recycle the old "
            "pack as the local rules require."
        )
    if not fixture.accessible:
        notes.append(
            "Not accessible at the survey: check lamp, ballast and wiring when you open it; "
            "stop and call the supervisor if they differ from this order."
        )
    for finding in findings:
        code = str(finding.get("code", ""))
        if code in HANDLED_CODES:
            continue
        if finding.get("severity") in ("action", "warn") and finding.get("fix"):
            notes.append(f"{finding.get('message', '')} {finding.get('fix', '')}".strip())
    if override_reason:
        notes.append(
            f"Quoted although a check fails ({override_reason}): confirm with the supervisor "
            "before fitting."
        )
    return notes


def recharge_hours(pack: BatteryPack, module: EmergencyModule) -> float | None:
    """Hours to recharge the pack from flat on the module's charge current (engineering core)."""
    try:
        return calculators.recharge_calc(
            Chemistry(pack.chemistry), pack.cells, pack.capacity_ah, module.charge_a
        ).hours
    except (EngineeringInvalidInput, ValueError):
        return None


def commissioning_checks(required_min: float, recharge_h: float | None) -> list[str]:
    """The three commissioning checks, with the charge time before the duration test."""
    if recharge_h is None:
        wait = "24 h on charge (recharge time not computed)"
    else:
        wait = f"{math.ceil(recharge_h)} h on charge (computed {recharge_h:.1f} h)"
    return [
        "Charge indicator on, mains restored.",
        "Function test: lamp lights on battery.",
        f"Full-duration test after {wait}: {required_min:.0f} min needed; ran ____ min.",
    ]


def pack_life_years(pack: BatteryPack, ambient_c: float) -> float:
    """The pack's expected life at the fixture's ambient, shortened above its marking."""
    return proposals_service.engine_pack(pack).service_life_years_at(ambient_c)


def replace_by(installed_on: date, life_years: float) -> date:
    return installed_on + timedelta(days=math.floor(life_years * 365.25))


# --- reading ---------------------------------------------------------------


def _require_role(user: User, needed: Role, verb: str) -> None:
    if not role_at_least(user.role_enum, needed):
        raise Forbidden(
            f"Your role ({user.role}) cannot {verb}: only a {needed.value} or above may."
        )


def get_work_order(*, session: Session, user: User, work_order_id: str) -> WorkOrder:
    order = get_owned(session, WorkOrder, org_id=user.org_id, record_id=work_order_id)
    tasks = list(
        session.scalars(select(WorkOrderTask).where(WorkOrderTask.work_order_id == order.id))
    )
    set_committed_value(order, "tasks", tasks)
    return order


@dataclass(slots=True)
class _Context:
    """The rows around a work order's tasks, loaded in a few queries."""

    building: Building
    quote: Quote
    fixtures: dict[str, Fixture]
    areas: dict[str, Area]
    proposals: dict[str, Proposal]
    modules: dict[str, EmergencyModule]
    packs: dict[str, BatteryPack]
    users: dict[str, str]


def _by_id(session: Session, model: Any, ids: set[str]) -> dict[str, Any]:
    if not ids:
        return {}
    return {row.id: row for row in session.scalars(select(model).where(model.id.in_(ids)))}


def _context(session: Session, order: WorkOrder) -> _Context:
    fixtures = _by_id(session, Fixture, {task.fixture_id for task in order.tasks})
    proposals = {
        p.fixture_id: p
        for p in session.scalars(select(Proposal).where(Proposal.fixture_id.in_(fixtures)))
    }
    user_ids = {order.issued_by, order.signed_off_by, *(t.done_by for t in order.tasks)}
    users = {
        row.id: row.name or row.email
        for row in session.scalars(select(User).where(User.id.in_(user_ids - {None})))
    }
    building = session.get(Building, order.building_id)
    quote = session.get(Quote, order.quote_id)
    assert building is not None and quote is not None
    return _Context(
        building=building,
        quote=quote,
        fixtures=fixtures,
        areas=_by_id(session, Area, {f.area_id for f in fixtures.values()}),
        proposals=proposals,
        modules=_by_id(session, EmergencyModule, {p.module_id for p in proposals.values()}),
        packs=_by_id(session, BatteryPack, {p.pack_id for p in proposals.values()}),
        users=users,
    )


def _ordered_tasks(order: WorkOrder, context: _Context) -> list[WorkOrderTask]:
    def key(task: WorkOrderTask) -> tuple[str, str, str, str]:
        fixture = context.fixtures[task.fixture_id]
        area = context.areas[fixture.area_id]
        return (area.floor, area.name, fixture.tag, fixture.id)

    return sorted(order.tasks, key=key)


def progress_of(order: WorkOrder) -> schemas.Progress:
    counts: dict[str, int] = defaultdict(int)
    for task in order.tasks:
        counts[task.status] += 1
    return schemas.Progress(
        total=len(order.tasks),
        open=counts["open"],
        done=counts["done"],
        problem=counts["problem"],
    )


def _task_read(
    task: WorkOrderTask, fixture: Fixture, area: Area, done_by_name: str | None
) -> schemas.TaskRead:
    return schemas.TaskRead(
        id=task.id,
        version=task.version,
        fixture_id=fixture.id,
        tag=fixture.tag,
        area=area.name,
        location=fixture.location,
        status=task.status,  # type: ignore[arg-type]
        wiring_notes=list(task.wiring_notes or []),
        charge_indicator_ok=task.charge_indicator_ok,
        function_test_ok=task.function_test_ok,
        duration_test_min=task.duration_test_min,
        required_duration_min=area.required_duration_min,
        problem=task.problem,
        done_by_name=done_by_name,
        done_at=task.done_at,
    )


def _task_in(task: WorkOrderTask, context: _Context) -> schemas.TaskRead:
    fixture = context.fixtures[task.fixture_id]
    return _task_read(
        task,
        fixture,
        context.areas[fixture.area_id],
        context.users.get(task.done_by) if task.done_by else None,
    )


def task_read(*, session: Session, task: WorkOrderTask) -> schemas.TaskRead:
    """One task as the API shows it, after an update."""
    fixture = session.get(Fixture, task.fixture_id)
    assert fixture is not None
    area = session.get(Area, fixture.area_id)
    assert area is not None
    done_by = session.get(User, task.done_by) if task.done_by else None
    return _task_read(task, fixture, area, (done_by.name or done_by.email) if done_by else None)


def read_work_order(*, session: Session, order: WorkOrder) -> schemas.WorkOrderRead:
    context = _context(session, order)
    return schemas.WorkOrderRead(
        id=order.id,
        version=order.version,
        number=order.number,
        state=order.state,  # type: ignore[arg-type]
        quote_id=order.quote_id,
        quote_number=context.quote.number,
        building_id=order.building_id,
        building_name=context.building.name,
        crew=order.crew,
        scheduled_on=order.scheduled_on,
        crew_notes=order.crew_notes,
        issued_by_name=context.users.get(order.issued_by) if order.issued_by else None,
        issued_at=order.issued_at,
        signed_off_by_name=context.users.get(order.signed_off_by) if order.signed_off_by else None,
        signed_off_at=order.signed_off_at,
        progress=progress_of(order),
        tasks=[_task_in(task, context) for task in _ordered_tasks(order, context)],
        created_at=order.created_at,
        updated_at=order.updated_at,
    )


def list_work_orders(
    *, session: Session, user: User, state: str | None = None, limit: int = 50, offset: int = 0
) -> schemas.WorkOrderPage:
    conditions = [WorkOrder.org_id == user.org_id]
    if state:
        conditions.append(WorkOrder.state == state)
    total = session.scalar(select(func.count()).select_from(WorkOrder).where(*conditions)) or 0
    orders = list(
        session.scalars(
            select(WorkOrder)
            .where(*conditions)
            .order_by(WorkOrder.created_at.desc(), WorkOrder.id)
            .limit(limit)
            .offset(offset)
        )
    )
    names = dict(
        session.execute(
            select(Building.id, Building.name).where(
                Building.id.in_({o.building_id for o in orders})
            )
        ).all()
    )
    numbers = dict(
        session.execute(
            select(Quote.id, Quote.number).where(Quote.id.in_({o.quote_id for o in orders}))
        ).all()
    )
    statuses: dict[str, list[str]] = defaultdict(list)
    for order_id, status in session.execute(
        select(WorkOrderTask.work_order_id, WorkOrderTask.status).where(
            WorkOrderTask.work_order_id.in_({o.id for o in orders})
        )
    ):
        statuses[order_id].append(status)
    items = [
        schemas.WorkOrderSummary(
            id=order.id,
            number=order.number,
            state=order.state,
            building_name=names.get(order.building_id, ""),
            quote_number=numbers.get(order.quote_id, ""),
            scheduled_on=order.scheduled_on,
            progress=schemas.Progress(
                total=len(statuses[order.id]),
                open=statuses[order.id].count("open"),
                done=statuses[order.id].count("done"),
                problem=statuses[order.id].count("problem"),
            ),
        )
        for order in orders
    ]
    return schemas.WorkOrderPage(items=items, total=total, limit=limit, offset=offset)


# --- changing --------------------------------------------------------------


def _audit(session: Session, user: User, record: Any, action: str, changes: dict[str, Any]) -> None:
    audit.record(
        session=session,
        user=user,
        org_id=record.org_id,
        entity=record.__tablename__,
        entity_id=record.id,
        action=action,
        changes=changes,
    )


def issue(
    *,
    session: Session,
    user: User,
    quote_id: str,
    body: schemas.WorkOrderIssue | None = None,
) -> tuple[WorkOrder, bool]:
    """Issue the work order of an accepted quote: a task per quoted fixture.

    Issuing again answers the order already issued (idempotent).
    """
    body = body or schemas.WorkOrderIssue()
    quote = quotes.get_quote(session=session, user=user, quote_id=quote_id)
    existing = session.scalar(select(WorkOrder).where(WorkOrder.quote_id == quote.id))
    if existing is not None:
        return get_work_order(session=session, user=user, work_order_id=existing.id), False
    _require_role(user, Role.SUPERVISOR, "issue a work order")
    if quote.state != QuoteState.ACCEPTED:
        raise Conflict(
            f"Quote {quote.number} is {quote.state}: a work order is issued only from an "
            "accepted quote.",
            current={"state": quote.state, "allowed": list(quotes.TRANSITIONS[quote.state])},
        )
    fixture_ids = list(dict.fromkeys(line.fixture_id for line in quote.lines if line.fixture_id))
    if not fixture_ids:
        raise InvalidInput("quote_id", "the quote has no fixture to convert")
    fixtures = _by_id(session, Fixture, set(fixture_ids))
    proposals = {
        p.fixture_id: p
        for p in session.scalars(select(Proposal).where(Proposal.fixture_id.in_(fixtures)))
    }
    modules = _by_id(session, EmergencyModule, {p.module_id for p in proposals.values()})
    overrides = {
        line.fixture_id: line.override_reason
        for line in quote.lines
        if line.fixture_id and line.override_reason
    }
    now = utcnow()
    order = WorkOrder(
        org_id=user.org_id,
        quote_id=quote.id,
        building_id=quote.building_id,
        number=quotes.next_number(session, org_id=user.org_id, model=WorkOrder, prefix="WO"),
        state=ISSUED,
        crew=body.crew,
        scheduled_on=body.scheduled_on,
        crew_notes=body.crew_notes,
        issued_by=user.id,
        issued_at=now,
    )
    if body.id is not None:
        order.id = str(body.id)
    session.add(order)
    session.flush()
    tasks = []
    for fixture_id in fixture_ids:
        fixture = fixtures.get(fixture_id)
        proposal = proposals.get(fixture_id)
        if fixture is None or proposal is None:
            continue
        tasks.append(
            WorkOrderTask(
                org_id=user.org_id,
                work_order_id=order.id,
                fixture_id=fixture.id,
                proposal_id=proposal.id,
                wiring_notes=wiring_notes(
                    fixture,
                    modules[proposal.module_id],
                    list(proposal.findings or []),
                    override_reason=overrides.get(fixture.id, ""),
                ),
                status="open",
                readings={},
            )
        )
    session.add_all(tasks)
    quotes.set_state(session=session, user=user, quote=quote, to=QuoteState.ISSUED)
    _audit(
        session,
        user,
        order,
        "create",
        {"quote_id": quote.id, "number": order.number, "tasks": len(tasks)},
    )
    session.commit()
    return get_work_order(session=session, user=user, work_order_id=order.id), True


def _require_issued(order: WorkOrder) -> None:
    if order.state != ISSUED:
        raise Conflict(
            f"Work order {order.number} is {order.state}: it can no longer be changed.",
            current={"state": order.state, "version": order.version},
        )


def update_work_order(
    *, session: Session, user: User, work_order_id: str, body: schemas.WorkOrderUpdate
) -> WorkOrder:
    _require_role(user, Role.SUPERVISOR, "change a work order")
    order = get_work_order(session=session, user=user, work_order_id=work_order_id)
    requested = body.model_dump(exclude_unset=True, exclude={"version"})
    for name in ("crew", "crew_notes"):
        if name in requested and requested[name] is None:
            requested[name] = ""
    if all(getattr(order, name) == value for name, value in requested.items()):
        return order
    _require_issued(order)
    if body.version != order.version:
        raise Conflict(
            f"Someone else changed work order {order.number} first (you edited version "
            f"{body.version}, it is now at version {order.version}). Nothing was changed.",
            current={"crew": order.crew, "version": order.version},
        )
    changes = {name: [getattr(order, name), value] for name, value in requested.items()}
    for name, value in requested.items():
        setattr(order, name, value)
    _audit(session, user, order, "update", changes)
    session.commit()
    return get_work_order(session=session, user=user, work_order_id=order.id)


TASK_FIELDS = ("status", "charge_indicator_ok", "function_test_ok", "duration_test_min", "problem")


def update_task(
    *,
    session: Session,
    user: User,
    work_order_id: str,
    task_id: str,
    body: schemas.TaskUpdate,
) -> WorkOrderTask:
    """Tick a fixture done with its readings, record a problem, or reopen it.

    Sending the same update again changes nothing (a retry from a tablet on a
    weak signal); an update made on an old version of the task is refused
    with the task as it is now.
    """
    order = get_work_order(session=session, user=user, work_order_id=work_order_id)
    task = next((t for t in order.tasks if t.id == task_id), None)
    if task is None:
        raise NotFound("WorkOrderTask")
    wanted = {name: getattr(body, name) for name in TASK_FIELDS}
    wanted["problem"] = body.problem.strip() if body.status == "problem" else ""
    if all(getattr(task, name) == value for name, value in wanted.items()):
        return task
    _require_issued(order)
    if body.version != task.version:
        context = _context(session, order)
        raise Conflict(
            f"Someone else saved fixture {context.fixtures[task.fixture_id].tag} first (you "
            f"edited version {body.version}, it is now at version {task.version}). Nothing was "
            "changed; check what is stored and send your readings again.",
            current=_task_in(task, context).model_dump(mode="json"),
        )
    fixture = session.get(Fixture, task.fixture_id)
    assert fixture is not None
    area = session.get(Area, fixture.area_id)
    assert area is not None
    if (
        body.status == "done"
        and body.duration_test_min is not None
        and body.duration_test_min < area.required_duration_min
    ):
        raise InvalidInput(
            "duration_test_min",
            f"{body.duration_test_min:g} min is short of the {area.required_duration_min:.0f} min "
            "this area needs: record a problem instead (or leave it empty until the "
            "full-duration test is run)",
        )
    changes = {name: [getattr(task, name), value] for name, value in wanted.items()}
    for name, value in wanted.items():
        setattr(task, name, value)
    task.readings = {
        "charge_indicator_ok": body.charge_indicator_ok,
        "function_test_ok": body.function_test_ok,
        "duration_test_min": body.duration_test_min,
        "recorded_at": utcnow().isoformat(),
    }
    if body.status == "open":
        task.done_by, task.done_at = None, None
    else:
        task.done_by, task.done_at = user.id, utcnow()
    if body.status == "done" and fixture.commissioned_on is None:
        fixture.commissioned_on = date.today()
        _audit(session, user, fixture, "update", {"commissioned_on": [None, date.today()]})
    _audit(session, user, task, "update", changes)
    session.commit()
    return task


def complete(
    *, session: Session, user: User, work_order_id: str, version: int | None = None
) -> WorkOrder:
    """Close the order and sign it off; every task must be done."""
    _require_role(user, Role.SUPERVISOR, "complete a work order")
    order = get_work_order(session=session, user=user, work_order_id=work_order_id)
    if order.state == COMPLETED:
        return order
    if version is not None and version != order.version:
        raise Conflict(
            f"Work order {order.number} changed (now version {order.version}); it was not "
            "completed.",
            current={"state": order.state, "version": order.version},
        )
    progress = progress_of(order)
    if progress.done != progress.total:
        raise Conflict(
            f"Work order {order.number} has {progress.open} open and {progress.problem} "
            "problem fixture(s): every fixture must be done before it is completed.",
            current=progress.model_dump(),
        )
    now = utcnow()
    order.state = COMPLETED
    order.signed_off_by, order.signed_off_at = user.id, now
    quote = quotes.get_quote(session=session, user=user, quote_id=order.quote_id)
    quotes.set_state(session=session, user=user, quote=quote, to=QuoteState.COMPLETED)
    _audit(session, user, order, "complete", {"state": [ISSUED, COMPLETED]})
    session.commit()
    return get_work_order(session=session, user=user, work_order_id=order.id)


# --- the crew's PDF --------------------------------------------------------


@dataclass(frozen=True, slots=True)
class FixtureRow:
    tag: str
    location: str
    now: str
    fit: str
    wiring_notes: list[str]
    checks: list[str]
    sketch_number: int
    page_url: str
    status: str
    result: str
    survey_note: str = ""


@dataclass(frozen=True, slots=True)
class AreaBlock:
    title: str
    required_duration_min: float
    rows: list[FixtureRow]
    route_plot: escape_routes.RoutePlotView | None = None  # light along its escape route


@dataclass(frozen=True, slots=True)
class PackLabel:
    tag: str
    pack: str
    installed_on: date
    planned: bool
    replace_by: date
    life_years: float


@dataclass(frozen=True, slots=True)
class WorkOrderSheet:
    """Everything the work-order PDF prints, ready to lay out."""

    number: str
    quote_number: str
    building_name: str
    building_address: str
    firm_name: str
    paper_size: str
    crew: str
    scheduled_on: date | None
    crew_notes: str
    issued_by: str
    issued_on: date
    areas: list[AreaBlock]
    conversions: list[tuple[int, Conversion]]
    labels: list[PackLabel]
    progress: schemas.Progress


def _now_text(fixture: Fixture) -> str:
    lamps = f"{fixture.lamp_count} x " if fixture.lamp_count > 1 else ""
    supply = "unswitched live present" if fixture.unswitched_supply else "no unswitched live"
    kit = "; emergency kit fitted" if fixture.existing_kit else ""
    wiring = "" if fixture.lamp_count == 1 else f", {fixture.wiring}"
    return (
        f"{lamps}{fixture.lamp_type} {fixture.lamp_w:g} W{wiring}; "
        f"{label(fixture.ballast, BallastTech).lower()} ballast; {supply}{kit}"
    )


def _pack_text(pack: BatteryPack) -> str:
    per_cell = batteries.CHEMISTRY_DEFAULTS[Chemistry(pack.chemistry)].nominal_v_per_cell
    volts = pack.nominal_v or pack.cells * per_cell
    return (
        f"{pack.name} ({pack.chemistry}, {pack.cells} cells, {volts:g} V, {pack.capacity_ah:g} Ah)"
    )


def work_order_sheet(
    *, session: Session, user: User, order: WorkOrder, settings: Settings
) -> WorkOrderSheet:
    context = _context(session, order)
    org = session.get(Organisation, order.org_id)
    assert org is not None
    base = settings.public_base_url.rstrip("/")
    planned_on = order.scheduled_on or (order.issued_at.date() if order.issued_at else date.today())
    conversions: dict[Conversion, int] = {}
    for task in order.tasks:
        conversions.setdefault(conversion_of(context.fixtures[task.fixture_id]), 0)
    numbered = {conversion: n for n, conversion in enumerate(sorted(conversions), start=1)}
    recharge_cache: dict[tuple[str, str], float | None] = {}
    blocks: dict[str, list[FixtureRow]] = defaultdict(list)
    labels: list[PackLabel] = []
    for task in _ordered_tasks(order, context):
        fixture = context.fixtures[task.fixture_id]
        area = context.areas[fixture.area_id]
        proposal = context.proposals[fixture.id]
        module = context.modules[proposal.module_id]
        pack = context.packs[proposal.pack_id]
        pair = (module.id, pack.id)
        if pair not in recharge_cache:
            recharge_cache[pair] = recharge_hours(pack, module)
        result = ""
        if task.status == "done":
            minutes = (
                f", duration {task.duration_test_min:g} min"
                if task.duration_test_min is not None
                else ""
            )
            result = f"Done{minutes}"
        elif task.status == "problem":
            result = f"Problem: {task.problem}"
        blocks[area.id].append(
            FixtureRow(
                tag=fixture.tag,
                location=fixture.location,
                now=_now_text(fixture),
                fit=f"{module.name} + {_pack_text(pack)}",
                wiring_notes=list(task.wiring_notes or []),
                checks=commissioning_checks(area.required_duration_min, recharge_cache[pair]),
                sketch_number=numbered[conversion_of(fixture)],
                page_url=base + FIXTURE_PAGE_PATH.format(fixture_id=fixture.id),
                status=task.status,
                result=result,
                survey_note=fixture.notes,
            )
        )
        done_on = task.done_at.date() if task.status == "done" and task.done_at else None
        life = pack_life_years(pack, fixture.ambient_c)
        installed = done_on or planned_on
        labels.append(
            PackLabel(
                tag=fixture.tag,
                pack=_pack_text(pack),
                installed_on=installed,
                planned=done_on is None,
                replace_by=replace_by(installed, life),
                life_years=life,
            )
        )
    areas = sorted(context.areas.values(), key=lambda a: (a.floor, a.name, a.id))
    plots = escape_routes.route_plots(
        session=session, org_id=order.org_id, area_ids=[a.id for a in areas if blocks[a.id]]
    )
    return WorkOrderSheet(
        number=order.number,
        quote_number=context.quote.number,
        building_name=context.building.name,
        building_address=context.building.address,
        firm_name=org.name,
        paper_size=org.paper_size,
        crew=order.crew,
        scheduled_on=order.scheduled_on,
        crew_notes=order.crew_notes,
        issued_by=context.users.get(order.issued_by or "", ""),
        issued_on=order.issued_at.date() if order.issued_at else date.today(),
        areas=[
            AreaBlock(
                title=f"{area.name}" + (f" ({area.floor})" if area.floor else ""),
                required_duration_min=area.required_duration_min,
                rows=blocks[area.id],
                route_plot=plots.get(area.id),
            )
            for area in areas
            if blocks[area.id]
        ],
        conversions=[(n, conversion) for conversion, n in numbered.items()],
        labels=labels,
        progress=progress_of(order),
    )
