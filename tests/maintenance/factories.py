"""Invented buildings with converted fixtures, made straight with the ORM.

Nothing here is real product data: the module, the pack and the firm are
made up for the tests.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date
from decimal import Decimal

from sqlalchemy import select
from sqlalchemy.orm import Session

from server.accounts.models import Organisation, User
from server.catalogue.models import BatteryPack, EmergencyModule
from server.db import make_engine, make_session_factory
from server.maintenance.models import TestRecord
from server.proposals.models import Proposal
from server.sites.models import Area, Building, Fixture

# The module draws 1.5 A; the pack is 3.2 Ah at the 5 h rate with k = 1, so a
# duration test of t minutes shows 1.5 * t / 60 Ah (hand-checkable).
MODULE_A = 1.5
PACK_AH = 3.2


@dataclass
class Site:
    """Ids of what :func:`make_site` made."""

    org_id: str
    building_id: str
    area_ids: list[str] = field(default_factory=list)
    fixture_ids: list[str] = field(default_factory=list)


@contextmanager
def orm_session(database_url: str) -> Iterator[Session]:
    engine = make_engine(database_url)
    try:
        with make_session_factory(engine)() as session:
            yield session
    finally:
        engine.dispose()


def org_of(session: Session, email: str) -> Organisation:
    user = session.scalar(select(User).where(User.email == email))
    assert user is not None
    org = session.get(Organisation, user.org_id)
    assert org is not None
    return org


def make_site(
    session: Session,
    org: Organisation,
    *,
    commissioned_on: date | None,
    areas: tuple[tuple[str, str, tuple[str, ...]], ...] = (
        ("Corridor 2A", "2", ("E-01", "E-02", "E-03")),
    ),
    name: str = "Harbour works",
    required_min: float = 90.0,
    accepted: bool = True,
    ambient_c: float = 25.0,
) -> Site:
    """A building whose areas (name, floor, tags) hold converted fixtures."""
    building = Building(org_id=org.id, name=name, address="1 Sample Quay")
    session.add(building)
    session.flush()
    module = EmergencyModule(
        org_id=org.id,
        name="Sample inverter 1.5 A",
        battery_a=MODULE_A,
        chemistry="NiCd",
        cells=4,
        cutoff_v=4.0,
        charge_a=0.3,
        rated_min=90.0,
        lamp_types=["T8"],
        lamp_w_min=18,
        lamp_w_max=58,
        ballasts=["electronic-programmed-start"],
        price=Decimal("80.00"),
    )
    pack = BatteryPack(
        org_id=org.id,
        name="Sample NiCd 4.8 V 3.2 Ah",
        chemistry="NiCd",
        cells=4,
        nominal_v=4.8,
        capacity_ah=PACK_AH,
        rated_hours=5.0,
        peukert_k=1.0,
        max_c=50.0,
        design_life_years=4.0,
        new_internal_ohm=0.05,
    )
    session.add_all([module, pack])
    session.flush()
    site = Site(org_id=org.id, building_id=building.id)
    for area_name, floor, tags in areas:
        area = Area(
            org_id=org.id,
            building_id=building.id,
            name=area_name,
            floor=floor,
            kind="escape-route",
            required_duration_min=required_min,
            profile_id="us-egress",
        )
        session.add(area)
        session.flush()
        site.area_ids.append(area.id)
        for position, tag in enumerate(tags):
            fixture = Fixture(
                org_id=org.id,
                area_id=area.id,
                tag=tag,
                location=f"bay {position + 1}",
                position_m=float(position * 6),
                lamp_type="T8",
                lamp_w=36.0,
                ballast="electronic-programmed-start",
                unswitched_supply=True,
                ambient_c=ambient_c,
                commissioned_on=commissioned_on,
            )
            session.add(fixture)
            session.flush()
            site.fixture_ids.append(fixture.id)
            session.add(
                Proposal(
                    org_id=org.id,
                    fixture_id=fixture.id,
                    module_id=module.id,
                    pack_id=pack.id,
                    status="accepted" if accepted else "draft",
                    verdict="pass",
                )
            )
    session.commit()
    return site


def record_rows(session: Session, fixture_id: str | None = None) -> list[dict[str, object]]:
    """Every test record (of one fixture, or all) as a dict of all its columns."""
    query = select(TestRecord).order_by(TestRecord.id)
    if fixture_id is not None:
        query = query.where(TestRecord.fixture_id == fixture_id)
    session.expire_all()
    return [
        {column.key: getattr(row, column.key) for column in TestRecord.__table__.columns}
        for row in session.scalars(query)
    ]
