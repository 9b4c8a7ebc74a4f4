"""JSON API for the organisation's catalogue."""

from __future__ import annotations

from fastapi import APIRouter

from server.accounts.models import Role
from server.catalogue import schemas
from server.catalogue.models import BallastType, BatteryPack, EmergencyModule, RequirementProfile
from server.common.api import Resource, add_collection_routes, add_item_routes

router = APIRouter(prefix="/api/v1/catalogue")

BALLAST_TYPES = Resource(
    model=BallastType,
    create=schemas.BallastTypeCreate,
    update=schemas.BallastTypeUpdate,
    read=schemas.BallastTypeRead,
    write_role=Role.ESTIMATOR,
    label="ballast type",
)
MODULES = Resource(
    model=EmergencyModule,
    create=schemas.ModuleCreate,
    update=schemas.ModuleUpdate,
    read=schemas.ModuleRead,
    write_role=Role.ESTIMATOR,
    label="emergency module",
)
PACKS = Resource(
    model=BatteryPack,
    create=schemas.PackCreate,
    update=schemas.PackUpdate,
    read=schemas.PackRead,
    write_role=Role.ESTIMATOR,
    label="battery pack",
)

PROFILES = Resource(
    model=RequirementProfile,
    create=schemas.ProfileCreate,
    update=schemas.ProfileUpdate,
    read=schemas.ProfileRead,
    write_role=Role.ESTIMATOR,
    label="requirement profile",
)

for _path, _resource in (
    ("/ballast-types", BALLAST_TYPES),
    ("/modules", MODULES),
    ("/packs", PACKS),
    ("/profiles", PROFILES),
):
    add_collection_routes(router, _path, _resource, tag="catalogue")
    add_item_routes(router, _path + "/{record_id}", _resource, tag="catalogue")
