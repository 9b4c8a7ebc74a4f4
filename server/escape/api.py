"""Escape-route calculators: illuminance along a route, and the conversion planner."""

from __future__ import annotations

from fastapi import APIRouter

from server.deps import CurrentUser
from server.escape import schemas, service

router = APIRouter(prefix="/api/v1/calc", tags=["escape routes"])

CAUTION = (
    " Findings carry the maintenance factor, the model's assumptions and the caution: the "
    "results support a design checked by a qualified person under the local codes; they do "
    "not replace it."
)


@router.post(
    "/route-illuminance",
    summary="Emergency illuminance along an escape route",
    description="Horizontal illuminance on the floor along the route's centre line every "
    "step_m (and across the central band for EU profiles) by the inverse-square cosine law, "
    "times the maintenance factor; min, max, average, max:min, the darkest point and the "
    "verdict against the profile (with the end-of-duration levels for us-egress)." + CAUTION,
)
def route_illuminance(
    payload: schemas.RouteIlluminanceIn, user: CurrentUser
) -> schemas.RouteIlluminanceOut:
    return service.route_illuminance(payload=payload)


@router.post(
    "/route-plan",
    summary="Cheapest set of fixtures to convert on an escape route",
    description="The cheapest candidates whose emergency light meets the profile at every "
    "point (and the average and end-of-duration levels for us-egress), by integer "
    "programming; optimal says whether it is proven, gap how far above the best bound it "
    "may be. The max:min ratio is checked afterwards. When no set is enough, shortfall says "
    "where and by how much, with every candidate converted." + CAUTION,
)
def route_plan(payload: schemas.RoutePlanIn, user: CurrentUser) -> schemas.RoutePlanOut:
    return service.route_plan(payload=payload)
