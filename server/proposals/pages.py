"""Pages for proposals: an area's fixtures with their checks, one fixture's proposal,
and the findings panel beside the survey form (an htmx fragment).

Views parse, authorise, call :mod:`server.proposals.service` and render ready
values; the templates compute nothing.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import urlencode, urlsplit

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from sqlalchemy.orm import Session
from starlette.datastructures import FormData

from server.accounts.models import Role, User, role_at_least
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common import crud
from server.common.errors import Conflict, InvalidInput
from server.common.forms import FormDep
from server.common.labels import fixture_situation, fixture_summary, label
from server.deps import EstimatorUser, SessionDep, SurveyorUser
from server.engineering.compatibility import CheckResult
from server.engineering.findings import Finding, Severity, Verdict
from server.proposals import service
from server.proposals.models import Proposal
from server.proposals.schemas import Status, VerdictFilter
from server.sites.models import Area, Building, Fixture
from server.templating import render

router = APIRouter(include_in_schema=False)

PLANNER_PICK = "The planner's pick (cheapest that passes)"
FILTER_LABELS: dict[VerdictFilter, str] = {
    VerdictFilter.PASS: "Pass",
    VerdictFilter.WARN: "Warn",
    VerdictFilter.FAIL: "Fail",
    VerdictFilter.NONE: "None yet",
}


# ---- ready values for the templates ----


@dataclass(frozen=True, slots=True)
class FindingView:
    severity: str
    severity_label: str
    message: str
    fix: str
    source: str


@dataclass(frozen=True, slots=True)
class ResultView:
    """A verdict with its figures and findings, worst first."""

    verdict: str
    verdict_label: str
    title: str
    figures: list[tuple[str, str]]
    findings: list[FindingView]
    assumptions: list[str] = field(default_factory=list)
    note: str = ""


def minutes(value: float | None) -> str:
    return "\u2014" if value is None else f"{value:.0f} min"


def lumens(value: float | None, estimate: bool | None) -> str:
    if value is None:
        return "\u2014"
    return f"{value:.0f} lm" + (" (estimate)" if estimate else "")


def _eblf(value: float | None, estimate: bool | None) -> str:
    if value is None:
        return "\u2014"
    return f"{value:.3f}" + (" (estimate)" if estimate else " (declared)")


def _figures(
    *,
    runtime_new_min: float | None,
    runtime_end_of_life_min: float | None,
    required: float | None,
    emergency_lm: float | None,
    eblf: float | None,
    eblf_is_estimate: bool | None,
    c_rate: float | None,
    recharge_h: float | None,
) -> list[tuple[str, str]]:
    return [
        ("Run-time, new pack", minutes(runtime_new_min)),
        ("Run-time, end of life", minutes(runtime_end_of_life_min)),
        ("Required", minutes(required)),
        ("Emergency light", lumens(emergency_lm, eblf_is_estimate)),
        ("EBLF", _eblf(eblf, eblf_is_estimate)),
        ("Battery current", "\u2014" if c_rate is None else f"{c_rate:.2f} C"),
        ("Recharge", "\u2014" if recharge_h is None else f"{recharge_h:.1f} h"),
    ]


def finding_views(findings: Iterable[Finding]) -> list[FindingView]:
    return [
        FindingView(f.severity.value, label(f.severity), f.message, f.fix, f.source)
        for f in findings
    ]


def stored_finding_views(findings: Iterable[Mapping[str, Any]]) -> list[FindingView]:
    return [
        FindingView(
            str(f.get("severity", "")),
            label(str(f.get("severity", "")), Severity),
            str(f.get("message", "")),
            str(f.get("fix", "")),
            str(f.get("source", "")),
        )
        for f in findings
    ]


def result_view(result: CheckResult, *, title: str, note: str = "") -> ResultView:
    case = result.case
    return ResultView(
        verdict=result.verdict.value,
        verdict_label=label(result.verdict),
        title=title,
        figures=_figures(
            runtime_new_min=case.runtime_new_min,
            runtime_end_of_life_min=case.runtime_end_of_life_min,
            required=case.required_min,
            emergency_lm=case.emergency_lm,
            eblf=case.eblf,
            eblf_is_estimate=case.eblf_is_estimate,
            c_rate=case.c_rate,
            recharge_h=case.recharge_h,
        ),
        findings=finding_views(result.findings),
        assumptions=list(result.assumptions),
        note=note,
    )


def stored_view(
    proposal: Proposal,
    module: EmergencyModule | None,
    pack: BatteryPack | None,
    required: float | None,
) -> ResultView:
    verdict = proposal.verdict or ""
    return ResultView(
        verdict=verdict,
        verdict_label=label(verdict, Verdict) or "Not checked",
        title=_pair_title(module, pack),
        figures=_figures(
            runtime_new_min=proposal.runtime_new_min,
            runtime_end_of_life_min=proposal.runtime_end_of_life_min,
            required=required,
            emergency_lm=proposal.emergency_lumens,
            eblf=proposal.eblf,
            eblf_is_estimate=proposal.eblf_is_estimate,
            c_rate=proposal.c_rate,
            recharge_h=proposal.recharge_h,
        ),
        findings=stored_finding_views(proposal.findings or []),
    )


def _pair_title(module: EmergencyModule | None, pack: BatteryPack | None) -> str:
    module_name = module.name if module is not None else "(module removed)"
    pack_name = pack.name if pack is not None else "(pack removed)"
    return f"{module_name} with {pack_name}"


@dataclass(frozen=True, slots=True)
class ExistingPackView:
    verdict: str
    verdict_label: str
    lines: list[str]
    warnings: list[str]
    findings: list[FindingView]


def existing_pack_view(check: service.ExistingPackCheck | None) -> ExistingPackView | None:
    if check is None:
        return None
    lines, warnings = [], []
    if check.made_on is not None:
        lines.append(f"Date code reads as {check.made_on:%B %Y}.")
    if check.date_problem:
        warnings.append(f"Date code: {check.date_problem}.")
    if check.date_warning:
        warnings.append(check.date_warning)
    if check.internal_ohm is not None:
        lines.append(f"Internal resistance from the load test: {check.internal_ohm:.2f} ohm.")
    if not check.with_module:
        lines.append(
            "Enter the pack's chemistry, cells and capacity, and choose a module, to check "
            "whether this pack can stay."
        )
    verdict = check.verdict.value if check.verdict is not None else ""
    return ExistingPackView(
        verdict=verdict,
        verdict_label=label(check.verdict) if check.verdict is not None else "",
        lines=lines,
        warnings=warnings,
        findings=finding_views(check.findings),
    )


# ---- the findings panel beside the survey form ----


def _options(items: Sequence[EmergencyModule | BatteryPack]) -> list[tuple[str, str]]:
    return [("", PLANNER_PICK)] + [(item.id, item.name) for item in items]


def findings_panel(
    *,
    session: Session,
    user: User,
    area: Area,
    fixture: service.FixtureLike | None,
    problems: Mapping[str, str],
    field_labels: Mapping[str, str],
    module_id: str = "",
    pack_id: str = "",
) -> dict[str, Any]:
    """What the panel beside the fixture form shows, for the form as it stands."""
    modules, packs = service.catalogue_items(session=session, org_id=user.org_id)
    panel: dict[str, Any] = {
        "module_options": _options(modules),
        "pack_options": _options(packs),
        "module_id": module_id,
        "pack_id": pack_id,
        "result": None,
        "existing": None,
        "message": "",
        "catalogue_link": role_at_least(user.role_enum, Role.ESTIMATOR),
    }
    if not modules or not packs:
        panel["message"] = "The catalogue has no emergency modules or no packs yet."
        return panel
    if fixture is None:
        named = [field_labels.get(name, name) for name in problems if name in field_labels]
        panel["message"] = (
            f"To see the findings, fill in or correct: {', '.join(named)}."
            if named
            else "To see the findings, correct the form."
        )
        return panel
    try:
        module: EmergencyModule | None
        if module_id and pack_id:
            module, pack = service.catalogue_pair(
                session=session, org_id=user.org_id, module_id=module_id, pack_id=pack_id
            )
            result = service.evaluate(
                session=session,
                org_id=user.org_id,
                fixture=fixture,
                module=module,
                pack=pack,
                area=area,
            )
            panel["result"] = result_view(result, title=_pair_title(module, pack))
        else:
            suggestion = service.suggest_cheapest(
                session=session,
                org_id=user.org_id,
                fixture=fixture,
                area=area,
                module_id=module_id or None,
                pack_id=pack_id or None,
            )
            module = suggestion.module
            if suggestion.result is None:
                panel["message"] = suggestion.explanation
            else:
                panel["result"] = result_view(
                    suggestion.result,
                    title=_pair_title(suggestion.module, suggestion.pack),
                    note=suggestion.explanation,
                )
        panel["existing"] = existing_pack_view(
            service.existing_pack_check(
                session=session, org_id=user.org_id, fixture=fixture, module=module, area=area
            )
        )
    except InvalidInput as exc:
        panel["message"] = f"{field_labels.get(exc.field, exc.field)}: {exc.message}"
    return panel


# ---- an area's proposals ----


@dataclass(frozen=True, slots=True)
class ProposalRowView:
    fixture_id: str
    tag: str
    summary: str
    situation: str
    has_proposal: bool
    version: int | None
    verdict: str
    verdict_label: str
    accepted: bool
    stale: bool
    title: str
    figures: list[tuple[str, str]]
    worst: list[FindingView]
    needs_reason: bool
    override_reason: str
    error: str = ""
    note: str = ""


def row_view(
    item: service.FixtureProposal, required: float | None, *, error: str = "", note: str = ""
) -> ProposalRowView:
    fixture, proposal = item.fixture, item.proposal
    base = {
        "fixture_id": fixture.id,
        "tag": fixture.tag,
        "summary": fixture_summary(fixture),
        "situation": fixture_situation(fixture),
        "error": error,
        "note": note,
    }
    if proposal is None:
        return ProposalRowView(
            **base,
            has_proposal=False,
            version=None,
            verdict="none",
            verdict_label="None yet",
            accepted=False,
            stale=False,
            title="No module or pack chosen yet.",
            figures=[],
            worst=[],
            needs_reason=False,
            override_reason="",
        )
    stored = stored_view(proposal, item.module, item.pack, required)
    keep = {"Run-time, new pack", "Run-time, end of life", "Emergency light"}
    return ProposalRowView(
        **base,
        has_proposal=True,
        version=proposal.version,
        verdict=stored.verdict,
        verdict_label=stored.verdict_label,
        accepted=proposal.status == Status.ACCEPTED.value,
        stale=item.stale,
        title=stored.title,
        figures=[pair for pair in stored.figures if pair[0] in keep],
        worst=[f for f in stored.findings if f.severity in ("fail", "warn")][:3],
        needs_reason=proposal.verdict == Verdict.FAIL.value,
        override_reason=proposal.override_reason,
    )


def _area_context(session: Session, user: User, area_id: str) -> tuple[Area, Building, float]:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    building = crud.get_owned(session, Building, org_id=user.org_id, record_id=area.building_id)
    required = service.required_min(session=session, org_id=user.org_id, area=area)
    return area, building, required


def _filter(value: str | None) -> VerdictFilter | None:
    try:
        return VerdictFilter(value) if value else None
    except ValueError:
        return None


def _back(form: FormData, default: str) -> str:
    """Where to return after a row's button: a path of this site only."""
    target = str(form.get("back") or "")
    return target if target.startswith("/") and not target.startswith("//") else default


def _is_htmx(request: Request) -> bool:
    return request.headers.get("HX-Request") == "true"


@router.get("/areas/{area_id}/proposals", response_class=HTMLResponse)
def area_proposals_page(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    verdict: str | None = None,
    suggested: int | None = None,
    missed: int | None = None,
    rechecked: int | None = None,
) -> HTMLResponse:
    area, building, required = _area_context(session, user, area_id)
    items = service.area_proposals(session=session, org_id=user.org_id, area=area)
    wanted = _filter(verdict)
    counts = service.verdict_counts(items)
    chosen = service.by_verdict(items, wanted)
    filters = [("", "All", len(items), wanted is None)] + [
        (key.value, FILTER_LABELS[key], counts[key], wanted is key) for key in VerdictFilter
    ]
    messages = []
    if suggested is not None:
        messages.append(f"The planner chose a module and pack for {suggested} fixture(s).")
        if missed:
            messages.append(
                f"For {missed} fixture(s) nothing in the catalogue passes every rule: open them "
                "to see the nearest miss."
            )
    if rechecked is not None:
        messages.append(f"The checks ran again for {rechecked} proposal(s).")
    back = request.url.path + (f"?{urlencode({'verdict': wanted.value})}" if wanted else "")
    return render(
        request,
        "proposals/area.html",
        {
            "section": "sites",
            "area": area,
            "building": building,
            "rows": [row_view(item, required) for item in chosen],
            "filters": filters,
            "messages": messages,
            "stale_count": sum(1 for item in items if item.stale),
            "without_count": counts[VerdictFilter.NONE],
            "can_estimate": role_at_least(user.role_enum, Role.ESTIMATOR),
            "back": back,
            "required": minutes(required),
        },
    )


@router.post("/areas/{area_id}/proposals/suggest")
def suggest_area(
    area_id: str, session: SessionDep, user: EstimatorUser, form: FormData = FormDep
) -> Response:
    outcome = service.suggest_for_area(session=session, user=user, area_id=area_id)
    query = urlencode({"suggested": outcome.saved, "missed": outcome.no_pass})
    return RedirectResponse(f"/areas/{area_id}/proposals?{query}", status_code=303)


@router.post("/areas/{area_id}/proposals/recheck")
def recheck_area(
    area_id: str, session: SessionDep, user: EstimatorUser, form: FormData = FormDep
) -> Response:
    area, _, _ = _area_context(session, user, area_id)
    stale = [
        item.fixture.id
        for item in service.area_proposals(session=session, org_id=user.org_id, area=area)
        if item.stale
    ]
    for fixture_id in stale:
        service.recheck(session=session, user=user, fixture_id=fixture_id)
    return RedirectResponse(f"/areas/{area_id}/proposals?rechecked={len(stale)}", status_code=303)


def _row_response(
    request: Request,
    session: Session,
    user: User,
    fixture: Fixture,
    *,
    error: str = "",
    note: str = "",
    status_code: int = 200,
) -> HTMLResponse:
    area, _, required = _area_context(session, user, fixture.area_id)
    item = service.fixture_proposal(session=session, org_id=user.org_id, fixture=fixture, area=area)
    current = urlsplit(request.headers.get("HX-Current-URL", ""))
    return render(
        request,
        "proposals/_row.html",
        {
            "row": row_view(item, required, error=error, note=note),
            "can_estimate": True,
            "back": current.path + (f"?{current.query}" if current.query else ""),
        },
        status_code=status_code,
    )


# ---- one fixture's proposal ----


def _proposal_page(
    request: Request,
    session: Session,
    user: User,
    fixture: Fixture,
    *,
    module_id: str = "",
    pack_id: str = "",
    errors: Mapping[str, str] | None = None,
    notice: str = "",
    notice_kind: str = "success",
    reason: str = "",
    status_code: int = 200,
) -> HTMLResponse:
    """One fixture's proposal page; a 409 or 422 answer shows it again with the message."""
    if status_code == 409:
        notice_kind = "warn"
    area, building, required = _area_context(session, user, fixture.area_id)
    proposal = service.proposal_of(session=session, org_id=user.org_id, fixture_id=fixture.id)
    modules, packs = service.catalogue_items(session=session, org_id=user.org_id)
    stored = live = None
    stale = False
    if proposal is not None:
        module = next((m for m in modules if m.id == proposal.module_id), None)
        pack = next((p for p in packs if p.id == proposal.pack_id), None)
        stored = stored_view(proposal, module, pack, required)
        stale = service.is_stale(proposal, fixture, area, module, pack)
        if module is not None and pack is not None:
            try:
                live = service.evaluate(
                    session=session,
                    org_id=user.org_id,
                    fixture=fixture,
                    module=module,
                    pack=pack,
                    area=area,
                )
            except InvalidInput:
                live = None
        module_id = module_id or proposal.module_id
        pack_id = pack_id or proposal.pack_id
    return render(
        request,
        "proposals/fixture.html",
        {
            "section": "sites",
            "fixture": fixture,
            "summary": fixture_summary(fixture),
            "situation": fixture_situation(fixture),
            "area": area,
            "building": building,
            "proposal": proposal,
            "stored": stored,
            "stale": stale,
            "accepted": proposal is not None and proposal.status == Status.ACCEPTED.value,
            "needs_reason": stored is not None and stored.verdict == Verdict.FAIL.value,
            "assumptions": list(live.assumptions) if live is not None else [],
            "module_options": [(m.id, m.name) for m in modules],
            "pack_options": [(p.id, p.name) for p in packs],
            "module_id": module_id,
            "pack_id": pack_id,
            "errors": dict(errors or {}),
            "notice": notice,
            "notice_kind": notice_kind,
            "reason": reason,
            "proposal_id": str(uuid.uuid4()),
            "can_estimate": role_at_least(user.role_enum, Role.ESTIMATOR),
        },
        status_code=status_code,
    )


@router.get("/fixtures/{fixture_id}/proposal", response_class=HTMLResponse)
def proposal_page(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: SurveyorUser,
    done: str = "",
) -> HTMLResponse:
    fixture = service.fixture_of(session=session, org_id=user.org_id, fixture_id=fixture_id)
    notices = {
        "saved": "Saved: the checks ran with this module and pack.",
        "accepted": "Accepted: the quote builder will take this fixture.",
        "unaccepted": "Back to draft: the quote builder leaves this fixture out.",
        "suggested": "The planner's pick is saved as this fixture's proposal.",
        "rechecked": "The checks ran again.",
    }
    return _proposal_page(request, session, user, fixture, notice=notices.get(done, ""))


def _version(form: FormData) -> int | None:
    text = str(form.get("version") or "")
    return int(text) if text.isdigit() else None


def _after(request: Request, fixture_id: str, form: FormData, done: str) -> Response:
    default = f"/fixtures/{fixture_id}/proposal?done={done}"
    return RedirectResponse(_back(form, default), status_code=303)


@router.post("/fixtures/{fixture_id}/proposal")
def save_proposal_page(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = service.fixture_of(session=session, org_id=user.org_id, fixture_id=fixture_id)
    module_id, pack_id = str(form.get("module_id") or ""), str(form.get("pack_id") or "")
    errors = {}
    if not module_id:
        errors["module_id"] = "Choose a module."
    if not pack_id:
        errors["pack_id"] = "Choose a pack."
    if errors:
        return _proposal_page(
            request,
            session,
            user,
            fixture,
            module_id=module_id,
            pack_id=pack_id,
            errors=errors,
            status_code=422,
        )
    try:
        service.save_proposal(
            session=session,
            user=user,
            fixture_id=fixture.id,
            module_id=module_id,
            pack_id=pack_id,
            version=_version(form),
            proposal_id=str(form.get("id") or "") or None,
        )
    except InvalidInput as exc:
        return _proposal_page(
            request,
            session,
            user,
            fixture,
            module_id=module_id,
            pack_id=pack_id,
            errors={exc.field: exc.message},
            status_code=422,
        )
    except Conflict as exc:
        session.rollback()
        return _proposal_page(
            request,
            session,
            user,
            fixture,
            module_id=module_id,
            pack_id=pack_id,
            notice=f"{exc.message} The stored choice is shown below; choose again to change it.",
            status_code=409,
        )
    return RedirectResponse(f"/fixtures/{fixture.id}/proposal?done=saved", status_code=303)


def _row_action(
    request: Request,
    session: Session,
    user: User,
    fixture: Fixture,
    form: FormData,
    *,
    act: Callable[[], str],
    done: str,
    reason: str = "",
) -> Response:
    """Run a row's button (suggest, accept, un-accept) and answer as the page asked.

    ``act`` returns a note for the user ("" when all went as asked). htmx gets
    the fixture's row back, with the note or the refusal in it; a plain form
    gets the next page, or the proposal page again with the message.
    """
    try:
        note = act()
    except InvalidInput as exc:
        if _is_htmx(request):
            return _row_response(
                request, session, user, fixture, error=exc.message, status_code=422
            )
        return _proposal_page(
            request,
            session,
            user,
            fixture,
            errors={exc.field: exc.message},
            reason=reason,
            status_code=422,
        )
    except Conflict as exc:
        session.rollback()
        if _is_htmx(request):
            return _row_response(
                request, session, user, fixture, error=exc.message, status_code=409
            )
        return _proposal_page(
            request, session, user, fixture, notice=exc.message, reason=reason, status_code=409
        )
    if _is_htmx(request):
        return _row_response(request, session, user, fixture, note=note)
    if note:
        return _proposal_page(request, session, user, fixture, notice=note, notice_kind="info")
    return _after(request, fixture.id, form, done)


@router.post("/fixtures/{fixture_id}/proposal/suggest")
def suggest_page(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = service.fixture_of(session=session, org_id=user.org_id, fixture_id=fixture_id)

    def act() -> str:
        suggestion, proposal = service.apply_suggestion(
            session=session, user=user, fixture_id=fixture.id, version=_version(form)
        )
        return "" if proposal is not None else suggestion.explanation

    return _row_action(request, session, user, fixture, form, act=act, done="suggested")


@router.post("/fixtures/{fixture_id}/proposal/accept")
def accept_page(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = service.fixture_of(session=session, org_id=user.org_id, fixture_id=fixture_id)
    reason = str(form.get("override_reason") or "")

    def act() -> str:
        service.accept(
            session=session,
            user=user,
            fixture_id=fixture.id,
            version=_version(form) or 0,
            override_reason=reason,
        )
        return ""

    return _row_action(
        request, session, user, fixture, form, act=act, done="accepted", reason=reason
    )


@router.post("/fixtures/{fixture_id}/proposal/unaccept")
def unaccept_page(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    fixture = service.fixture_of(session=session, org_id=user.org_id, fixture_id=fixture_id)

    def act() -> str:
        service.unaccept(
            session=session, user=user, fixture_id=fixture.id, version=_version(form) or 0
        )
        return ""

    return _row_action(request, session, user, fixture, form, act=act, done="unaccepted")


@router.post("/fixtures/{fixture_id}/proposal/recheck")
def recheck_page(
    request: Request,
    fixture_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> Response:
    service.recheck(session=session, user=user, fixture_id=fixture_id)
    return _after(request, fixture_id, form, "rechecked")
