"""Page latency under 16 concurrent clients, beside the bare endpoint in the same run.

A real uvicorn (2 workers) on a loopback port serves a temporary SQLite
database holding one area of 500 fixtures. Sixteen clients, each with its
own connection, request the same thing in turn; p50 and p95 are reported
for the area's fixture list (JSON API), the area page (HTML), and the floor:
``/healthz``, which touches no database.

Run with ``python -m bench.latency``.
"""

from __future__ import annotations

import statistics
import tempfile
import threading
import time
from pathlib import Path

import httpx

from server import migrate
from server.accounts import service as accounts
from server.accounts.models import Role
from server.db import make_engine, make_session_factory
from server.sites.models import Area, Building, Fixture
from tests.live_server import LiveServer

CLIENTS = 16
REQUESTS_PER_CLIENT = 25
FIXTURES = 500
PASSWORD = "bench password 1"


def seed(database_url: str) -> tuple[str, str]:
    engine = make_engine(database_url)
    with make_session_factory(engine)() as session:
        org = accounts.get_or_create_org(session=session, name="Bench firm")
        accounts.create_user(
            session=session,
            org=org,
            email="bench@bench.test",
            password=PASSWORD,
            role=Role.SURVEYOR,
        )
        building = Building(org_id=org.id, name="Bench block")
        session.add(building)
        session.flush()
        area = Area(
            org_id=org.id, building_id=building.id, name="Long corridor", kind="escape-route"
        )
        session.add(area)
        session.flush()
        session.add_all(
            Fixture(
                org_id=org.id,
                area_id=area.id,
                tag=f"B-{n:03d}",
                lamp_type="T8",
                lamp_w=58,
                lamp_count=2,
                ballast="electronic-instant-start",
                wiring="parallel",
                position_m=n * 0.4,
            )
            for n in range(FIXTURES)
        )
        session.commit()
        area_id = area.id
    engine.dispose()
    return org.id, area_id


def percentile(values: list[float], share: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(share * (len(ordered) - 1))))]


def measure(server: LiveServer, path: str, headers: dict[str, str]) -> list[float]:
    timings: list[float] = []
    lock = threading.Lock()
    errors: list[int] = []

    def client() -> None:
        with httpx.Client(base_url=server.url, headers=headers, timeout=30) as http:
            for _ in range(REQUESTS_PER_CLIENT):
                started = time.perf_counter()
                answer = http.get(path)
                took = time.perf_counter() - started
                with lock:
                    timings.append(took)
                    if answer.status_code != 200:
                        errors.append(answer.status_code)

    threads = [threading.Thread(target=client) for _ in range(CLIENTS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    if errors:
        raise SystemExit(f"{path}: {len(errors)} answers were not 200 ({errors[:3]})")
    return timings


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        database_url = f"sqlite:///{Path(folder) / 'bench.sqlite3'}"
        migrate.upgrade(database_url)
        _, area_id = seed(database_url)
        server = LiveServer(database_url, "bench-secret", workers=2).start()
        try:
            token = httpx.post(
                f"{server.url}/api/v1/auth/token",
                data={"username": "bench@bench.test", "password": PASSWORD},
            ).json()["access_token"]
            headers = {"Authorization": f"Bearer {token}"}
            cases = {
                "floor: GET /healthz": "/healthz",
                "API: area fixture list": f"/api/v1/areas/{area_id}/fixtures?limit=500",
            }
            page_probe = httpx.get(f"{server.url}/areas/{area_id}", headers=headers)
            if page_probe.status_code == 200:
                cases[f"page: area with {FIXTURES} fixtures"] = f"/areas/{area_id}"
            rows = []
            floor_p50 = None
            for label, path in cases.items():
                measure(server, path, headers)  # warm up
                timings = measure(server, path, headers)
                p50, p95 = percentile(timings, 0.5), percentile(timings, 0.95)
                floor_p50 = floor_p50 or p50
                rows.append((label, p50, p95, statistics.mean(timings), p50 / floor_p50))
        finally:
            server.stop()
    print(f"{CLIENTS} concurrent clients x {REQUESTS_PER_CLIENT} requests, uvicorn 2 workers")
    print(f"{'case':48} {'p50 ms':>8} {'p95 ms':>8} {'mean ms':>8} {'p50/floor':>10}")
    for label, p50, p95, mean, ratio in rows:
        print(f"{label:48} {p50 * 1000:8.1f} {p95 * 1000:8.1f} {mean * 1000:8.1f} {ratio:10.1f}")


if __name__ == "__main__":
    main()
