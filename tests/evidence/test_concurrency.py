"""Eight clients editing the same area's fixtures at once, through a real server with
several workers: every acknowledged edit is kept, none is lost or doubled, no 5xx."""

from __future__ import annotations

import threading
from collections import Counter
from collections.abc import Iterator

import httpx
import pytest

from tests.conftest import PASSWORD, TEST_SECRET, Directory, both_engines
from tests.live_server import LiveServer

CLIENTS = 8
EDITS_PER_CLIENT = 200
FIXTURES = 4


@pytest.fixture
def server(database_url: str, directory: Directory, tmp_path) -> Iterator[LiveServer]:
    live = LiveServer(
        database_url, TEST_SECRET, workers=2, log_path=tmp_path / "server.log"
    ).start()
    yield live
    live.stop()


def _token(server: LiveServer, email: str) -> str:
    answer = httpx.post(
        f"{server.url}/api/v1/auth/token", data={"username": email, "password": PASSWORD}
    )
    answer.raise_for_status()
    return str(answer.json()["access_token"])


@both_engines
def test_concurrent_edits_lose_nothing(server: LiveServer, directory: Directory) -> None:
    headers = {"Authorization": f"Bearer {_token(server, directory.email('surveyor'))}"}
    with httpx.Client(base_url=server.url, headers=headers, timeout=30) as setup:
        building = setup.post("/api/v1/buildings", json={"name": "Busy block"}).json()
        area = setup.post(
            f"/api/v1/buildings/{building['id']}/areas", json={"name": "Corridor"}
        ).json()
        fixture_ids = [
            setup.post(
                f"/api/v1/areas/{area['id']}/fixtures",
                json={
                    "tag": f"F-{n}",
                    "lamp_type": "T8",
                    "lamp_w": 36,
                    "ballast": "electronic-instant-start",
                },
            ).json()["id"]
            for n in range(FIXTURES)
        ]

    acknowledged: list[tuple[str, str]] = []
    server_errors: list[str] = []
    lock = threading.Lock()

    def edit(client_number: int) -> None:
        with httpx.Client(base_url=server.url, headers=headers, timeout=30) as api:
            for edit_number in range(EDITS_PER_CLIENT):
                fixture_id = fixture_ids[(client_number + edit_number) % FIXTURES]
                mark = f"{client_number}.{edit_number};"
                while True:
                    current = api.get(f"/api/v1/fixtures/{fixture_id}")
                    if current.status_code >= 500:
                        server_errors.append(current.text)
                        return
                    body = current.json()
                    answer = api.patch(
                        f"/api/v1/fixtures/{fixture_id}",
                        json={"version": body["version"], "notes": body["notes"] + mark},
                    )
                    if answer.status_code == 200:
                        with lock:
                            acknowledged.append((fixture_id, mark))
                        break
                    if answer.status_code != 409:
                        server_errors.append(f"{answer.status_code} {answer.text}")
                        return

    threads = [threading.Thread(target=edit, args=(n,)) for n in range(CLIENTS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()

    assert server_errors == []
    assert len(acknowledged) == CLIENTS * EDITS_PER_CLIENT
    with httpx.Client(base_url=server.url, headers=headers) as check:
        for fixture_id in fixture_ids:
            stored = check.get(f"/api/v1/fixtures/{fixture_id}").json()
            marks = Counter(mark + ";" for mark in stored["notes"].split(";") if mark)
            expected = Counter(mark for owner, mark in acknowledged if owner == fixture_id)
            assert marks == expected, "an acknowledged edit was lost or doubled"
            assert stored["version"] == 1 + sum(expected.values())
