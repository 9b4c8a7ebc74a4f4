"""The proposals service: rows into the core, stored results, versions, acceptance, suggestions."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import date
from decimal import Decimal
from typing import Any

import pytest
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.accounts.models import User
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common.errors import Conflict, InvalidInput
from server.db import make_engine, make_session_factory
from server.engineering import compatibility
from server.engineering.batteries import Pack
from server.engineering.profiles import BUILTIN_PROFILES
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    LampType,
    Waveform,
    Wiring,
)
from server.proposals import service
from server.sites.models import Area, Building, Fixture
from tests.planner_data import BIG_PACK, BOTH_ENDS_MODULE, ONE_END_MODULE, SMALL_PACK

TODAY = date(2026, 6, 1)


@pytest.fixture
def session(database_url: str, directory: Any) -> Iterator[Session]:
    engine = make_engine(database_url)
    with make_session_factory(engine)() as opened:
        yield opened
    engine.dispose()


@pytest.fixture
def estimator(session: Session, directory: Any) -> User:
    return session.scalars(select(User).where(User.email == directory.email("estimator"))).one()


def _row(model: type[Any], org_id: str, values: dict[str, Any]) -> Any:
    clean = {k: Decimal(v) if k == "price" else v for k, v in values.items()}
    return model(org_id=org_id, **clean)


@pytest.fixture
def site(session: Session, estimator: User) -> dict[str, Any]:
    org = estimator.org_id
    building = Building(org_id=org, name="Test block")
    session.add(building)
    session.flush()
    area = Area(
        org_id=org,
        building_id=building.id,
        name="Corridor",
        kind="escape-route",
        required_duration_min=90.0,
        profile_id="us-egress",
    )
    session.add(area)
    session.flush()
    fixture = Fixture(
        org_id=org,
        area_id=area.id,
        tag="T-01",
        lamp_type="T8",
        lamp_w=36.0,
        lamp_length_mm=1200.0,
        lamp_count=2,
        lamps_to_back_up=1,
        ballast="electronic-programmed-start",
        wiring="series",
        unswitched_supply=True,
        ambient_c=25.0,
    )
    items = {
        "both": _row(EmergencyModule, org, BOTH_ENDS_MODULE),
        "one": _row(EmergencyModule, org, ONE_END_MODULE),
        "big": _row(BatteryPack, org, BIG_PACK),
        "small": _row(BatteryPack, org, SMALL_PACK),
    }
    session.add_all([fixture, *items.values()])
    session.commit()
    return {"area": area, "fixture": fixture, **items}


def test_rows_go_to_the_core_unchanged(session: Session, site: dict[str, Any]) -> None:
    """The service's answer equals the core's for the same combination built by hand."""
    by_service = service.evaluate(
        session=session,
        org_id=site["fixture"].org_id,
        fixture=site["fixture"],
        module=site["both"],
        pack=site["big"],
        today=TODAY,
    )
    by_hand = compatibility.evaluate(
        compatibility.Fixture(
            lamp_type=LampType.T8,
            lamp_w=36.0,
            lamp_count=2,
            ballast=BallastTech.ELECTRONIC_PROGRAMMED_START,
            wiring=Wiring.SERIES,
            unswitched_supply=True,
            lamps_to_back_up=1,
            lamp_length_mm=1200.0,
            ambient_c=25.0,
        ),
        compatibility.Module(
            chemistry=Chemistry.NICD,
            cells=4,
            charge_a=0.3,
            rated_min=90.0,
            lamp_types=frozenset({LampType.T8, LampType.T5}),
            lamp_w_min=14.0,
            lamp_w_max=58.0,
            ballasts=frozenset(
                {BallastTech.ELECTRONIC_PROGRAMMED_START, BallastTech.ELECTRONIC_INSTANT_START}
            ),
            changeover=Changeover.BOTH_ENDS,
            max_lamps=1,
            waveform=Waveform.AC,
            battery_w=7.0,
        ),
        Pack(chemistry=Chemistry.NICD, cells=4, capacity_ah=4.5, max_ambient_c=50.0),
        compatibility.Requirement(duration_min=90.0, profile=BUILTIN_PROFILES["us-egress"]),
        today=TODAY,
    )
    assert by_service.verdict == by_hand.verdict
    assert by_service.findings == by_hand.findings
    assert by_service.case.runtime_end_of_life_min == by_hand.case.runtime_end_of_life_min


def test_a_small_pack_cannot_meet_90_minutes(
    session: Session, site: dict[str, Any], estimator: User
) -> None:
    """ENGINEERING.md section 2 check value (common practice): a 1.7 Ah NiCd pack feeding a
    module that draws about 1.4 A cannot meet 90 min even when new; at 1.4 A with k = 1.10,
    t = 5 h * (1.7 / 7.0) ** 1.10 = 1.054 h = 63.2 min."""
    site["both"].battery_w, site["both"].battery_a = None, 1.4
    session.commit()
    proposal, created = service.save_proposal(
        session=session,
        user=estimator,
        fixture_id=site["fixture"].id,
        module_id=site["both"].id,
        pack_id=site["small"].id,
        today=TODAY,
    )
    assert created and proposal.verdict == "fail"
    assert proposal.runtime_new_min == pytest.approx(63.2, abs=0.1)
    assert "runtime.short" in {finding["code"] for finding in proposal.findings}


def test_the_same_choice_again_is_a_retry_and_a_new_one_needs_the_version(
    session: Session, site: dict[str, Any], estimator: User
) -> None:
    choose = {
        "session": session,
        "user": estimator,
        "fixture_id": site["fixture"].id,
        "today": TODAY,
    }
    first, created = service.save_proposal(
        **choose, module_id=site["both"].id, pack_id=site["big"].id
    )
    again, created_again = service.save_proposal(
        **choose, module_id=site["both"].id, pack_id=site["big"].id
    )
    assert created and not created_again and again.id == first.id
    with pytest.raises(Conflict, match="already has a proposal"):
        service.save_proposal(**choose, module_id=site["one"].id, pack_id=site["big"].id)
    with pytest.raises(Conflict, match="changed this proposal first"):
        service.save_proposal(
            **choose, module_id=site["one"].id, pack_id=site["big"].id, version=first.version + 5
        )
    changed, _ = service.save_proposal(
        **choose, module_id=site["one"].id, pack_id=site["big"].id, version=first.version
    )
    assert changed.module_id == site["one"].id and changed.verdict == "fail"


def test_a_failing_proposal_is_accepted_only_with_a_reason(
    session: Session, site: dict[str, Any], estimator: User
) -> None:
    proposal, _ = service.save_proposal(
        session=session,
        user=estimator,
        fixture_id=site["fixture"].id,
        module_id=site["one"].id,
        pack_id=site["big"].id,
        today=TODAY,
    )
    assert proposal.verdict == "fail"
    with pytest.raises(InvalidInput) as refused:
        service.accept(
            session=session, user=estimator, fixture_id=site["fixture"].id, version=proposal.version
        )
    assert refused.value.field == "override_reason"
    accepted = service.accept(
        session=session,
        user=estimator,
        fixture_id=site["fixture"].id,
        version=proposal.version,
        override_reason="Client replaces the ballast first; checked by the engineer.",
    )
    assert accepted.status == "accepted" and accepted.override_reason.startswith("Client")
    back = service.unaccept(
        session=session, user=estimator, fixture_id=site["fixture"].id, version=accepted.version
    )
    assert back.status == "draft" and back.override_reason == ""


def test_the_cheapest_passing_pair_is_suggested(session: Session, site: dict[str, Any]) -> None:
    suggestion = service.suggest_cheapest(
        session=session, org_id=site["fixture"].org_id, fixture=site["fixture"], today=TODAY
    )
    # The one-end module is cheaper but fails on series wiring; the small pack is cheaper but
    # too short; so both-ends with the big pack: 95.00 + 42.00.
    assert suggestion.passes
    assert (suggestion.module, suggestion.pack) == (site["both"], site["big"])
    assert suggestion.price == Decimal("137.00")
    assert suggestion.combinations == 4


def test_when_nothing_passes_the_nearest_miss_is_explained(
    session: Session, site: dict[str, Any]
) -> None:
    site["fixture"].ballast = "magnetic-glow-starter"
    session.commit()
    suggestion = service.suggest_cheapest(
        session=session, org_id=site["fixture"].org_id, fixture=site["fixture"], today=TODAY
    )
    assert not suggestion.passes
    assert suggestion.module is site["both"] and suggestion.pack is site["big"]
    assert "No module and pack in the catalogue passes every rule" in suggestion.explanation
    assert "magnetic" in suggestion.explanation


def test_a_proposal_is_stale_once_the_fixture_changes(
    session: Session, site: dict[str, Any], estimator: User
) -> None:
    service.save_proposal(
        session=session,
        user=estimator,
        fixture_id=site["fixture"].id,
        module_id=site["both"].id,
        pack_id=site["big"].id,
        today=TODAY,
    )
    before = service.area_proposals(session=session, org_id=estimator.org_id, area=site["area"])
    assert [item.stale for item in before] == [False]
    site["fixture"].ambient_c = 45.0
    session.commit()
    after = service.area_proposals(session=session, org_id=estimator.org_id, area=site["area"])
    assert [item.stale for item in after] == [True]
    rechecked = service.recheck(session=session, user=estimator, fixture_id=site["fixture"].id)
    assert not service.is_stale(rechecked, site["fixture"], site["area"], site["both"], site["big"])


def test_suggestions_for_an_area_store_one_proposal_per_fixture(
    session: Session, site: dict[str, Any], estimator: User
) -> None:
    copy = Fixture(
        org_id=estimator.org_id,
        area_id=site["area"].id,
        tag="T-02",
        lamp_type="T8",
        lamp_w=36.0,
        lamp_count=1,
        lamps_to_back_up=1,
        ballast="magnetic-glow-starter",
        wiring="single",
        unswitched_supply=True,
        ambient_c=25.0,
    )
    session.add(copy)
    session.commit()
    outcome = service.suggest_for_area(
        session=session, user=estimator, area_id=site["area"].id, today=TODAY
    )
    assert (outcome.saved, outcome.no_pass) == (1, 1)
    again = service.suggest_for_area(
        session=session, user=estimator, area_id=site["area"].id, today=TODAY
    )
    assert (again.saved, again.no_pass) == (0, 1)
    items = service.area_proposals(session=session, org_id=estimator.org_id, area=site["area"])
    assert service.verdict_counts(items)[service.VerdictFilter.PASS] == 1
    assert service.verdict_counts(items)[service.VerdictFilter.NONE] == 1


def test_an_existing_pack_that_sags_below_cut_off_fails(
    session: Session, site: dict[str, Any]
) -> None:
    """ENGINEERING.md section 2 check value (common practice): a 4-cell NiCd pack that falls
    below 3 V across 9.1 ohm with about 5.2 V open circuit has R_int near 7 ohm and collapses
    below the 4.0 V cut-off at a 1.4 A module draw."""
    fixture = site["fixture"]
    fixture.existing_kit = True
    fixture.pack_chemistry, fixture.pack_cells, fixture.pack_capacity_ah = "NiCd", 4, 4.5
    fixture.open_circuit_v, fixture.loaded_v, fixture.load_ohm = 5.2, 2.9, 9.1
    fixture.pack_date_code, fixture.pack_date_format = "2403", "YYMM"
    check = service.existing_pack_check(
        session=session, org_id=fixture.org_id, fixture=fixture, module=site["both"], today=TODAY
    )
    assert check is not None and check.verdict is not None
    assert check.internal_ohm == pytest.approx((5.2 - 2.9) / (2.9 / 9.1), rel=1e-9)
    assert 7.0 < check.internal_ohm < 7.5
    assert check.verdict.value == "fail"
    assert "pack.sag-below-cutoff" in {finding.code for finding in check.findings}
    assert check.made_on == date(2024, 3, 1)


def test_an_accepted_proposal_that_starts_failing_goes_back_to_draft(
    session: Session, site: dict[str, Any], estimator: User
) -> None:
    proposal, _ = service.save_proposal(
        session=session,
        user=estimator,
        fixture_id=site["fixture"].id,
        module_id=site["both"].id,
        pack_id=site["big"].id,
        today=TODAY,
    )
    accepted = service.accept(
        session=session, user=estimator, fixture_id=site["fixture"].id, version=proposal.version
    )
    assert accepted.status == "accepted"
    # Above the pack's marked 50 degC maximum: fail (ENGINEERING.md section 2, IEC 61347-2-7
    # marked temperature, checked against pages quoting it).
    site["fixture"].ambient_c = 60.0
    session.commit()
    rechecked = service.recheck(session=session, user=estimator, fixture_id=site["fixture"].id)
    assert (rechecked.verdict, rechecked.status) == ("fail", "draft")
