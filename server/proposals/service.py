"""Proposals: the module and pack chosen for each fixture, and what the checks say.

This is the one place that turns the survey and the catalogue (ORM rows, or
a fixture form not saved yet) into the engineering core's dataclasses and
calls :func:`server.engineering.compatibility.evaluate`. The JSON API, the
pages' instant findings and the stored proposals all come through here, so
they never disagree.

References
----------
The rules and their sources: :mod:`server.engineering.compatibility`.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, fields
from datetime import UTC, date, datetime
from decimal import Decimal
from typing import Any, Protocol, TypeVar

from sqlalchemy import func, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError

from server.accounts.models import User
from server.audit import service as audit
from server.calc import service as calc_service
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common import crud
from server.common.errors import Conflict, InvalidInput, NotFound
from server.db import utcnow
from server.engineering import batteries, compatibility
from server.engineering.errors import InvalidInput as EngineInvalidInput
from server.engineering.findings import Finding, Severity, Verdict, verdict_of
from server.engineering.profiles import Profile
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    DateCodeFormat,
    LampType,
    Waveform,
    Wiring,
)
from server.proposals.models import Proposal
from server.proposals.schemas import ProposalRead, Status, VerdictFilter
from server.quotes.models import Quote, QuoteLine, QuoteState
from server.sites.models import Area, Building, Fixture

T = TypeVar("T")


# Findings about the pack itself, kept when an existing pack is checked
# against a module (the fixture-side findings are the proposal's business).
PACK_FINDING_PREFIXES = ("pack.", "runtime.", "discharge.", "charge.", "temperature.")


class FixtureLike(Protocol):
    """A stored fixture or a fixture form not saved yet: what the checks read."""

    lamp_type: Any
    lamp_w: float
    lamp_count: int
    lamps_to_back_up: int
    ballast: Any
    wiring: Any
    unswitched_supply: bool
    lamp_length_mm: float | None
    ambient_c: float
    existing_kit: bool
    pack_chemistry: Any
    pack_cells: int | None
    pack_capacity_ah: float | None
    pack_date_code: str | None
    pack_date_format: Any
    open_circuit_v: float | None
    loaded_v: float | None
    load_a: float | None
    load_ohm: float | None


# ---- from rows to the core's dataclasses ----


def _engine(field: str, build: Callable[[], T], *, prefix: str = "") -> T:
    """Build or run something of the core; its InvalidInput becomes a 422 on ``field``."""
    try:
        return build()
    except EngineInvalidInput as exc:
        raise InvalidInput(field if prefix else exc.field, f"{prefix}{exc.reason}") from None
    except ValueError as exc:  # a rule of the core without a field of its own
        raise InvalidInput(field, f"{prefix}{exc}") from None


def engine_fixture(fixture: FixtureLike) -> compatibility.Fixture:
    return _engine(
        "fixture",
        lambda: compatibility.Fixture(
            lamp_type=LampType(fixture.lamp_type),
            lamp_w=fixture.lamp_w,
            lamp_count=fixture.lamp_count,
            lamps_to_back_up=fixture.lamps_to_back_up,
            ballast=BallastTech(fixture.ballast),
            wiring=Wiring(fixture.wiring),
            unswitched_supply=fixture.unswitched_supply,
            lamp_length_mm=fixture.lamp_length_mm,
            ambient_c=fixture.ambient_c,
        ),
    )


def engine_module(module: EmergencyModule) -> compatibility.Module:
    return _engine(
        "module_id",
        lambda: compatibility.Module(
            chemistry=Chemistry(module.chemistry),
            cells=module.cells,
            charge_a=module.charge_a,
            rated_min=module.rated_min,
            lamp_types=frozenset(LampType(value) for value in module.lamp_types),
            lamp_w_min=module.lamp_w_min,
            lamp_w_max=module.lamp_w_max,
            ballasts=frozenset(BallastTech(value) for value in module.ballasts),
            changeover=Changeover(module.changeover),
            max_lamps=module.max_lamps,
            waveform=Waveform(module.waveform),
            battery_w=module.battery_w,
            battery_a=module.battery_a,
            output_w=module.output_w,
            declared_eblf=module.declared_eblf,
            cutoff_v=module.cutoff_v,
        ),
        prefix=f"the catalogue's module {module.name!r}: ",
    )


def engine_pack(pack: BatteryPack) -> batteries.Pack:
    """A catalogue pack, new: no reading and no age."""
    return _engine(
        "pack_id",
        lambda: batteries.Pack(
            chemistry=Chemistry(pack.chemistry),
            cells=pack.cells,
            capacity_ah=pack.capacity_ah,
            rated_hours=pack.rated_hours,
            peukert_k=pack.peukert_k,
            nominal_v=pack.nominal_v,
            design_life_years=pack.design_life_years,
            max_ambient_c=pack.max_c,
            new_internal_ohm=pack.new_internal_ohm,
        ),
        prefix=f"the catalogue's pack {pack.name!r}: ",
    )


def area_profile(*, session: Session, org_id: str, profile_id: str) -> Profile:
    """The built-in or firm's requirement profile an area names."""
    return _engine(
        "profile_id",
        lambda: calc_service.find_profile(session=session, org_id=org_id, profile_id=profile_id),
        prefix="the area's requirement profile: ",
    )


def requirement_of(*, session: Session, org_id: str, area: Area) -> compatibility.Requirement:
    profile = area_profile(session=session, org_id=org_id, profile_id=area.profile_id)
    return _engine(
        "required_duration_min",
        lambda: compatibility.Requirement(duration_min=area.required_duration_min, profile=profile),
    )


def required_min(*, session: Session, org_id: str, area: Area) -> float:
    """The duration an area's fixtures are checked against: its own or its profile's."""
    profile = area_profile(session=session, org_id=org_id, profile_id=area.profile_id)
    return max(area.required_duration_min, profile.duration_min)


# ---- evaluating one combination ----


def _area_of(session: Session, org_id: str, fixture: FixtureLike, area: Area | None) -> Area:
    if area is not None:
        return area
    area_id = getattr(fixture, "area_id", None)
    if not isinstance(area_id, str):
        raise InvalidInput("area_id", "the fixture's area is not known")
    return crud.get_owned(session, Area, org_id=org_id, record_id=area_id)


def evaluate(
    *,
    session: Session,
    org_id: str,
    fixture: FixtureLike,
    module: EmergencyModule,
    pack: BatteryPack,
    area: Area | None = None,
    today: date | None = None,
) -> compatibility.CheckResult:
    """The core's verdict on this fixture with this module and pack, in its area.

    ``fixture`` is a stored fixture or a validated fixture form; ``area`` is
    read from the fixture when not given.
    """
    where = _area_of(session, org_id, fixture, area)
    requirement = requirement_of(session=session, org_id=org_id, area=where)
    core_fixture, core_module, core_pack = (
        engine_fixture(fixture),
        engine_module(module),
        engine_pack(pack),
    )
    return _engine(
        "fixture",
        lambda: compatibility.evaluate(
            core_fixture, core_module, core_pack, requirement, today=today or date.today()
        ),
    )


@dataclass(frozen=True, slots=True)
class ExistingPackCheck:
    """What the survey's readings say about the pack already in the fixture.

    Attributes
    ----------
    made_on : date or None
        Date the date code names in the chosen format.
    internal_ohm : float or None
        From the load test. [ohm]
    """

    findings: tuple[Finding, ...]
    verdict: Verdict | None
    made_on: date | None
    date_problem: str
    date_warning: str
    internal_ohm: float | None
    with_module: bool


def _reading(fixture: FixtureLike) -> batteries.PackReading | None:
    if fixture.open_circuit_v is None or fixture.loaded_v is None:
        return None
    if fixture.load_a is None and fixture.load_ohm is None:
        return None
    return _engine(
        "loaded_v",
        lambda: batteries.PackReading(
            open_circuit_v=fixture.open_circuit_v or 0.0,
            loaded_v=fixture.loaded_v or 0.0,
            load_a=fixture.load_a,
            load_ohm=fixture.load_ohm,
        ),
    )


def existing_pack_check(
    *,
    session: Session,
    org_id: str,
    fixture: FixtureLike,
    module: EmergencyModule | None,
    area: Area | None = None,
    today: date | None = None,
) -> ExistingPackCheck | None:
    """Read the existing pack's date code and readings; check it with ``module``.

    The existing pack goes through the same :func:`compatibility.evaluate`
    as a catalogue pack, with its load-test reading and its date code as the
    date it was fitted; of the findings, those about the pack are kept. None
    when the fixture has no kit fitted.
    """
    if not fixture.existing_kit:
        return None
    today = today or date.today()
    made_on, date_problem, date_warning = None, "", ""
    if fixture.pack_date_code and fixture.pack_date_format:
        try:
            reading_of_code = batteries.read_date_code(
                fixture.pack_date_code, DateCodeFormat(fixture.pack_date_format), today
            )
        except EngineInvalidInput as exc:
            date_problem = exc.reason
        else:
            made_on = reading_of_code.made_on
            date_warning = reading_of_code.warning or ""
    reading = _reading(fixture)
    internal_ohm = reading.internal_ohm if reading is not None else None
    known = (fixture.pack_chemistry, fixture.pack_cells, fixture.pack_capacity_ah)
    if module is None or any(value is None for value in known):
        return ExistingPackCheck((), None, made_on, date_problem, date_warning, internal_ohm, False)
    pack = _engine(
        "pack_capacity_ah",
        lambda: batteries.Pack(
            chemistry=Chemistry(fixture.pack_chemistry),
            cells=fixture.pack_cells or 0,
            capacity_ah=fixture.pack_capacity_ah or 0.0,
            installed_on=made_on,
            reading=reading,
        ),
    )
    where = _area_of(session, org_id, fixture, area)
    requirement = requirement_of(session=session, org_id=org_id, area=where)
    core_fixture, core_module = engine_fixture(fixture), engine_module(module)
    result = _engine(
        "fixture",
        lambda: compatibility.evaluate(core_fixture, core_module, pack, requirement, today=today),
    )
    findings = tuple(f for f in result.findings if f.code.startswith(PACK_FINDING_PREFIXES))
    return ExistingPackCheck(
        findings, verdict_of(findings), made_on, date_problem, date_warning, internal_ohm, True
    )


# ---- stored proposals ----


def finding_record(finding: Finding) -> dict[str, str]:
    return {
        "code": finding.code,
        "severity": finding.severity.value,
        "message": finding.message,
        "fix": finding.fix,
        "source": finding.source,
    }


def _result_columns(result: compatibility.CheckResult, now: datetime) -> dict[str, Any]:
    case = result.case
    return {
        "verdict": result.verdict.value,
        "findings": [finding_record(finding) for finding in result.findings],
        "runtime_new_min": case.runtime_new_min,
        "runtime_end_of_life_min": case.runtime_end_of_life_min,
        "c_rate": case.c_rate,
        "recharge_h": case.recharge_h,
        "eblf": case.eblf,
        "eblf_is_estimate": case.eblf_is_estimate,
        "emergency_lumens": case.emergency_lm,
        "computed_at": now,
    }


def as_read(proposal: Proposal) -> dict[str, Any]:
    """A proposal as the API shows it (also what a 409 carries)."""
    return ProposalRead.model_validate(proposal).model_dump(mode="json")


def proposal_of(*, session: Session, org_id: str, fixture_id: str) -> Proposal | None:
    proposal = session.scalar(select(Proposal).where(Proposal.fixture_id == fixture_id))
    if proposal is None or proposal.org_id != org_id:
        return None
    return proposal


def get_proposal(*, session: Session, org_id: str, fixture_id: str) -> Proposal:
    crud.get_owned(session, Fixture, org_id=org_id, record_id=fixture_id)
    proposal = proposal_of(session=session, org_id=org_id, fixture_id=fixture_id)
    if proposal is None:
        raise NotFound("Proposal")
    return proposal


def _catalogue_item(session: Session, model: type[T], org_id: str, record_id: str, field: str) -> T:
    item = session.get(model, record_id)
    if item is None or getattr(item, "org_id", None) != org_id:
        raise InvalidInput(field, "no such item in your catalogue")
    return item


def fixture_of(*, session: Session, org_id: str, fixture_id: str) -> Fixture:
    return crud.get_owned(session, Fixture, org_id=org_id, record_id=fixture_id)


def catalogue_pair(
    *, session: Session, org_id: str, module_id: str, pack_id: str
) -> tuple[EmergencyModule, BatteryPack]:
    """A module and a pack of the firm's catalogue (422 naming the field otherwise)."""
    module = _catalogue_item(session, EmergencyModule, org_id, module_id, "module_id")
    pack = _catalogue_item(session, BatteryPack, org_id, pack_id, "pack_id")
    return module, pack


def _commit_change(
    session: Session, user: User, proposal: Proposal, changes: dict[str, Any], action: str
) -> None:
    current = as_read(proposal)
    for name, value in changes.items():
        setattr(proposal, name, value)
    audit.record(
        session=session,
        user=user,
        org_id=proposal.org_id,
        entity=Proposal.__tablename__,
        entity_id=proposal.id,
        action=action,
        changes={
            name: value
            for name, value in changes.items()
            if name in ("module_id", "pack_id", "status", "verdict", "override_reason")
        },
    )
    try:
        session.commit()
    except StaleDataError:
        session.rollback()
        raise Conflict(
            "Someone else changed this proposal at the same moment. Nothing was changed.",
            current=current,
        ) from None


def _check_version(proposal: Proposal, version: int | None) -> None:
    if version != proposal.version:
        raise Conflict(
            f"Someone else changed this proposal first (you saw version {version}, it is now "
            f"at version {proposal.version}). Nothing was changed.",
            current=as_read(proposal),
        )


def _acceptance_kept(proposal: Proposal, changes: dict[str, Any]) -> dict[str, Any]:
    """Changes with the acceptance withdrawn when fresh checks fail and no reason was given.

    An accepted proposal whose checks now fail (the survey or the catalogue
    changed) goes back to draft rather than reach the quote unexplained.
    """
    failing = changes.get("verdict") == Verdict.FAIL.value
    accepted = changes.get("status", proposal.status) == Status.ACCEPTED.value
    if failing and accepted and not changes.get("override_reason", proposal.override_reason):
        return {**changes, "status": Status.DRAFT.value}
    return changes


def save_proposal(
    *,
    session: Session,
    user: User,
    fixture_id: str,
    module_id: str,
    pack_id: str,
    version: int | None = None,
    proposal_id: str | None = None,
    today: date | None = None,
) -> tuple[Proposal, bool]:
    """Choose a module and pack for a fixture and store the checks' result.

    Returns the proposal and whether it was created now. Without
    ``version`` it creates; sent again with the same choice it answers the
    stored proposal (a retry). Changing a stored proposal needs the version
    it was read at; a new choice goes back to draft.
    """
    fixture = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=fixture_id)
    module = _catalogue_item(session, EmergencyModule, user.org_id, module_id, "module_id")
    pack = _catalogue_item(session, BatteryPack, user.org_id, pack_id, "pack_id")
    existing = proposal_of(session=session, org_id=user.org_id, fixture_id=fixture.id)
    if existing is not None:
        same_choice = existing.module_id == module.id and existing.pack_id == pack.id
        if version is None and same_choice:
            return existing, False
        if version is None:
            raise Conflict(
                f"This fixture already has a proposal (version {existing.version}); send "
                "that version to change it.",
                current=as_read(existing),
            )
        _check_version(existing, version)
    result = evaluate(
        session=session, org_id=user.org_id, fixture=fixture, module=module, pack=pack, today=today
    )
    columns = _result_columns(result, utcnow())
    if existing is not None:
        changes = {"module_id": module.id, "pack_id": pack.id, **columns}
        if not same_choice:
            changes.update(status=Status.DRAFT.value, override_reason="")
        _commit_change(session, user, existing, _acceptance_kept(existing, changes), "update")
        return existing, False
    if proposal_id is not None and session.get(Proposal, proposal_id) is not None:
        raise Conflict("This proposal id is already used by another fixture; make a new id.")
    proposal = Proposal(
        org_id=user.org_id,
        fixture_id=fixture.id,
        module_id=module.id,
        pack_id=pack.id,
        status=Status.DRAFT.value,
        override_reason="",
        **columns,
    )
    if proposal_id is not None:
        proposal.id = proposal_id
    session.add(proposal)
    try:
        session.flush()
    except IntegrityError:
        session.rollback()
        raise Conflict("Someone else made this fixture's proposal at the same moment.") from None
    audit.record(
        session=session,
        user=user,
        org_id=user.org_id,
        entity=Proposal.__tablename__,
        entity_id=proposal.id,
        action="create",
        changes={"module_id": module.id, "pack_id": pack.id, "verdict": proposal.verdict},
    )
    session.commit()
    return proposal, True


def _recomputed(
    session: Session, org_id: str, proposal: Proposal, today: date | None
) -> tuple[compatibility.CheckResult, dict[str, Any]]:
    fixture = crud.get_owned(session, Fixture, org_id=org_id, record_id=proposal.fixture_id)
    module = _catalogue_item(session, EmergencyModule, org_id, proposal.module_id, "module_id")
    pack = _catalogue_item(session, BatteryPack, org_id, proposal.pack_id, "pack_id")
    result = evaluate(
        session=session, org_id=org_id, fixture=fixture, module=module, pack=pack, today=today
    )
    return result, _result_columns(result, utcnow())


def accept(
    *,
    session: Session,
    user: User,
    fixture_id: str,
    version: int,
    override_reason: str = "",
    today: date | None = None,
) -> Proposal:
    """Accept a fixture's proposal for quoting; the checks run again first.

    A proposal whose checks fail is accepted only with a reason (kept with
    it and printed on the quote). Accepting an accepted proposal again
    answers it unchanged.
    """
    proposal = get_proposal(session=session, org_id=user.org_id, fixture_id=fixture_id)
    reason = override_reason.strip()
    if proposal.status == Status.ACCEPTED.value and (
        not reason or reason == proposal.override_reason
    ):
        return proposal
    _check_version(proposal, version)
    result, columns = _recomputed(session, user.org_id, proposal, today)
    failing = result.verdict is Verdict.FAIL
    if failing and not reason:
        worst = next(f.message for f in result.findings if f.severity is Severity.FAIL)
        raise InvalidInput(
            "override_reason",
            f"this fixture's checks fail ({worst}); accepting it anyway needs a reason",
        )
    changes = {
        **columns,
        "status": Status.ACCEPTED.value,
        "override_reason": reason if failing else "",
    }
    _commit_change(session, user, proposal, changes, "accept")
    return proposal


def unaccept(*, session: Session, user: User, fixture_id: str, version: int) -> Proposal:
    """Take a proposal back to draft (it leaves the quote builder's list)."""
    proposal = get_proposal(session=session, org_id=user.org_id, fixture_id=fixture_id)
    if proposal.status == Status.DRAFT.value:
        return proposal
    _check_version(proposal, version)
    _commit_change(
        session,
        user,
        proposal,
        {"status": Status.DRAFT.value, "override_reason": ""},
        "unaccept",
    )
    return proposal


def recheck(
    *, session: Session, user: User, fixture_id: str, today: date | None = None
) -> Proposal:
    """Run the checks again on the stored choice (after the survey or catalogue changed)."""
    proposal = get_proposal(session=session, org_id=user.org_id, fixture_id=fixture_id)
    _, columns = _recomputed(session, user.org_id, proposal, today)
    _commit_change(session, user, proposal, _acceptance_kept(proposal, columns), "recheck")
    return proposal


# ---- the planner's suggestion ----


@dataclass(frozen=True, slots=True)
class Suggestion:
    """The cheapest combination that passes every rule, or the nearest miss.

    ``passes`` is False when nothing passes; then ``module``/``pack`` are the
    nearest miss (fewest failing, then warning, findings; then price), or
    None when the catalogue is empty.
    """

    passes: bool
    explanation: str
    module: EmergencyModule | None = None
    pack: BatteryPack | None = None
    result: compatibility.CheckResult | None = None
    price: Decimal | None = None
    combinations: int = 0


def catalogue_items(
    *, session: Session, org_id: str
) -> tuple[list[EmergencyModule], list[BatteryPack]]:
    """The firm's modules and packs, by name."""
    modules = session.scalars(
        select(EmergencyModule)
        .where(EmergencyModule.org_id == org_id)
        .order_by(EmergencyModule.name, EmergencyModule.id)
    ).all()
    packs = session.scalars(
        select(BatteryPack)
        .where(BatteryPack.org_id == org_id)
        .order_by(BatteryPack.name, BatteryPack.id)
    ).all()
    return list(modules), list(packs)


def _usable(items: Iterable[T], convert: Callable[[T], Any]) -> list[tuple[T, Any]]:
    """Catalogue items with their core form; an item the core refuses is left out."""
    usable = []
    for item in items:
        try:
            usable.append((item, convert(item)))
        except InvalidInput:
            continue
    return usable


@dataclass
class _Catalogue:
    modules: list[tuple[EmergencyModule, compatibility.Module]]
    packs: list[tuple[BatteryPack, batteries.Pack]]

    @classmethod
    def load(
        cls,
        session: Session,
        org_id: str,
        *,
        module_id: str | None = None,
        pack_id: str | None = None,
    ) -> _Catalogue:
        """The usable catalogue, or only the module / pack named."""
        modules, packs = catalogue_items(session=session, org_id=org_id)
        modules = [m for m in modules if module_id is None or m.id == module_id]
        packs = [p for p in packs if pack_id is None or p.id == pack_id]
        return cls(_usable(modules, engine_module), _usable(packs, engine_pack))


def _count(findings: Sequence[Finding], severity: Severity) -> int:
    return sum(1 for finding in findings if finding.severity is severity)


def _cheapest(
    catalogue: _Catalogue,
    fixture: compatibility.Fixture,
    requirement: compatibility.Requirement,
    today: date,
) -> Suggestion:
    if not catalogue.modules or not catalogue.packs:
        missing = "emergency modules" if not catalogue.modules else "battery packs"
        return Suggestion(
            passes=False, explanation=f"The catalogue has no usable {missing} yet: add some first."
        )
    best: tuple[Any, ...] | None = None
    nearest: tuple[Any, ...] | None = None
    combinations = 0
    for module, core_module in catalogue.modules:
        for pack, core_pack in catalogue.packs:
            combinations += 1
            try:
                result = compatibility.evaluate(
                    fixture, core_module, core_pack, requirement, today=today
                )
            except ValueError:  # the core refuses this pair (InvalidInput is one)
                continue
            price = module.price + pack.price
            if result.verdict is Verdict.PASS:
                key = (price, module.name, pack.name)
                if best is None or key < best[0]:
                    best = (key, module, pack, result, price)
                continue
            miss_key = (
                _count(result.findings, Severity.FAIL),
                _count(result.findings, Severity.WARN),
                price,
                module.name,
                pack.name,
            )
            if nearest is None or miss_key < nearest[0]:
                nearest = (miss_key, module, pack, result, price)
    if best is not None:
        _, module, pack, result, price = best
        return Suggestion(
            passes=True,
            explanation=(
                f"The cheapest that passes every rule of the {combinations} combinations checked."
            ),
            module=module,
            pack=pack,
            result=result,
            price=price,
            combinations=combinations,
        )
    if nearest is None:
        return Suggestion(
            passes=False,
            explanation="No combination in the catalogue could be checked for this fixture.",
            combinations=combinations,
        )
    _, module, pack, result, price = nearest
    problems = [f.message for f in result.findings if f.severity in (Severity.FAIL, Severity.WARN)]
    return Suggestion(
        passes=False,
        explanation=(
            f"No module and pack in the catalogue passes every rule for this fixture "
            f"({combinations} combinations checked). The nearest miss is {module.name} with "
            f"{pack.name}: " + " ".join(problems[:3])
        ),
        module=module,
        pack=pack,
        result=result,
        price=price,
        combinations=combinations,
    )


def suggest_cheapest(
    *,
    session: Session,
    org_id: str,
    fixture: FixtureLike,
    area: Area | None = None,
    module_id: str | None = None,
    pack_id: str | None = None,
    today: date | None = None,
) -> Suggestion:
    """The cheapest module + pack (by their prices added) that passes every rule.

    A warning counts as not passing: the suggestion is clean or it is
    explained as the nearest miss. ``module_id`` or ``pack_id`` holds one
    side fixed (the cheapest pack for this module ...).
    """
    where = _area_of(session, org_id, fixture, area)
    requirement = requirement_of(session=session, org_id=org_id, area=where)
    return _cheapest(
        _Catalogue.load(session, org_id, module_id=module_id, pack_id=pack_id),
        engine_fixture(fixture),
        requirement,
        today or date.today(),
    )


def apply_suggestion(
    *,
    session: Session,
    user: User,
    fixture_id: str,
    version: int | None = None,
    today: date | None = None,
) -> tuple[Suggestion, Proposal | None]:
    """Suggest, and store the suggestion as the fixture's proposal when it passes."""
    fixture = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=fixture_id)
    suggestion = suggest_cheapest(session=session, org_id=user.org_id, fixture=fixture, today=today)
    if not suggestion.passes or suggestion.module is None or suggestion.pack is None:
        return suggestion, None
    existing = proposal_of(session=session, org_id=user.org_id, fixture_id=fixture.id)
    proposal, _ = save_proposal(
        session=session,
        user=user,
        fixture_id=fixture.id,
        module_id=suggestion.module.id,
        pack_id=suggestion.pack.id,
        version=version if existing is not None else None,
        today=today,
    )
    return suggestion, proposal


@dataclass(frozen=True, slots=True)
class AreaSuggestions:
    saved: int
    no_pass: int


def suggest_for_area(
    *, session: Session, user: User, area_id: str, today: date | None = None
) -> AreaSuggestions:
    """Store the planner's suggestion for every fixture of an area that has no proposal.

    Identical fixtures (a corridor of the same battens) are checked once.
    """
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    requirement = requirement_of(session=session, org_id=user.org_id, area=area)
    catalogue = _Catalogue.load(session, user.org_id)
    day = today or date.today()
    have = set(
        session.scalars(
            select(Proposal.fixture_id)
            .join(Fixture, Fixture.id == Proposal.fixture_id)
            .where(Fixture.area_id == area.id, Proposal.org_id == user.org_id)
        ).all()
    )
    fixtures = session.scalars(
        select(Fixture)
        .where(Fixture.org_id == user.org_id, Fixture.area_id == area.id)
        .order_by(Fixture.created_at, Fixture.id)
    ).all()
    known: dict[tuple[Any, ...], Suggestion] = {}
    saved = no_pass = 0
    now = utcnow()
    for fixture in fixtures:
        if fixture.id in have:
            continue
        core = engine_fixture(fixture)
        key = tuple(getattr(core, item.name) for item in fields(core))
        if key not in known:
            known[key] = _cheapest(catalogue, core, requirement, day)
        suggestion = known[key]
        if not suggestion.passes or suggestion.result is None or suggestion.module is None:
            no_pass += 1
            continue
        assert suggestion.pack is not None
        proposal = Proposal(
            org_id=user.org_id,
            fixture_id=fixture.id,
            module_id=suggestion.module.id,
            pack_id=suggestion.pack.id,
            status=Status.DRAFT.value,
            override_reason="",
            **_result_columns(suggestion.result, now),
        )
        session.add(proposal)
        session.flush()
        audit.record(
            session=session,
            user=user,
            org_id=user.org_id,
            entity=Proposal.__tablename__,
            entity_id=proposal.id,
            action="create",
            changes={"module_id": proposal.module_id, "pack_id": proposal.pack_id, "by": "suggest"},
        )
        saved += 1
    try:
        session.commit()
    except IntegrityError:
        session.rollback()
        raise Conflict("Someone else made proposals in this area at the same moment.") from None
    return AreaSuggestions(saved=saved, no_pass=no_pass)


# ---- an area's proposals ----


def _utc(moment: datetime | None) -> datetime | None:
    if moment is None:
        return None
    return moment if moment.tzinfo is not None else moment.replace(tzinfo=UTC)


@dataclass(frozen=True, slots=True)
class FixtureProposal:
    """One fixture with its proposal (if any) and the names it refers to."""

    fixture: Fixture
    proposal: Proposal | None
    module: EmergencyModule | None
    pack: BatteryPack | None
    stale: bool

    @property
    def verdict_key(self) -> VerdictFilter:
        if self.proposal is None or self.proposal.verdict is None:
            return VerdictFilter.NONE
        return VerdictFilter(self.proposal.verdict)


def is_stale(
    proposal: Proposal,
    fixture: Fixture,
    area: Area,
    module: EmergencyModule | None,
    pack: BatteryPack | None,
) -> bool:
    """Whether the survey, the area or the catalogue changed after the checks ran."""
    computed = _utc(proposal.computed_at)
    if computed is None:
        return True
    changed = [fixture.updated_at, area.updated_at]
    changed += [item.updated_at for item in (module, pack) if item is not None]
    return any((_utc(moment) or computed) > computed for moment in changed)


def area_proposals(*, session: Session, org_id: str, area: Area) -> list[FixtureProposal]:
    """Every fixture of an area in survey order, with its proposal; four queries."""
    fixtures = session.scalars(
        select(Fixture)
        .where(Fixture.org_id == org_id, Fixture.area_id == area.id)
        .order_by(Fixture.created_at, Fixture.id)
    ).all()
    proposals = {
        proposal.fixture_id: proposal
        for proposal in session.scalars(
            select(Proposal)
            .join(Fixture, Fixture.id == Proposal.fixture_id)
            .where(Proposal.org_id == org_id, Fixture.area_id == area.id)
        ).all()
    }
    module_ids = {proposal.module_id for proposal in proposals.values()}
    pack_ids = {proposal.pack_id for proposal in proposals.values()}
    modules = _by_id(session, EmergencyModule, org_id, module_ids)
    packs = _by_id(session, BatteryPack, org_id, pack_ids)
    items = []
    for fixture in fixtures:
        proposal = proposals.get(fixture.id)
        module = modules.get(proposal.module_id) if proposal else None
        pack = packs.get(proposal.pack_id) if proposal else None
        stale = proposal is not None and is_stale(proposal, fixture, area, module, pack)
        items.append(FixtureProposal(fixture, proposal, module, pack, stale))
    return items


def fixture_proposal(
    *, session: Session, org_id: str, fixture: Fixture, area: Area
) -> FixtureProposal:
    """One fixture with its proposal, as :func:`area_proposals` gives each."""
    proposal = proposal_of(session=session, org_id=org_id, fixture_id=fixture.id)
    if proposal is None:
        return FixtureProposal(fixture, None, None, None, False)
    module = _by_id(session, EmergencyModule, org_id, {proposal.module_id}).get(proposal.module_id)
    pack = _by_id(session, BatteryPack, org_id, {proposal.pack_id}).get(proposal.pack_id)
    return FixtureProposal(
        fixture, proposal, module, pack, is_stale(proposal, fixture, area, module, pack)
    )


def _by_id(session: Session, model: type[T], org_id: str, ids: set[str]) -> dict[str, T]:
    if not ids:
        return {}
    rows = session.scalars(
        select(model).where(model.org_id == org_id, model.id.in_(ids))  # type: ignore[attr-defined]
    ).all()
    return {row.id: row for row in rows}  # type: ignore[attr-defined]


def verdict_counts(items: Iterable[FixtureProposal]) -> dict[VerdictFilter, int]:
    counts = dict.fromkeys(VerdictFilter, 0)
    for item in items:
        counts[item.verdict_key] += 1
    return counts


def by_verdict(
    items: Sequence[FixtureProposal], wanted: VerdictFilter | None
) -> list[FixtureProposal]:
    return [item for item in items if wanted is None or item.verdict_key is wanted]


# ---- what each role has to do next ----


@dataclass(frozen=True, slots=True)
class AreaQueue:
    """An area where proposals are wanted or waiting for a quote."""

    area: Area
    building: Building
    fixtures: int
    without_proposal: int
    draft: int
    accepted_not_quoted: int


def estimator_queue(*, session: Session, org_id: str, limit: int = 20) -> list[AreaQueue]:
    """Areas with fixtures waiting for a proposal or accepted ones not on a quote yet."""
    fixtures = dict(
        session.execute(
            select(Fixture.area_id, func.count())
            .where(Fixture.org_id == org_id)
            .group_by(Fixture.area_id)
        ).all()
    )
    quoted = (
        select(QuoteLine.fixture_id)
        .join(Quote, Quote.id == QuoteLine.quote_id)
        .where(Quote.org_id == org_id, QuoteLine.fixture_id.is_not(None))
    )
    by_status: dict[str, dict[str, int]] = {}
    rows = session.execute(
        select(Fixture.area_id, Proposal.status, Proposal.fixture_id.in_(quoted), func.count())
        .join(Fixture, Fixture.id == Proposal.fixture_id)
        .where(Proposal.org_id == org_id)
        .group_by(Fixture.area_id, Proposal.status, Proposal.fixture_id.in_(quoted))
    ).all()
    for area_id, status, on_quote, count in rows:
        counts = by_status.setdefault(area_id, {})
        key = "quoted" if status == Status.ACCEPTED.value and on_quote else status
        counts[key] = counts.get(key, 0) + count
    queue_ids = []
    for area_id, total in fixtures.items():
        counts = by_status.get(area_id, {})
        waiting = total - sum(counts.values())
        if waiting or counts.get(Status.DRAFT.value) or counts.get(Status.ACCEPTED.value):
            queue_ids.append(area_id)
    if not queue_ids:
        return []
    areas = session.scalars(
        select(Area)
        .where(Area.org_id == org_id, Area.id.in_(queue_ids))
        .order_by(Area.updated_at.desc(), Area.id)
        .limit(limit)
    ).all()
    buildings = _by_id(session, Building, org_id, {area.building_id for area in areas})
    queue = []
    for area in areas:
        counts = by_status.get(area.id, {})
        queue.append(
            AreaQueue(
                area=area,
                building=buildings[area.building_id],
                fixtures=fixtures[area.id],
                without_proposal=fixtures[area.id] - sum(counts.values()),
                draft=counts.get(Status.DRAFT.value, 0),
                accepted_not_quoted=counts.get(Status.ACCEPTED.value, 0),
            )
        )
    return queue


def quotes_awaiting_approval(*, session: Session, org_id: str, limit: int = 20) -> list[Quote]:
    """Quotes sent to the client, waiting for a supervisor to accept them for the firm."""
    return list(
        session.scalars(
            select(Quote)
            .where(Quote.org_id == org_id, Quote.state == QuoteState.SENT)
            .order_by(Quote.state_changed_at, Quote.created_at, Quote.id)
            .limit(limit)
        ).all()
    )
