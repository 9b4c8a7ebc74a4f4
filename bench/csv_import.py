"""A 10,000-row CSV import of past tests, beside plain sqlite3 executemany in the same run.

The planner's import reads the file, checks every row against the API's schema
and against the fixture's log (dates, duplicates, commissioning), then keeps
the good rows with their audit entries. The floor inserts the same 10,000 rows
into a bare table with ``sqlite3.executemany`` and nothing else.

Run with ``python -m bench.csv_import``.
"""

from __future__ import annotations

import csv
import io
import sqlite3
import tempfile
import time
from datetime import date, timedelta
from pathlib import Path

from server import migrate
from server.accounts import service as accounts
from server.accounts.models import Role
from server.db import make_engine, make_session_factory
from server.maintenance import service
from server.sites.models import Area, Building, Fixture

ROWS = int(__import__("os").environ.get("BENCH_ROWS", 10_000))
FIXTURES = 100
START = date(2016, 1, 4)


def seed(database_url: str) -> tuple[str, str, list[str]]:
    engine = make_engine(database_url)
    with make_session_factory(engine)() as session:
        org = accounts.get_or_create_org(session=session, name="Bench firm")
        user = accounts.create_user(
            session=session,
            org=org,
            email="bench@bench.test",
            password="bench password 1",
            role=Role.SURVEYOR,
        )
        building = Building(org_id=org.id, name="Bench block")
        session.add(building)
        session.flush()
        area = Area(org_id=org.id, building_id=building.id, name="Corridor", kind="escape-route")
        session.add(area)
        session.flush()
        tags = [f"B-{n:03d}" for n in range(FIXTURES)]
        session.add_all(
            Fixture(
                org_id=org.id,
                area_id=area.id,
                tag=tag,
                lamp_type="T8",
                lamp_w=36,
                ballast="electronic-instant-start",
                commissioned_on=START,
            )
            for tag in tags
        )
        session.commit()
        ids = (user.id, building.id)
    engine.dispose()
    return ids[0], ids[1], tags


def rows(tags: list[str]) -> list[dict[str, str]]:
    per_fixture = ROWS // len(tags)
    return [
        {
            "fixture_tag": tag,
            "kind": "function",
            "tested_on": (START + timedelta(days=30 * (n + 1))).isoformat(),
            "tested_by": "Bench Tester",
            "result": "pass",
        }
        for tag in tags
        for n in range(per_fixture)
    ]


def as_csv(records: list[dict[str, str]]) -> str:
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(records[0]))
    writer.writeheader()
    writer.writerows(records)
    return out.getvalue()


def floor_s(records: list[dict[str, str]], folder: Path) -> float:
    connection = sqlite3.connect(folder / "floor.sqlite3")
    connection.execute(
        "CREATE TABLE tests (fixture_tag TEXT, kind TEXT, tested_on TEXT, tested_by TEXT, "
        "result TEXT)"
    )
    started = time.perf_counter()
    connection.executemany(
        "INSERT INTO tests VALUES (?, ?, ?, ?, ?)",
        [tuple(record.values()) for record in records],
    )
    connection.commit()
    took = time.perf_counter() - started
    connection.close()
    return took


def main() -> None:
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        database_url = f"sqlite:///{folder / 'bench.sqlite3'}"
        migrate.upgrade(database_url)
        user_id, building_id, tags = seed(database_url)
        records = rows(tags)
        text = as_csv(records)
        floor = floor_s(records, folder)
        engine = make_engine(database_url)
        with make_session_factory(engine)() as session:
            from server.accounts.models import User

            user = session.get(User, user_id)
            assert user is not None
            started = time.perf_counter()
            report = service.import_tests(
                session=session,
                org_id=user.org_id,
                user=user,
                building_id=building_id,
                text=text,
                confirm=True,
                on=date(2026, 12, 1),
            )
            took = time.perf_counter() - started
        engine.dispose()
    print(f"{'case':52} {'seconds':>8} {'ratio':>7}")
    print(f"{'floor: sqlite3 executemany, 10,000 rows':52} {floor:8.3f} {1.0:7.1f}")
    label = f"planner import: {report.saved} kept, {report.errors} errors"
    print(f"{label:52} {took:8.3f} {took / floor:7.1f}")
    if report.saved != len(records):
        raise SystemExit(f"expected {len(records)} rows kept, got {report.saved}")


if __name__ == "__main__":
    main()
