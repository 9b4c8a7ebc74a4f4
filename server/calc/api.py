"""The stateless JSON calculators over the engineering core (any signed-in role)."""

from __future__ import annotations

from datetime import date

from fastapi import APIRouter

from server.calc import schemas, service
from server.deps import CurrentUser, SessionDep

router = APIRouter(prefix="/api/v1/calc", tags=["calculators"])

CAUTION = (
    " Every answer lists the assumptions it made and the safety cautions. Results support a "
    "qualified person's judgement under the local codes; they do not replace it."
)


@router.post(
    "/runtime",
    summary="Pack run-time at a load, new and at end of life",
    description="Peukert run-time with the chemistry's rated hours, temperature and "
    "end-of-life factors; give the load as load_w or load_a, exactly one. The verdict is "
    "null without required_min." + CAUTION,
)
def runtime(payload: schemas.RuntimeIn, user: CurrentUser) -> schemas.RuntimeOut:
    return service.runtime(payload=payload)


@router.post(
    "/recharge",
    summary="Recharge time of a flat pack",
    description="Recharge time with the rate-dependent charge factor, against 24 h and the "
    "continuous-charge window." + CAUTION,
)
def recharge(payload: schemas.RechargeIn, user: CurrentUser) -> schemas.RechargeOut:
    return service.recharge(payload=payload)


@router.post(
    "/pack-health",
    summary="Internal resistance and sag under the module",
    description="Internal resistance from a load test (a current or a resistor), the "
    "terminal voltage under the module's draw against the cut-off, and the resistance "
    "against the new-pack value." + CAUTION,
)
def pack_health(payload: schemas.PackHealthIn, user: CurrentUser) -> schemas.PackHealthOut:
    return service.pack_health(payload=payload)


@router.post(
    "/check",
    summary="Every compatibility rule for a fixture, module and pack",
    description="The verdict (fail when any finding fails, else warn when any warns, else "
    "pass; action and info findings do not change it), the findings worst first, and the "
    "figures behind them." + CAUTION,
)
def check(payload: schemas.CheckIn, user: CurrentUser, session: SessionDep) -> schemas.CheckOut:
    return service.check(session=session, org_id=user.org_id, payload=payload, today=date.today())
