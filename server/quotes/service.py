"""The quote builder: lines made from a building's accepted proposals, totals, states.

Money is Decimal throughout. Rounding, in this order (each amount rounded
once, half up to the cent):

1. each line: amount = quantity x unit price, rounded;
2. subtotal = the sum of the line amounts (exact: they are whole cents);
3. markup = subtotal x markup %, rounded;
4. discount = (subtotal + markup) x discount %, rounded;
5. net = subtotal + markup - discount;
6. tax = net x tax %, rounded;
7. total = net + tax.

So subtotal + markup - discount + tax is the total to the cent, always.

The lines a quote is made of, for each fixture quoted:

- the module and the pack (one line per catalogue item, with its count);
- labour: the module's fitting hours (``EmergencyModule.labour_h``), plus
  :data:`DEFAULT_SERIES_LINK_H` where the lamps are in series, plus
  :data:`DEFAULT_COMMISSIONING_H`;
- where the fixture has no permanent unswitched supply, a supply line of
  :data:`DEFAULT_SUPPLY_RUN_H` and :data:`DEFAULT_SUPPLY_RUN_MATERIALS`;
- sundries, :data:`DEFAULT_SUNDRIES_PER_FIXTURE` each.

These allowances are our defaults, kept on each quote and changeable there.
A fixture whose checks fail (or were never run) is quoted only with an
override and its reason, which the labour line carries and the PDF prints.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date, timedelta
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session
from sqlalchemy.orm.attributes import set_committed_value

from server.accounts.models import Organisation, Role, User, role_at_least
from server.audit import service as audit
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common.crud import get_owned
from server.common.errors import Conflict, Forbidden, InvalidInput, NotFound
from server.db import utcnow
from server.engineering.vocabulary import Wiring
from server.proposals.models import Proposal
from server.quotes import schemas
from server.quotes.models import Quote, QuoteLine, QuoteState
from server.sites.models import Area, Building, Fixture

CENT = Decimal("0.01")
HUNDRED = Decimal(100)

# Labour allowances: our defaults, stored on each quote and editable there.
DEFAULT_SERIES_LINK_H = Decimal("0.25")
"""Breaking the series link and taking both ends of lamp 1 through the module's
changeover: opening the gear tray and re-terminating four conductors, about a
quarter hour per fixture (our estimate, common practice; change it per quote)."""
DEFAULT_SUPPLY_RUN_H = Decimal("1.50")
"""A new unswitched feed from the area's lighting circuit ahead of the switch:
isolating, finding the circuit, a few metres of cable in an accessible ceiling
and terminating both ends (our estimate for an open ceiling; long or concealed
runs need more, set per quote)."""
DEFAULT_COMMISSIONING_H = Decimal("0.50")
"""Commissioning each converted fixture: charge indicator, function test,
and its share of the return visit for the full-duration test after the
recharge time (our estimate)."""
DEFAULT_SUNDRIES_PER_FIXTURE = Decimal("6.00")
"""Connectors, fixings, cable ties and the pack label, per fixture (our default)."""
DEFAULT_SUPPLY_RUN_MATERIALS = Decimal("18.00")
"""Cable, clips and a junction box for one new unswitched feed (our default)."""
DEFAULT_VALID_DAYS = 30
"""How long a new quote's prices hold (our default; editable per quote)."""

TRANSITIONS: dict[str, tuple[str, ...]] = {
    QuoteState.DRAFT: (QuoteState.SENT,),
    QuoteState.SENT: (QuoteState.ACCEPTED, QuoteState.DECLINED),
    QuoteState.ACCEPTED: (QuoteState.ISSUED,),
    QuoteState.DECLINED: (),
    QuoteState.ISSUED: (QuoteState.COMPLETED,),
    QuoteState.COMPLETED: (),
}
# Who may move a quote into each state.
ROLE_FOR_STATE: dict[str, Role] = {
    QuoteState.SENT: Role.ESTIMATOR,
    QuoteState.DECLINED: Role.ESTIMATOR,
    QuoteState.ACCEPTED: Role.SUPERVISOR,
    QuoteState.ISSUED: Role.SUPERVISOR,
    QuoteState.COMPLETED: Role.SUPERVISOR,
}
STATE_VERBS = {
    QuoteState.SENT: "send a quote",
    QuoteState.DECLINED: "record that the client declined",
    QuoteState.ACCEPTED: "accept a quote for the firm",
    QuoteState.ISSUED: "issue a work order",
    QuoteState.COMPLETED: "complete a work order",
}
TEXT_SETTINGS = ("client_name", "client_address", "client_contact", "scope", "assumptions")
# Settings whose change re-prices the generated lines.
PRICING_SETTINGS = frozenset(
    {
        "labour_rate",
        "series_link_h",
        "supply_run_h",
        "commissioning_h",
        "sundries_per_fixture",
        "supply_run_materials",
    }
)


# --- money -----------------------------------------------------------------


def to_cents(value: Decimal) -> Decimal:
    """``value`` rounded half up to the cent (2.345 -> 2.35; -2.345 -> -2.35)."""
    return value.quantize(CENT, rounding=ROUND_HALF_UP)


def decimal_of(value: float | Decimal, places: str = "0.01") -> Decimal:
    """A catalogue float as the decimal it was typed as (1.1 -> 1.10)."""
    if isinstance(value, Decimal):
        return value
    return Decimal(repr(float(value))).quantize(Decimal(places), rounding=ROUND_HALF_UP)


def plain(value: Decimal) -> str:
    """A percentage or quantity without trailing zeros: 8.25 -> "8.25", 10.00 -> "10"."""
    return format(value.normalize(), "f")


def line_amount(quantity: Decimal, unit_price: Decimal) -> Decimal:
    return to_cents(quantity * unit_price)


@dataclass(frozen=True, slots=True)
class Totals:
    subtotal: Decimal
    markup: Decimal
    discount: Decimal
    net: Decimal
    tax: Decimal
    total: Decimal


def totals_of(
    amounts: Iterable[Decimal], *, markup_pct: Decimal, discount_pct: Decimal, tax_pct: Decimal
) -> Totals:
    """A quote's totals from its line amounts, in the order the module docstring gives."""
    subtotal = sum(amounts, Decimal("0.00"))
    markup = to_cents(subtotal * markup_pct / HUNDRED)
    discount = to_cents((subtotal + markup) * discount_pct / HUNDRED)
    net = subtotal + markup - discount
    tax = to_cents(net * tax_pct / HUNDRED)
    return Totals(
        subtotal=subtotal, markup=markup, discount=discount, net=net, tax=tax, total=net + tax
    )


# --- what can be quoted ----------------------------------------------------


@dataclass(frozen=True, slots=True)
class Candidate:
    """A fixture with an accepted proposal, and what its checks said."""

    fixture: Fixture
    area: Area
    proposal: Proposal
    module: EmergencyModule
    pack: BatteryPack

    @property
    def checks_pass(self) -> bool:
        return self.proposal.verdict in ("pass", "warn")

    @property
    def failure_reasons(self) -> list[str]:
        if self.proposal.verdict is None:
            return ["The checks were not run for this fixture's proposal."]
        return [
            str(finding.get("message", ""))
            for finding in self.proposal.findings or []
            if finding.get("severity") == "fail"
        ] or ["The checks failed."]


@dataclass(slots=True)
class Survey:
    """A building as surveyed: its areas, fixtures and accepted proposals."""

    building: Building
    areas: dict[str, Area]
    fixtures: list[Fixture]
    candidates: dict[str, Candidate] = field(default_factory=dict)


def load_survey(session: Session, *, org_id: str, building: Building) -> Survey:
    areas = {
        area.id: area
        for area in session.scalars(
            select(Area)
            .where(Area.org_id == org_id, Area.building_id == building.id)
            .order_by(Area.floor, Area.name, Area.id)
        )
    }
    fixtures = list(
        session.scalars(
            select(Fixture)
            .where(Fixture.org_id == org_id, Fixture.area_id.in_(areas))
            .order_by(Fixture.tag, Fixture.id)
        )
    )
    survey = Survey(building=building, areas=areas, fixtures=fixtures)
    by_id = {fixture.id: fixture for fixture in fixtures}
    proposals = list(
        session.scalars(
            select(Proposal).where(
                Proposal.org_id == org_id,
                Proposal.fixture_id.in_(by_id),
                Proposal.status == "accepted",
            )
        )
    )
    modules = _by_id(session, EmergencyModule, {p.module_id for p in proposals})
    packs = _by_id(session, BatteryPack, {p.pack_id for p in proposals})
    for proposal in proposals:
        fixture = by_id[proposal.fixture_id]
        survey.candidates[fixture.id] = Candidate(
            fixture=fixture,
            area=areas[fixture.area_id],
            proposal=proposal,
            module=modules[proposal.module_id],
            pack=packs[proposal.pack_id],
        )
    return survey


def _by_id(session: Session, model: Any, ids: set[str]) -> dict[str, Any]:
    if not ids:
        return {}
    return {row.id: row for row in session.scalars(select(model).where(model.id.in_(ids)))}


# --- making lines ----------------------------------------------------------


@dataclass(frozen=True, slots=True)
class LineSpec:
    kind: str
    description: str
    quantity: Decimal
    unit: str
    unit_price: Decimal
    fixture_id: str | None = None
    item_ref: str | None = None
    override_reason: str = ""

    @property
    def key(self) -> tuple[str, str | None, str | None]:
        """What a hand-edited line stands in for when the lines are made again."""
        return (self.kind, self.fixture_id, self.item_ref)


def _hours(value: Decimal) -> str:
    return f"{value:.2f} h"


def generated_lines(
    quote: Quote, candidates: Sequence[Candidate], overrides: dict[str, str]
) -> list[LineSpec]:
    """The lines for ``candidates``; a failing one only with a reason in ``overrides``."""
    quoted = [c for c in candidates if c.checks_pass or overrides.get(c.fixture.id)]
    quoted.sort(key=lambda c: (c.area.floor, c.area.name, c.fixture.tag, c.fixture.id))
    lines: list[LineSpec] = []
    module_counts: dict[str, int] = defaultdict(int)
    pack_counts: dict[str, int] = defaultdict(int)
    modules: dict[str, EmergencyModule] = {}
    packs: dict[str, BatteryPack] = {}
    for candidate in quoted:
        module_counts[candidate.module.id] += 1
        pack_counts[candidate.pack.id] += 1
        modules[candidate.module.id] = candidate.module
        packs[candidate.pack.id] = candidate.pack
    for module_id, count in sorted(module_counts.items(), key=lambda i: modules[i[0]].name):
        module = modules[module_id]
        lines.append(
            LineSpec(
                "material",
                f"Emergency module: {module.name}",
                Decimal(count),
                "ea",
                module.price,
                item_ref=module_id,
            )
        )
    for pack_id, count in sorted(pack_counts.items(), key=lambda i: packs[i[0]].name):
        pack = packs[pack_id]
        lines.append(
            LineSpec(
                "material",
                f"Battery pack: {pack.name}",
                Decimal(count),
                "ea",
                pack.price,
                item_ref=pack_id,
            )
        )
    feeds = 0
    for candidate in quoted:
        fixture = candidate.fixture
        fit_h = decimal_of(candidate.module.labour_h)
        parts = [f"fit module and pack {_hours(fit_h)}"]
        hours = fit_h
        if fixture.wiring == Wiring.SERIES.value:
            hours += quote.series_link_h
            parts.append(f"break series link {_hours(quote.series_link_h)}")
        hours += quote.commissioning_h
        parts.append(f"commissioning tests {_hours(quote.commissioning_h)}")
        where = f"{fixture.tag} ({candidate.area.name})"
        lines.append(
            LineSpec(
                "labour",
                f"Convert {where}: " + ", ".join(parts),
                hours,
                "h",
                quote.labour_rate,
                fixture_id=fixture.id,
                override_reason="" if candidate.checks_pass else overrides[fixture.id],
            )
        )
        if not fixture.unswitched_supply:
            feeds += 1
            lines.append(
                LineSpec(
                    "supply",
                    f"New unswitched feed to {where} from the area's lighting circuit, "
                    "ahead of the switch",
                    quote.supply_run_h,
                    "h",
                    quote.labour_rate,
                    fixture_id=fixture.id,
                )
            )
    if quoted:
        lines.append(
            LineSpec(
                "sundry",
                "Sundries per fixture: connectors, fixings, cable ties, pack label",
                Decimal(len(quoted)),
                "ea",
                quote.sundries_per_fixture,
                item_ref="per-fixture",
            )
        )
    if feeds:
        lines.append(
            LineSpec(
                "sundry",
                "Cable, clips and junction box per new unswitched feed",
                Decimal(feeds),
                "ea",
                quote.supply_run_materials,
                item_ref="per-feed",
            )
        )
    return lines


def _rebuild(session: Session, quote: Quote, survey: Survey, overrides: dict[str, str]) -> None:
    """Replace the generated lines; hand-edited and hand-added lines stay as they are.

    A hand-edited line keeps the place of the generated line it stands in for;
    lines added by hand follow, in their old order.
    """
    kept = {}
    for line in quote.lines:
        if line.hand_edited:
            kept[(line.kind, line.fixture_id, line.item_ref)] = line
        else:
            session.delete(line)
    ordered: list[QuoteLine] = []
    for spec in generated_lines(quote, list(survey.candidates.values()), overrides):
        stand_in = kept.pop(spec.key, None)
        if stand_in is not None:
            ordered.append(stand_in)
            continue
        line = QuoteLine(
            quote_id=quote.id,
            kind=spec.kind,
            description=spec.description[:500],
            quantity=spec.quantity,
            unit=spec.unit,
            unit_price=spec.unit_price,
            fixture_id=spec.fixture_id,
            item_ref=spec.item_ref,
            override_reason=spec.override_reason,
        )
        session.add(line)
        ordered.append(line)
    ordered += sorted(kept.values(), key=lambda line: line.position)
    for position, line in enumerate(ordered, start=1):
        line.position = position
    session.flush()


def _overrides_on(quote: Quote) -> dict[str, str]:
    return {
        line.fixture_id: line.override_reason
        for line in quote.lines
        if line.fixture_id and line.override_reason
    }


# --- reading ---------------------------------------------------------------


def get_quote(*, session: Session, user: User, quote_id: str) -> Quote:
    quote = get_owned(session, Quote, org_id=user.org_id, record_id=quote_id)
    _load_lines(session, quote)
    return quote


def _load_lines(session: Session, quote: Quote) -> None:
    lines = list(
        session.scalars(
            select(QuoteLine)
            .where(QuoteLine.quote_id == quote.id)
            .order_by(QuoteLine.position, QuoteLine.id)
        )
    )
    set_committed_value(quote, "lines", lines)  # loaded here: the relationship is lazy="raise"


def quote_totals(quote: Quote) -> Totals:
    return totals_of(
        (line_amount(line.quantity, line.unit_price) for line in quote.lines),
        markup_pct=quote.markup_pct,
        discount_pct=quote.discount_pct,
        tax_pct=quote.tax_pct,
    )


def allowed_transitions(quote: Quote, user: User) -> list[str]:
    """The states this user may move the quote to now."""
    return [
        state
        for state in TRANSITIONS[quote.state]
        if role_at_least(user.role_enum, ROLE_FOR_STATE[state])
    ]


def work_order_id_of(session: Session, quote: Quote) -> str | None:
    from server.workorders.models import WorkOrder

    return session.scalar(select(WorkOrder.id).where(WorkOrder.quote_id == quote.id))


def needs_override(quote: Quote, survey: Survey) -> list[schemas.NeedsOverride]:
    """Accepted proposals whose checks fail and which the quote leaves out."""
    quoted = {line.fixture_id for line in quote.lines if line.fixture_id}
    return [
        schemas.NeedsOverride(
            fixture_id=candidate.fixture.id,
            tag=candidate.fixture.tag,
            area=candidate.area.name,
            verdict=candidate.proposal.verdict,
            reasons=candidate.failure_reasons,
        )
        for candidate in sorted(survey.candidates.values(), key=lambda c: c.fixture.tag)
        if not candidate.checks_pass and candidate.fixture.id not in quoted
    ]


def read_quote(*, session: Session, user: User, quote: Quote) -> schemas.QuoteRead:
    """The quote as the API, the pages and the PDF show it."""
    building = session.get(Building, quote.building_id)
    org = session.get(Organisation, quote.org_id)
    assert building is not None and org is not None
    survey = load_survey(session, org_id=user.org_id, building=building)
    tags = {fixture.id: fixture.tag for fixture in survey.fixtures}
    totals = quote_totals(quote)
    return schemas.QuoteRead(
        id=quote.id,
        version=quote.version,
        number=quote.number,
        state=quote.state,  # type: ignore[arg-type]
        building_id=quote.building_id,
        building_name=building.name,
        client_name=quote.client_name,
        client_address=quote.client_address,
        client_contact=quote.client_contact,
        currency=org.currency,
        labour_rate=quote.labour_rate,
        markup_pct=quote.markup_pct,
        discount_pct=quote.discount_pct,
        tax_pct=quote.tax_pct,
        series_link_h=quote.series_link_h,
        supply_run_h=quote.supply_run_h,
        commissioning_h=quote.commissioning_h,
        sundries_per_fixture=quote.sundries_per_fixture,
        supply_run_materials=quote.supply_run_materials,
        valid_until=quote.valid_until,
        scope=quote.scope,
        assumptions=quote.assumptions,
        lines=[
            schemas.LineRead(
                id=line.id,
                position=line.position,
                kind=line.kind,
                description=line.description,
                quantity=line.quantity,
                unit=line.unit,
                unit_price=line.unit_price,
                amount=line_amount(line.quantity, line.unit_price),
                fixture_id=line.fixture_id,
                fixture_tag=tags.get(line.fixture_id) if line.fixture_id else None,
                item_ref=line.item_ref,
                override_reason=line.override_reason,
                hand_edited=line.hand_edited,
            )
            for line in quote.lines
        ],
        totals=schemas.TotalsRead(
            subtotal=totals.subtotal,
            markup=totals.markup,
            discount=totals.discount,
            net=totals.net,
            tax=totals.tax,
            total=totals.total,
        ),
        needs_override=needs_override(quote, survey),
        history=[schemas.HistoryEntry.model_validate(entry) for entry in quote.history or []],
        allowed_transitions=allowed_transitions(quote, user),
        work_order_id=work_order_id_of(session, quote),
        created_at=quote.created_at,
        updated_at=quote.updated_at,
    )


def list_quotes(
    *,
    session: Session,
    user: User,
    building_id: str | None = None,
    state: str | None = None,
    limit: int = 50,
    offset: int = 0,
) -> schemas.QuotePage:
    conditions = [Quote.org_id == user.org_id]
    if building_id:
        conditions.append(Quote.building_id == building_id)
    if state:
        conditions.append(Quote.state == state)
    total = session.scalar(select(func.count()).select_from(Quote).where(*conditions)) or 0
    quotes = list(
        session.scalars(
            select(Quote)
            .where(*conditions)
            .order_by(Quote.created_at.desc(), Quote.id)
            .limit(limit)
            .offset(offset)
        )
    )
    org = session.get(Organisation, user.org_id)
    names = dict(
        session.execute(
            select(Building.id, Building.name).where(
                Building.id.in_({quote.building_id for quote in quotes})
            )
        ).all()
    )
    items = []
    for quote in quotes:
        _load_lines(session, quote)
        items.append(
            schemas.QuoteSummary(
                id=quote.id,
                version=quote.version,
                number=quote.number,
                state=quote.state,
                building_id=quote.building_id,
                building_name=names.get(quote.building_id, ""),
                total=quote_totals(quote).total,
                currency=org.currency if org else "",
                updated_at=quote.updated_at,
            )
        )
    return schemas.QuotePage(items=items, total=total, limit=limit, offset=offset)


# --- changing --------------------------------------------------------------


def _require_role(user: User, needed: Role, verb: str) -> None:
    if not role_at_least(user.role_enum, needed):
        raise Forbidden(
            f"Your role ({user.role}) cannot {verb}: only a {needed.value} or above may."
        )


def _require_draft(quote: Quote) -> None:
    if quote.state != QuoteState.DRAFT:
        raise Conflict(
            f"Quote {quote.number} is {quote.state}: only a draft can be changed. "
            "Make a new quote for other prices.",
            current={"state": quote.state, "version": quote.version},
        )


def _require_version(
    quote: Quote, version: int | None, stored: dict[str, Any] | None = None
) -> None:
    """409 when the quote moved on; ``stored`` adds what is stored now for the fields edited."""
    if version is not None and version != quote.version:
        raise Conflict(
            f"Someone else changed quote {quote.number} first (you edited version {version}, "
            f"it is now at version {quote.version}). Nothing was changed.",
            current={**(stored or {}), "state": quote.state, "version": quote.version},
        )


def _touch(quote: Quote) -> None:
    """Make the quote row change, so its version counts every line edit too."""
    quote.updated_at = utcnow()


def _history_entry(user: User, state: str) -> dict[str, Any]:
    return {
        "state": state,
        "by": user.id,
        "by_name": user.name or user.email,
        "at": utcnow().isoformat(),
    }


def next_number(session: Session, *, org_id: str, model: Any, prefix: str) -> str:
    """The next ``PREFIX-YYYY-NNNN`` number of the organisation's quotes or work orders."""
    stem = f"{prefix}-{utcnow().year}-"
    numbers = session.scalars(
        select(model.number).where(model.org_id == org_id, model.number.startswith(stem))
    ).all()
    highest = max((int(n[len(stem) :]) for n in numbers if n[len(stem) :].isdigit()), default=0)
    return f"{stem}{highest + 1:04d}"


def create_quote(
    *, session: Session, user: User, building_id: str, body: schemas.QuoteCreate
) -> tuple[Quote, bool]:
    """A draft quote built from the building's accepted proposals; whether it is new."""
    _require_role(user, Role.ESTIMATOR, "make quotes")
    building = get_owned(session, Building, org_id=user.org_id, record_id=building_id)
    if body.id is not None:
        existing = session.get(Quote, str(body.id))
        if existing is not None:
            if existing.org_id != user.org_id or existing.building_id != building.id:
                raise Conflict("This id is already used by another record; make a new id.")
            _load_lines(session, existing)
            return existing, False
    survey = load_survey(session, org_id=user.org_id, building=building)
    if not survey.candidates:
        raise InvalidInput(
            "building_id",
            f"{building.name} has no accepted proposals yet: accept a module and pack for "
            "each fixture to convert, then make the quote.",
        )
    overrides = _checked_overrides(survey, body.overrides)
    org = session.get(Organisation, user.org_id)
    assert org is not None
    quote = Quote(
        org_id=user.org_id,
        building_id=building.id,
        number=next_number(session, org_id=user.org_id, model=Quote, prefix="Q"),
        state=QuoteState.DRAFT,
        labour_rate=org.labour_rate,
        markup_pct=body.markup_pct if body.markup_pct is not None else Decimal("0"),
        discount_pct=body.discount_pct if body.discount_pct is not None else Decimal("0"),
        tax_pct=body.tax_pct if body.tax_pct is not None else Decimal("0"),
        valid_until=date.today() + timedelta(days=DEFAULT_VALID_DAYS),
        client_name=building.client_name,
        client_address=building.address,
        client_contact=building.client_contact,
        series_link_h=DEFAULT_SERIES_LINK_H,
        supply_run_h=DEFAULT_SUPPLY_RUN_H,
        commissioning_h=DEFAULT_COMMISSIONING_H,
        sundries_per_fixture=DEFAULT_SUNDRIES_PER_FIXTURE,
        supply_run_materials=DEFAULT_SUPPLY_RUN_MATERIALS,
        created_by=user.id,
        state_changed_by=user.id,
        state_changed_at=utcnow(),
        history=[_history_entry(user, QuoteState.DRAFT)],
    )
    if body.id is not None:
        quote.id = str(body.id)
    session.add(quote)
    session.flush()
    set_committed_value(quote, "lines", [])
    _rebuild(session, quote, survey, overrides)
    _load_lines(session, quote)
    audit.record(
        session=session,
        user=user,
        org_id=user.org_id,
        entity="quotes",
        entity_id=quote.id,
        action="create",
        changes={
            "building_id": building.id,
            "number": quote.number,
            "lines": len(quote.lines),
            "overrides": overrides,
        },
    )
    session.commit()
    return quote, True


def _checked_overrides(survey: Survey, overrides: Sequence[schemas.Override]) -> dict[str, str]:
    """Overrides with their reasons (the proposals' own first), each for a failing fixture."""
    chosen = {
        fixture_id: candidate.proposal.override_reason.strip()
        for fixture_id, candidate in survey.candidates.items()
        if not candidate.checks_pass and len(candidate.proposal.override_reason.strip()) >= 10
    }
    for override in overrides:
        candidate = survey.candidates.get(override.fixture_id)
        if candidate is None:
            raise InvalidInput(
                "overrides",
                f"fixture {override.fixture_id} has no accepted proposal in this building",
            )
        if candidate.checks_pass:
            raise InvalidInput(
                "overrides",
                f"fixture {candidate.fixture.tag} passes its checks: it needs no override",
            )
        chosen[override.fixture_id] = override.reason
    return chosen


def _load_survey_for(session: Session, user: User, quote: Quote) -> Survey:
    building = get_owned(session, Building, org_id=user.org_id, record_id=quote.building_id)
    return load_survey(session, org_id=user.org_id, building=building)


def update_settings(
    *, session: Session, user: User, quote_id: str, body: schemas.QuoteSettings
) -> Quote:
    _require_role(user, Role.ESTIMATOR, "change quotes")
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    requested = body.model_dump(exclude_unset=True, exclude={"version"})
    for name in TEXT_SETTINGS:
        if name in requested and requested[name] is None:
            requested[name] = ""
    unchanged = all(getattr(quote, name) == value for name, value in requested.items())
    if unchanged and body.version <= quote.version:
        return quote  # a retry of a change already made, or nothing to do
    _require_draft(quote)
    _require_version(quote, body.version, {name: getattr(quote, name) for name in requested})
    for name, value in requested.items():
        if value is None and name not in ("valid_until",):
            raise InvalidInput(name, "give a value (it cannot be emptied)")
    changes = {
        name: [getattr(quote, name), value]
        for name, value in requested.items()
        if getattr(quote, name) != value
    }
    for name, value in requested.items():
        setattr(quote, name, value)
    if PRICING_SETTINGS & changes.keys():
        _rebuild(session, quote, _load_survey_for(session, user, quote), _overrides_on(quote))
    _touch(quote)
    audit.record(
        session=session,
        user=user,
        org_id=quote.org_id,
        entity="quotes",
        entity_id=quote.id,
        action="update",
        changes=changes,
    )
    session.commit()
    _load_lines(session, quote)
    return quote


def rebuild(*, session: Session, user: User, quote_id: str, version: int) -> Quote:
    """Make the generated lines again from the proposals accepted now."""
    _require_role(user, Role.ESTIMATOR, "change quotes")
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    _require_draft(quote)
    _require_version(quote, version)
    _rebuild(session, quote, _load_survey_for(session, user, quote), _overrides_on(quote))
    _touch(quote)
    _audit_lines(session, user, quote, "rebuild", {})
    session.commit()
    _load_lines(session, quote)
    return quote


def _audit_lines(
    session: Session, user: User, quote: Quote, action: str, changes: dict[str, Any]
) -> None:
    audit.record(
        session=session,
        user=user,
        org_id=quote.org_id,
        entity="quotes",
        entity_id=quote.id,
        action=action,
        changes=changes,
    )


def add_override(
    *, session: Session, user: User, quote_id: str, body: schemas.OverrideCreate
) -> Quote:
    """Quote a failing fixture anyway, with the reason printed on the quote."""
    _require_role(user, Role.ESTIMATOR, "change quotes")
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    overrides = _overrides_on(quote)
    if overrides.get(body.fixture_id) == body.reason:
        return quote  # the same override sent again
    _require_draft(quote)
    _require_version(quote, body.version)
    survey = _load_survey_for(session, user, quote)
    overrides.update(_checked_overrides(survey, [body]))
    _rebuild(session, quote, survey, overrides)
    _touch(quote)
    _audit_lines(
        session, user, quote, "override", {"fixture_id": body.fixture_id, "reason": body.reason}
    )
    session.commit()
    _load_lines(session, quote)
    return quote


def _line_of(quote: Quote, line_id: str) -> QuoteLine:
    for line in quote.lines:
        if line.id == line_id:
            return line
    raise NotFound("QuoteLine")


def add_line(*, session: Session, user: User, quote_id: str, body: schemas.LineCreate) -> Quote:
    """A line typed by hand (idempotent on the client's line id)."""
    _require_role(user, Role.ESTIMATOR, "change quotes")
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    if body.id is not None:
        existing = session.get(QuoteLine, str(body.id))
        if existing is not None:
            if existing.quote_id != quote.id:
                raise Conflict("This line id is already used; make a new id.")
            return quote
    _require_draft(quote)
    _require_version(quote, body.version)
    line = QuoteLine(
        quote_id=quote.id,
        position=max((line.position for line in quote.lines), default=0) + 1,
        kind=body.kind,
        description=body.description,
        quantity=body.quantity,
        unit=body.unit,
        unit_price=body.unit_price,
        hand_edited=True,
    )
    if body.id is not None:
        line.id = str(body.id)
    session.add(line)
    _touch(quote)
    session.flush()
    _audit_lines(
        session,
        user,
        quote,
        "add-line",
        {"line_id": line.id, **body.model_dump(exclude={"id", "version"})},
    )
    session.commit()
    _load_lines(session, quote)
    return quote


def update_line(
    *, session: Session, user: User, quote_id: str, line_id: str, body: schemas.LineUpdate
) -> Quote:
    """Change a line by hand; it then stays as typed when the lines are made again."""
    _require_role(user, Role.ESTIMATOR, "change quotes")
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    line = _line_of(quote, line_id)
    # A field left out (or null) stays as it is.
    requested = {
        name: value
        for name, value in body.model_dump(exclude_unset=True, exclude={"version"}).items()
        if value is not None
    }
    if all(getattr(line, name) == value for name, value in requested.items()):
        return quote
    _require_draft(quote)
    _require_version(quote, body.version)
    if (
        "override_reason" in requested
        and line.override_reason
        and len(requested["override_reason"].strip()) < 10
    ):
        raise InvalidInput(
            "override_reason",
            "this fixture's checks fail: keep a reason of at least 10 characters, or delete "
            "the line to leave the fixture out",
        )
    changes = {name: [getattr(line, name), value] for name, value in requested.items()}
    for name, value in requested.items():
        setattr(line, name, value)
    line.hand_edited = True
    _touch(quote)
    _audit_lines(session, user, quote, "edit-line", {"line_id": line.id, **changes})
    session.commit()
    _load_lines(session, quote)
    return quote


def delete_line(
    *, session: Session, user: User, quote_id: str, line_id: str, version: int | None
) -> Quote:
    _require_role(user, Role.ESTIMATOR, "change quotes")
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    line = _line_of(quote, line_id)
    _require_draft(quote)
    _require_version(quote, version)
    session.delete(line)
    _touch(quote)
    _audit_lines(
        session, user, quote, "delete-line", {"line_id": line.id, "description": line.description}
    )
    session.commit()
    _load_lines(session, quote)
    return quote


def transition(
    *, session: Session, user: User, quote_id: str, to: str, version: int | None = None
) -> Quote:
    """Move the quote to state ``to``; 409 with the allowed states if it cannot go there.

    Moving to ``issued`` issues the work order (with no crew or date yet), and
    to ``completed`` completes it, exactly as the work-order routes do.
    """
    quote = get_quote(session=session, user=user, quote_id=quote_id)
    if quote.state == to:
        return quote  # already there: a retry
    allowed = TRANSITIONS[quote.state]
    if to not in allowed:
        raise Conflict(
            f"Quote {quote.number} is {quote.state}; it cannot become {to}. "
            + (
                f"From {quote.state} it can become: {', '.join(allowed)}."
                if allowed
                else f"{quote.state.capitalize()} is a final state."
            ),
            current={"state": quote.state, "allowed": list(allowed), "version": quote.version},
        )
    _require_role(user, ROLE_FOR_STATE[to], STATE_VERBS[to])
    _require_version(quote, version)
    if to in (QuoteState.ISSUED, QuoteState.COMPLETED):
        from server.workorders.service import complete, issue

        if to == QuoteState.ISSUED:
            issue(session=session, user=user, quote_id=quote.id)
        else:
            order_id = work_order_id_of(session, quote)
            if order_id is None:
                raise Conflict("This quote has no work order to complete.")
            complete(session=session, user=user, work_order_id=order_id)
        return get_quote(session=session, user=user, quote_id=quote.id)
    if to == QuoteState.SENT:
        if not quote.lines:
            raise InvalidInput("lines", "a quote with no lines cannot be sent")
        if quote.valid_until is None or quote.valid_until < date.today():
            raise InvalidInput(
                "valid_until", "set a date until which the prices hold, today or later"
            )
    set_state(session=session, user=user, quote=quote, to=to)
    session.commit()
    _load_lines(session, quote)
    return quote


def set_state(*, session: Session, user: User, quote: Quote, to: str) -> None:
    """Record the move to ``to`` (who, when) and audit it; the caller commits."""
    before = quote.state
    quote.state = to
    quote.state_changed_by = user.id
    quote.state_changed_at = utcnow()
    quote.history = [*(quote.history or []), _history_entry(user, to)]
    audit.record(
        session=session,
        user=user,
        org_id=quote.org_id,
        entity="quotes",
        entity_id=quote.id,
        action="transition",
        changes={"state": [before, to]},
    )


# --- the client's PDF ------------------------------------------------------


@dataclass(frozen=True, slots=True)
class QuoteSheet:
    """Everything the quote PDF prints, ready to lay out."""

    quote: schemas.QuoteRead
    firm_name: str
    firm_address: str
    firm_phone: str
    paper_size: str
    building_address: str
    dated: date
    scope: list[str]
    surveyed: list[str]
    not_accessible: list[str]
    not_quoted: list[str]
    overrides: list[tuple[str, str]]


def _scope_sentences(quote: Quote, survey: Survey) -> list[str]:
    quoted_ids = {line.fixture_id for line in quote.lines if line.kind == "labour"}
    quoted = [survey.candidates[i] for i in quoted_ids if i in survey.candidates]
    if not quoted:
        return []
    feeds = sum(1 for c in quoted if not c.fixture.unswitched_supply)
    series = sum(1 for c in quoted if c.fixture.wiring == Wiring.SERIES.value)
    count = len(quoted)
    areas = len({c.area.id for c in quoted})
    said = [
        f"Convert {count} existing fluorescent luminaire{'s' if count != 1 else ''} in "
        f"{areas} area{'s' if areas != 1 else ''} of {survey.building.name} into emergency "
        "luminaires, by fitting an emergency module and a rechargeable battery pack into each "
        "luminaire's own body."
    ]
    if feeds:
        said.append(
            f"Run a permanent unswitched supply to {feeds} of them, taken from the area's "
            "lighting circuit ahead of the local switch, so the packs stay charged and the "
            "luminaires light only when the supply fails."
        )
    if series:
        said.append(
            f"In {series} luminaire{'s' if series != 1 else ''} with two lamps in series, one "
            "lamp runs in emergency and the other stays dark."
        )
    said.append(
        "Commission each converted luminaire: charge indicator, function test, and a "
        "full-duration test once the pack has had its recharge time, with the results recorded."
    )
    return said


def quote_sheet(*, session: Session, user: User, quote: Quote) -> QuoteSheet:
    read = read_quote(session=session, user=user, quote=quote)
    org = session.get(Organisation, quote.org_id)
    assert org is not None
    survey = _load_survey_for(session, user, quote)
    quoted_ids = {line.fixture_id for line in quote.lines if line.fixture_id}
    per_area: dict[str, list[Fixture]] = defaultdict(list)
    for fixture in survey.fixtures:
        per_area[fixture.area_id].append(fixture)
    surveyed = []
    for area in survey.areas.values():
        fixtures = per_area.get(area.id, [])
        in_quote = sum(1 for f in fixtures if f.id in quoted_ids)
        where = f"{area.name}" + (f" ({area.floor})" if area.floor else "")
        surveyed.append(
            f"{where}: {len(fixtures)} luminaire{'s' if len(fixtures) != 1 else ''} surveyed, "
            f"{in_quote} in this quote; {area.required_duration_min:.0f} min emergency duration."
        )
    not_accessible = [
        f"{f.tag} in {survey.areas[f.area_id].name}: not accessible at the survey; its "
        "details are assumed and are checked when the crew opens it."
        for f in survey.fixtures
        if not f.accessible
    ]
    not_quoted = []
    for fixture in survey.fixtures:
        if fixture.id in quoted_ids:
            continue
        candidate = survey.candidates.get(fixture.id)
        why = (
            "no module and pack accepted for it yet"
            if candidate is None
            else "its checks fail: " + "; ".join(candidate.failure_reasons)
        )
        not_quoted.append(f"{fixture.tag} in {survey.areas[fixture.area_id].name}: {why}")
    tags = {f.id: f.tag for f in survey.fixtures}
    overrides = [
        (tags.get(line.fixture_id, "?"), line.override_reason)
        for line in quote.lines
        if line.fixture_id and line.override_reason
    ]
    sent = [entry for entry in quote.history or [] if entry.get("state") == QuoteState.SENT]
    dated = date.fromisoformat(sent[-1]["at"][:10]) if sent else date.today()
    return QuoteSheet(
        quote=read,
        firm_name=org.name,
        firm_address=org.address,
        firm_phone=org.phone,
        paper_size=org.paper_size,
        building_address=survey.building.address,
        dated=dated,
        scope=[*_scope_sentences(quote, survey), *([quote.scope] if quote.scope else [])],
        surveyed=surveyed,
        not_accessible=not_accessible,
        not_quoted=not_quoted,
        overrides=overrides,
    )
