"""Invented buildings with accepted proposals, made straight with the ORM.

Nothing here is real product data: the module, the pack and the firm are
made up for the tests.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from server.accounts.models import Organisation, User
from server.catalogue.models import BatteryPack, EmergencyModule
from server.db import make_engine, make_session_factory
from server.proposals.models import Proposal
from server.sites.models import Area, Building, Fixture

PASS_FINDINGS = [
    {
        "code": "runtime.ok",
        "severity": "info",
        "message": "At end of life the pack runs the module for about 104 min.",
        "fix": "Confirm with the annual full-duration test.",
        "source": "Peukert run-time",
    }
]
FAIL_FINDINGS = [
    {
        "code": "runtime.short",
        "severity": "fail",
        "message": "At end of life the pack runs the module for about 61 min; 90 min are required.",
        "fix": "Choose a pack of larger capacity.",
        "source": "Peukert run-time",
    }
]


@dataclass
class Made:
    """Ids of what a factory call made."""

    org_id: str
    building_id: str
    area_ids: list[str] = field(default_factory=list)
    fixture_ids: list[str] = field(default_factory=list)
    module_id: str = ""
    pack_id: str = ""


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


def make_building(
    session: Session,
    org: Organisation,
    *,
    fixtures: list[dict[str, Any]],
    name: str = "North block",
    module_price: str = "84.50",
    pack_price: str = "31.20",
    labour_h: float = 1.0,
) -> Made:
    """A building with one escape-route area per distinct ``area`` key of ``fixtures``.

    Each fixture dict gives Fixture columns plus ``verdict`` (pass, warn,
    fail or None) and ``accepted`` (default True) for its proposal.
    """
    building = Building(
        org_id=org.id,
        name=name,
        address="12 Sample Road",
        client_name="Sample Estates",
        client_contact="facilities@sample.test",
    )
    session.add(building)
    session.flush()
    module = EmergencyModule(
        org_id=org.id,
        name="Demo inverter 7 W",
        battery_w=7.0,
        chemistry="NiCd",
        cells=4,
        cutoff_v=4.0,
        charge_a=0.17,
        rated_min=90.0,
        lamp_types=["T8", "T5"],
        lamp_w_min=14,
        lamp_w_max=58,
        ballasts=[
            "electronic-instant-start",
            "electronic-programmed-start",
            "magnetic-glow-starter",
        ],
        changeover="both-ends",
        max_lamps=1,
        price=Decimal(module_price),
        labour_h=labour_h,
    )
    pack = BatteryPack(
        org_id=org.id,
        name="Demo NiCd 4.8 V 2.2 Ah",
        chemistry="NiCd",
        cells=4,
        nominal_v=4.8,
        capacity_ah=2.2,
        max_c=50.0,
        design_life_years=4.0,
        price=Decimal(pack_price),
    )
    session.add_all([module, pack])
    session.flush()
    made = Made(org_id=org.id, building_id=building.id, module_id=module.id, pack_id=pack.id)
    areas: dict[str, Area] = {}
    for spec in fixtures:
        spec = dict(spec)
        area_name = spec.pop("area", "Corridor 1")
        verdict = spec.pop("verdict", "pass")
        accepted = spec.pop("accepted", True)
        override_reason = spec.pop("proposal_override_reason", "")
        if area_name not in areas:
            areas[area_name] = Area(
                org_id=org.id,
                building_id=building.id,
                name=area_name,
                floor="Ground",
                kind="escape-route",
                required_duration_min=90.0,
            )
            session.add(areas[area_name])
            session.flush()
            made.area_ids.append(areas[area_name].id)
        values = {
            "lamp_type": "T8",
            "lamp_w": 36.0,
            "lamp_count": 1,
            "ballast": "electronic-programmed-start",
            "wiring": "single",
            "unswitched_supply": True,
            **spec,
        }
        fixture = Fixture(org_id=org.id, area_id=areas[area_name].id, **values)
        session.add(fixture)
        session.flush()
        made.fixture_ids.append(fixture.id)
        session.add(
            Proposal(
                org_id=org.id,
                fixture_id=fixture.id,
                module_id=module.id,
                pack_id=pack.id,
                status="accepted" if accepted else "draft",
                verdict=verdict,
                findings=FAIL_FINDINGS if verdict == "fail" else PASS_FINDINGS,
                recharge_h=32.9,
                override_reason=override_reason,
            )
        )
    session.commit()
    return made
