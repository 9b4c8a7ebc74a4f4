"""JSON API for buildings, areas and fixtures."""

from __future__ import annotations

from fastapi import APIRouter

from server.accounts.models import Role
from server.common.api import Resource, add_collection_routes, add_item_routes
from server.sites import schemas
from server.sites.models import Area, Building, Fixture

router = APIRouter(prefix="/api/v1")

BUILDINGS = Resource(
    model=Building,
    create=schemas.BuildingCreate,
    update=schemas.BuildingUpdate,
    read=schemas.BuildingRead,
    write_role=Role.SURVEYOR,
    label="building",
)
AREAS = Resource(
    model=Area,
    create=schemas.AreaCreate,
    update=schemas.AreaUpdate,
    read=schemas.AreaRead,
    write_role=Role.SURVEYOR,
    label="area",
    parent_model=Building,
    parent_key="building_id",
)
FIXTURES = Resource(
    model=Fixture,
    create=schemas.FixtureCreate,
    update=schemas.FixtureUpdate,
    read=schemas.FixtureRead,
    write_role=Role.SURVEYOR,
    label="fixture",
    parent_model=Area,
    parent_key="area_id",
)

add_collection_routes(router, "/buildings", BUILDINGS, tag="sites")
add_item_routes(router, "/buildings/{record_id}", BUILDINGS, tag="sites")
add_collection_routes(router, "/buildings/{parent_id}/areas", AREAS, tag="sites")
add_item_routes(router, "/areas/{record_id}", AREAS, tag="sites")
add_collection_routes(router, "/areas/{parent_id}/fixtures", FIXTURES, tag="sites")
add_item_routes(router, "/fixtures/{record_id}", FIXTURES, tag="sites")
