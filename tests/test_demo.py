"""The demo scenario, loaded through the real migrations (conftest's database_url)."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import date
from typing import Any

import pytest
from pydantic import BaseModel
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from server import demo
from server.accounts import service as accounts
from server.accounts.models import Organisation, Role, User
from server.catalogue.models import BallastType, BatteryPack, EmergencyModule
from server.catalogue.schemas import BallastTypeCreate, ModuleCreate, PackCreate
from server.db import Base, import_all_models, make_engine, make_session_factory
from server.engineering.batteries import internal_resistance_ohm, terminal_voltage_v
from server.engineering.profiles import AreaKind
from server.engineering.vocabulary import BallastTech, Chemistry, LampType, Wiring
from server.maintenance.models import TestRecord
from server.proposals.models import Proposal
from server.sites.models import Area, Building, Fixture
from server.sites.schemas import AreaCreate, BuildingCreate, FixtureCreate
from tests.conftest import PASSWORD, Directory, both_engines

TODAY = date(2026, 12, 1)


@pytest.fixture
def session(database_url: str) -> Iterator[Session]:
    engine = make_engine(database_url)
    with make_session_factory(engine)() as opened:
        yield opened
    engine.dispose()


@pytest.fixture
def loaded(session: Session) -> Session:
    demo.load_demo(session=session, today=TODAY)
    session.commit()
    session.expunge_all()
    return session


def stored_values(record: Base, schema: type[BaseModel]) -> dict[str, Any]:
    """The record's columns that the API's create schema takes, as read back."""
    return {name: getattr(record, name) for name in schema.model_fields if name != "id"}


def demo_org_id(session: Session) -> str:
    org = demo.demo_org(session=session)
    assert org is not None
    return org.id


def test_demo_holds_about_forty_fixtures_in_every_kind_of_area(loaded: Session) -> None:
    fixtures = list(loaded.scalars(select(Fixture)))
    areas = list(loaded.scalars(select(Area)))
    assert 35 <= len(fixtures) <= 45
    assert {area.kind for area in areas} == {kind.value for kind in AreaKind}
    assert loaded.scalar(select(func.count()).select_from(Building)) == 1
    corridor = next(area for area in areas if area.name == "Ground-floor corridor")
    assert (corridor.width_m, corridor.mounting_height_m) == (1.8, 2.7)
    assert corridor.length_m is not None
    on_corridor = [f for f in fixtures if f.area_id == corridor.id]
    assert all(
        f.position_m is not None and 0 <= f.position_m <= corridor.length_m for f in on_corridor
    )


@both_engines
def test_every_demo_record_passes_the_apis_create_schema(loaded: Session) -> None:
    """The demo never holds data the API itself would refuse."""
    for schema, model in (
        (FixtureCreate, Fixture),
        (AreaCreate, Area),
        (BuildingCreate, Building),
        (BallastTypeCreate, BallastType),
        (ModuleCreate, EmergencyModule),
        (PackCreate, BatteryPack),
    ):
        records = list(loaded.scalars(select(model)))
        assert records, model.__name__
        for record in records:
            schema.model_validate(stored_values(record, schema))


def test_demo_fixtures_mix_lamps_ballasts_wiring_and_supplies(loaded: Session) -> None:
    fixtures = list(loaded.scalars(select(Fixture)))
    assert {f.lamp_type for f in fixtures} >= {
        LampType.T8,
        LampType.T5,
        LampType.CFL_4PIN,
        LampType.CFL_2PIN,
        LampType.LED_TUBE,
    }
    assert len({f.ballast for f in fixtures}) >= 5
    assert {f.ballast for f in fixtures} >= {
        BallastTech.MAGNETIC_GLOW_STARTER,
        BallastTech.ELECTRONIC_DIMMABLE,
    }
    assert {f.wiring for f in fixtures} == {w.value for w in Wiring}
    assert any(f.wiring == Wiring.SERIES and f.lamp_count == 2 for f in fixtures)
    assert any(not f.unswitched_supply for f in fixtures)
    assert any(f.ambient_c >= 40 for f in fixtures)
    assert sum(1 for f in fixtures if f.commissioned_on and f.commissioned_on < TODAY) >= 3


def test_demo_old_packs_include_a_healthy_and_a_worn_one(loaded: Session) -> None:
    """One pack barely sags under load, one collapses under a module's draw.

    ENGINEERING.md section 2 (common practice): a healthy 4-cell NiCd pack has
    R_int well under 0.2 ohm; a worn one reads about 5.2 V open but falls
    under 3 V on a 9.1 ohm resistor, and under a 1.4 A module draw its
    terminal voltage drops below the 4.0 V cut-off of 4 cells x 1.0 V.
    """
    measured = [
        f
        for f in loaded.scalars(select(Fixture).where(Fixture.existing_kit.is_(True)))
        if f.open_circuit_v is not None and f.loaded_v is not None
    ]
    resistances = {
        f.tag: internal_resistance_ohm(
            f.open_circuit_v, f.loaded_v, load_a=f.load_a, load_ohm=f.load_ohm
        )
        for f in measured
        if f.open_circuit_v is not None and f.loaded_v is not None
    }
    assert min(resistances.values()) < 0.2
    worn = max(measured, key=lambda f: resistances[f.tag])
    assert worn.pack_cells == 4 and worn.open_circuit_v is not None
    assert terminal_voltage_v(worn.open_circuit_v, 1.4, resistances[worn.tag]) < 4.0
    codes = {f.pack_date_code: f.pack_date_format for f in loaded.scalars(select(Fixture))}
    assert codes.get("0512") is not None  # the ambiguous code carries its format


def test_demo_catalogue_is_generic_and_covers_each_chemistry(loaded: Session) -> None:
    modules = list(loaded.scalars(select(EmergencyModule)))
    packs = list(loaded.scalars(select(BatteryPack)))
    assert 5 <= len(modules) <= 7 and 5 <= len(packs) <= 7
    assert {p.chemistry for p in packs} == {c.value for c in Chemistry}
    assert {m.chemistry for m in modules} == {c.value for c in Chemistry}
    assert {m.rated_min for m in modules} == {90.0, 180.0}
    assert {m.changeover for m in modules} == {"one-end", "both-ends"}
    assert {m.waveform for m in modules} == {"ac", "pulsed-dc"}
    assert any(m.declared_eblf is not None for m in modules)
    assert any(m.declared_eblf is None for m in modules)
    # Every module can be fed by a demo pack of its chemistry and cell count.
    assert all(
        any((p.chemistry, p.cells) == (m.chemistry, m.cells) for p in packs) for m in modules
    )


def test_demo_users_one_per_role_sign_in_with_the_printed_password(loaded: Session) -> None:
    sign_in = demo.demo_sign_in()
    users = list(loaded.scalars(select(User)))
    assert sorted(u.role for u in users) == sorted(r.value for r in Role)
    assert {role for role, _ in sign_in.users} == set(Role)
    for role, email in sign_in.users:
        assert email.endswith(".example.com")
        user = accounts.authenticate(session=loaded, email=email, password=sign_in.password)
        assert user is not None and user.role == role.value


def test_demo_test_log_has_monthly_tests_and_a_duration_test_in_the_past(loaded: Session) -> None:
    records = list(loaded.scalars(select(TestRecord)))
    assert all(r.tested_on < TODAY for r in records)
    assert sum(1 for r in records if r.kind == "function") >= 4
    durations = [r for r in records if r.kind == "duration"]
    assert durations and all(r.observed_duration_min for r in durations)
    assert len({r.fixture_id for r in records}) >= 2
    assert not any(r.corrects_id for r in records)


def test_demo_proposals_are_the_planners_suggestions_for_one_area(loaded: Session) -> None:
    proposals = list(loaded.scalars(select(Proposal)))
    corridor = loaded.scalar(select(Area).where(Area.name == demo.PROPOSED_AREA))
    assert corridor is not None
    on_corridor = list(loaded.scalars(select(Fixture).where(Fixture.area_id == corridor.id)))
    assert proposals
    assert {p.fixture_id for p in proposals} < {f.id for f in on_corridor}
    assert all(p.verdict is not None and p.computed_at is not None for p in proposals)
    led = next(f for f in on_corridor if f.lamp_type == LampType.LED_TUBE)
    assert led.id not in {p.fixture_id for p in proposals}  # no fluorescent module suits it


@both_engines
def test_delete_demo_removes_the_demo_firm_only(session: Session, directory: Directory) -> None:
    demo.load_demo(session=session, today=TODAY)
    session.flush()
    org_id = demo_org_id(session)
    # Rows behind RESTRICT keys: a correction in the log, a proposal on a module.
    first = session.scalars(select(TestRecord).where(TestRecord.org_id == org_id)).first()
    assert first is not None
    session.add(
        TestRecord(
            org_id=org_id,
            fixture_id=first.fixture_id,
            kind=first.kind,
            tested_on=first.tested_on,
            tested_by="Demo Supervisor",
            result="pass",
            corrects_id=first.id,
            notes="Corrected: the result was entered wrongly.",
        )
    )
    fixture = session.scalar(select(Fixture).where(Fixture.tag == "OF-01"))
    module = session.scalars(select(EmergencyModule)).first()
    pack = session.scalars(select(BatteryPack)).first()
    assert fixture and module and pack
    session.add(
        Proposal(org_id=org_id, fixture_id=fixture.id, module_id=module.id, pack_id=pack.id)
    )
    session.commit()
    others_before = session.scalar(
        select(func.count()).select_from(User).where(User.org_id != org_id)
    )

    assert demo.delete_demo(session=session) is True
    session.commit()

    assert demo.demo_org(session=session) is None
    import_all_models()
    for table in Base.metadata.sorted_tables:
        if "org_id" in table.columns:
            left = session.scalar(
                select(func.count()).select_from(table).where(table.c.org_id == org_id)
            )
            assert left == 0, table.name
    assert session.scalar(select(func.count()).select_from(Organisation)) == 2
    assert session.scalar(select(func.count()).select_from(User)) == others_before
    assert accounts.authenticate(
        session=session, email=directory.email("admin", "A"), password=PASSWORD
    )
    assert demo.delete_demo(session=session) is False
