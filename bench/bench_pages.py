"""Speed of the survey pages: an area of 500 fixtures, beside the app's bare endpoint.

The budget is 150 ms for the area page (the surveyor's fixture list) with
500 fixtures, half of them with a proposal, signed in with a session cookie,
through the whole app (middleware, session, queries, template). Beside it, in
the same run and the same process, the floor: ``/healthz`` on the same app, a
trivial route that touches no database. The ratio says how much the page
costs over the framework itself. The proposals page of the same area and the
fixture form (with its findings panel) are shown too.

Each page is requested a few times to warm up, then timed; the median and
the 95th percentile count (medians: one slow request from a neighbour on a
shared machine does not move them). The 95th percentile of a big page holds
the cyclic garbage collector's full walks over every object made at start-up;
the last row times the area page again with those objects frozen
(``gc.freeze()``), which is what a server could do once it has started.

Run with ``python -m bench.bench_pages`` (or ``make bench``); exits 1 when the
area page's median is over budget.
"""

from __future__ import annotations

import gc
import statistics
import sys
import tempfile
import time
import uuid
from collections.abc import Callable
from pathlib import Path

from fastapi.testclient import TestClient

from server import migrate
from server.accounts import service as accounts
from server.accounts.models import Role
from server.app import create_app
from server.catalogue.models import BatteryPack, EmergencyModule
from server.config import Mode, Settings
from server.db import make_engine, make_session_factory, utcnow
from server.proposals.models import Proposal
from server.sites.models import Area, Building, Fixture

FIXTURES = 500
BUDGET_MS = 150.0
WARM_UP = 3
RUNS = 25
PASSWORD = "bench password only"


def seed(database_url: str) -> tuple[str, str, str]:
    """A firm, a surveyor, one area of 500 invented battens, half with a proposal."""
    engine = make_engine(database_url)
    with make_session_factory(engine)() as session:
        org = accounts.get_or_create_org(session=session, name="Bench firm")
        accounts.create_user(
            session=session, org=org, email="bench@bench.test", password=PASSWORD, role=Role.ADMIN
        )
        building = Building(org_id=org.id, name="Bench block")
        session.add(building)
        session.flush()
        area = Area(
            org_id=org.id, building_id=building.id, name="Long corridor", kind="escape-route"
        )
        module = EmergencyModule(
            org_id=org.id,
            name="Bench module",
            battery_w=7.0,
            chemistry="NiCd",
            cells=4,
            charge_a=0.3,
            lamp_types=["T8"],
            lamp_w_min=14.0,
            lamp_w_max=58.0,
            ballasts=["electronic-programmed-start"],
        )
        pack = BatteryPack(
            org_id=org.id, name="Bench pack", chemistry="NiCd", cells=4, capacity_ah=4.5
        )
        session.add_all([area, module, pack])
        session.flush()
        fixtures = [
            Fixture(
                org_id=org.id,
                area_id=area.id,
                tag=f"T-{number:03d}",
                location=f"Bay {number // 10 + 1}",
                lamp_type="T8",
                lamp_w=36.0,
                lamp_count=2,
                ballast="electronic-programmed-start",
                wiring="series" if number % 3 == 0 else "parallel",
                unswitched_supply=number % 4 != 0,
                ambient_c=25.0,
            )
            for number in range(1, FIXTURES + 1)
        ]
        session.add_all(fixtures)
        session.flush()
        now = utcnow()
        session.add_all(
            Proposal(
                org_id=org.id,
                fixture_id=fixture.id,
                module_id=module.id,
                pack_id=pack.id,
                status="draft",
                verdict=("pass", "warn", "fail")[index % 3],
                findings=[
                    {
                        "code": "runtime.ok",
                        "severity": "info",
                        "message": "At end of life the pack runs the module for about 138 min.",
                        "fix": "Confirm with the annual full-duration test.",
                        "source": "bench",
                    }
                ],
                runtime_new_min=176.0,
                runtime_end_of_life_min=138.0,
                c_rate=0.32,
                recharge_h=21.0,
                eblf=0.146,
                eblf_is_estimate=True,
                emergency_lumens=489.0,
                computed_at=now,
            )
            for index, fixture in enumerate(fixtures[::2])
        )
        session.commit()
        area_id, fixture_id = area.id, fixtures[0].id
    engine.dispose()
    return area_id, fixture_id, org.id


def timed_ms(call: Callable[[], object]) -> list[float]:
    for _ in range(WARM_UP):
        call()
    times = []
    for _ in range(RUNS):
        started = time.perf_counter()
        call()
        times.append((time.perf_counter() - started) * 1000.0)
    return times


def signed_in(client: TestClient) -> None:
    client.get("/signin")
    answer = client.post(
        "/signin",
        data={
            "email": "bench@bench.test",
            "password": PASSWORD,
            "csrf_token": client.cookies.get("planner_signin"),
            "next_url": "/",
        },
        follow_redirects=False,
    )
    assert answer.status_code == 303, answer.text


def main() -> int:
    with tempfile.TemporaryDirectory() as folder:
        database_url = f"sqlite:///{Path(folder) / 'bench.sqlite3'}"
        migrate.upgrade(database_url)
        area_id, fixture_id, _ = seed(database_url)
        settings = Settings(mode=Mode.TEST, database_url=database_url, secret_key=uuid.uuid4().hex)
        app = create_app(settings)
        with TestClient(app) as client:
            signed_in(client)

            def get(path: str) -> Callable[[], object]:
                def call() -> object:
                    answer = client.get(path)
                    assert answer.status_code == 200, (path, answer.status_code)
                    return answer

                return call

            area_page = client.get(f"/areas/{area_id}").text
            assert area_page.count('class="row') >= FIXTURES, "the page lists every fixture"
            rows = {
                "bare endpoint (/healthz)": timed_ms(get("/healthz")),
                f"area page, {FIXTURES} fixtures": timed_ms(get(f"/areas/{area_id}")),
                f"proposals page, {FIXTURES} fixtures": timed_ms(
                    get(f"/areas/{area_id}/proposals")
                ),
                "fixture form with findings": timed_ms(get(f"/fixtures/{fixture_id}")),
            }
            # The slow tail is the cyclic garbage collector walking every object made at
            # start-up (about 270,000); frozen, they are left out of its walks.
            gc.freeze()
            rows["area page, start-up objects frozen"] = timed_ms(get(f"/areas/{area_id}"))
            gc.unfreeze()
        app.state.engine.dispose()
    bare = statistics.median(rows["bare endpoint (/healthz)"])
    print(f"{'request':38} {'median ms':>10} {'p95 ms':>8} {'x bare':>8}")
    for name, times in rows.items():
        median = statistics.median(times)
        p95 = statistics.quantiles(times, n=20)[-1]
        print(f"{name:38} {median:10.1f} {p95:8.1f} {median / bare:8.1f}")
    area = statistics.median(rows[f"area page, {FIXTURES} fixtures"])
    verdict = "within" if area <= BUDGET_MS else "OVER"
    print(f"\narea page median {area:.1f} ms: {verdict} the {BUDGET_MS:.0f} ms budget")
    return 0 if area <= BUDGET_MS else 1


if __name__ == "__main__":
    sys.exit(main())
