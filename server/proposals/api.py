"""JSON API for proposals: a fixture's module and pack, the checks, suggestions, acceptance.

Reading is open to every role; choosing, suggesting and accepting need an
estimator or above. The live check of a fixture form is open to surveyors:
it stores nothing.
"""

from __future__ import annotations

from decimal import Decimal
from typing import Annotated, Any

from fastapi import APIRouter, Query, Response, status

from server.calc.service import findings_out
from server.common import crud
from server.common.api import ERROR_RESPONSES
from server.deps import EstimatorUser, SessionDep, SurveyorUser
from server.proposals import schemas, service
from server.safety import CAUTIONS
from server.sites.models import Area

router = APIRouter(prefix="/api/v1", tags=["proposals"])

CAUTION_NOTE = (
    " Results support a qualified person's judgement under the local codes; they do not replace it."
)
VALIDATION: dict[int | str, dict[str, Any]] = {
    422: {"description": "A field is wrong; the detail names it."}
}


def _combination(suggestion: service.Suggestion) -> schemas.CombinationRead | None:
    if suggestion.module is None or suggestion.pack is None or suggestion.result is None:
        return None
    return schemas.CombinationRead(
        module_id=suggestion.module.id,
        module_name=suggestion.module.name,
        pack_id=suggestion.pack.id,
        pack_name=suggestion.pack.name,
        price=suggestion.price if suggestion.price is not None else Decimal(0),
        verdict=suggestion.result.verdict,
        findings=findings_out(suggestion.result.findings),
    )


@router.get(
    "/fixtures/{fixture_id}/proposal",
    response_model=schemas.ProposalRead,
    summary="Read a fixture's proposal",
    responses=ERROR_RESPONSES,
)
def read_proposal(fixture_id: str, session: SessionDep, user: SurveyorUser) -> dict[str, Any]:
    return service.as_read(
        service.get_proposal(session=session, org_id=user.org_id, fixture_id=fixture_id)
    )


@router.put(
    "/fixtures/{fixture_id}/proposal",
    response_model=schemas.ProposalRead,
    status_code=status.HTTP_200_OK,
    summary="Choose the module and pack for a fixture; the checks run and are stored",
    description="Creates the proposal (201) when the fixture has none; sending the same choice "
    "again answers the stored one (200). Changing a proposal needs the version read (409 when "
    "someone changed it first); a new choice goes back to draft." + CAUTION_NOTE,
    responses={201: {"model": schemas.ProposalRead}, **ERROR_RESPONSES, **VALIDATION},
)
def put_proposal(
    fixture_id: str,
    body: schemas.ProposalPut,
    response: Response,
    session: SessionDep,
    user: EstimatorUser,
) -> dict[str, Any]:
    proposal, created = service.save_proposal(
        session=session,
        user=user,
        fixture_id=fixture_id,
        module_id=body.module_id,
        pack_id=body.pack_id,
        version=body.version,
        proposal_id=str(body.id) if body.id else None,
    )
    response.status_code = status.HTTP_201_CREATED if created else status.HTTP_200_OK
    return service.as_read(proposal)


@router.post(
    "/fixtures/{fixture_id}/proposal/suggest",
    response_model=schemas.SuggestionRead,
    summary="The cheapest module and pack that pass every rule (stored when applied)",
    description="Every module with every pack of the firm's catalogue is checked; the cheapest "
    "(module price plus pack price) whose verdict is pass wins. When none passes, the answer "
    "explains the nearest miss and stores nothing." + CAUTION_NOTE,
    responses={**ERROR_RESPONSES, **VALIDATION},
)
def suggest(
    fixture_id: str, body: schemas.SuggestBody, session: SessionDep, user: EstimatorUser
) -> schemas.SuggestionRead:
    if body.apply:
        suggestion, proposal = service.apply_suggestion(
            session=session, user=user, fixture_id=fixture_id, version=body.version
        )
    else:
        fixture = service.fixture_of(session=session, org_id=user.org_id, fixture_id=fixture_id)
        suggestion = service.suggest_cheapest(session=session, org_id=user.org_id, fixture=fixture)
        proposal = None
    return schemas.SuggestionRead(
        passes=suggestion.passes,
        explanation=suggestion.explanation,
        combinations=suggestion.combinations,
        combination=_combination(suggestion),
        proposal=schemas.ProposalRead.model_validate(proposal) if proposal else None,
    )


@router.post(
    "/fixtures/{fixture_id}/proposal/accept",
    response_model=schemas.ProposalRead,
    summary="Accept a fixture's proposal for the quote",
    description="The checks run again first. A proposal whose checks fail needs an "
    "override_reason (422 without one); the quote builder takes accepted proposals only."
    + CAUTION_NOTE,
    responses={**ERROR_RESPONSES, **VALIDATION},
)
def accept(
    fixture_id: str, body: schemas.AcceptBody, session: SessionDep, user: EstimatorUser
) -> dict[str, Any]:
    proposal = service.accept(
        session=session,
        user=user,
        fixture_id=fixture_id,
        version=body.version,
        override_reason=body.override_reason,
    )
    return service.as_read(proposal)


@router.post(
    "/fixtures/{fixture_id}/proposal/unaccept",
    response_model=schemas.ProposalRead,
    summary="Take an accepted proposal back to draft",
    responses=ERROR_RESPONSES,
)
def unaccept(
    fixture_id: str, body: schemas.UnacceptBody, session: SessionDep, user: EstimatorUser
) -> dict[str, Any]:
    proposal = service.unaccept(
        session=session, user=user, fixture_id=fixture_id, version=body.version
    )
    return service.as_read(proposal)


@router.post(
    "/areas/{area_id}/check",
    response_model=schemas.CheckRead,
    summary="Check a fixture form (saved or not) with a module and pack; stores nothing",
    description="What the survey form's findings panel shows, from the same service the "
    "proposals use." + CAUTION_NOTE,
    responses={**ERROR_RESPONSES, **VALIDATION},
)
def check(
    area_id: str, body: schemas.CheckBody, session: SessionDep, user: SurveyorUser
) -> schemas.CheckRead:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    module, pack = service.catalogue_pair(
        session=session, org_id=user.org_id, module_id=body.module_id, pack_id=body.pack_id
    )
    result = service.evaluate(
        session=session,
        org_id=user.org_id,
        fixture=body.fixture,
        module=module,
        pack=pack,
        area=area,
    )
    case = result.case
    return schemas.CheckRead(
        verdict=result.verdict,
        findings=findings_out(result.findings),
        runtime_new_min=case.runtime_new_min,
        runtime_end_of_life_min=case.runtime_end_of_life_min,
        required_min=case.required_min,
        c_rate=case.c_rate,
        recharge_h=case.recharge_h,
        eblf=case.eblf,
        eblf_is_estimate=case.eblf_is_estimate,
        emergency_lumens=case.emergency_lm,
        assumptions=list(result.assumptions),
        cautions=list(CAUTIONS),
    )


@router.get(
    "/areas/{area_id}/proposals",
    response_model=schemas.AreaProposalsRead,
    summary="An area's fixtures with their proposals, filtered by verdict",
    responses=ERROR_RESPONSES,
)
def area_proposals(
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    verdict: Annotated[
        schemas.VerdictFilter | None,
        Query(description="pass, warn, fail, or none (no proposal yet)."),
    ] = None,
) -> schemas.AreaProposalsRead:
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    items = service.area_proposals(session=session, org_id=user.org_id, area=area)
    return schemas.AreaProposalsRead(
        area_id=area.id,
        counts=service.verdict_counts(items),
        items=[
            schemas.FixtureProposalRead(
                fixture_id=item.fixture.id,
                tag=item.fixture.tag,
                stale=item.stale,
                proposal=schemas.ProposalRead.model_validate(item.proposal)
                if item.proposal
                else None,
            )
            for item in service.by_verdict(items, verdict)
        ],
    )
