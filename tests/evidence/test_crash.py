"""A power cut in the middle of acknowledged writes, and a backup taken while writing."""

from __future__ import annotations

import os
import sqlite3
import subprocess
import sys
import threading
import time
import uuid
from pathlib import Path

import httpx

from tests.conftest import PASSWORD, TEST_SECRET, Directory
from tests.live_server import ROOT, LiveServer


def _client(server: LiveServer, email: str) -> httpx.Client:
    token = httpx.post(
        f"{server.url}/api/v1/auth/token", data={"username": email, "password": PASSWORD}
    ).json()["access_token"]
    return httpx.Client(
        base_url=server.url, headers={"Authorization": f"Bearer {token}"}, timeout=10
    )


def _stream_creates(api: httpx.Client, acknowledged: list[str], stop: threading.Event) -> None:
    """Create buildings until told to stop or the server dies; keep the acknowledged ids."""
    while not stop.is_set():
        record_id = str(uuid.uuid4())
        try:
            answer = api.post("/api/v1/buildings", json={"id": record_id, "name": record_id[:8]})
        except httpx.HTTPError:
            return
        if answer.status_code == 201:
            acknowledged.append(record_id)


def _stored_ids(path: Path) -> set[str]:
    with sqlite3.connect(path) as connection:
        return {row[0] for row in connection.execute("SELECT id FROM buildings")}


def _integrity(path: Path) -> str:
    with sqlite3.connect(path) as connection:
        return str(connection.execute("PRAGMA integrity_check").fetchone()[0])


def test_sigkill_mid_stream_keeps_every_acknowledged_create(
    database_url: str, directory: Directory, tmp_path: Path
) -> None:
    path = Path(database_url.removeprefix("sqlite:///"))
    server = LiveServer(database_url, TEST_SECRET, log_path=tmp_path / "server.log").start()
    acknowledged: list[str] = []
    stop = threading.Event()
    with _client(server, directory.email("surveyor")) as api:
        writer = threading.Thread(target=_stream_creates, args=(api, acknowledged, stop))
        writer.start()
        deadline = time.monotonic() + 30
        while len(acknowledged) < 150 and time.monotonic() < deadline:
            time.sleep(0.05)
        server.kill()
        stop.set()
        writer.join()
    assert len(acknowledged) >= 150

    assert _integrity(path) == "ok"
    restarted = LiveServer(database_url, TEST_SECRET, log_path=tmp_path / "server.log").start()
    try:
        with _client(restarted, directory.email("surveyor")) as api:
            total = api.get("/api/v1/buildings", params={"limit": 1}).json()["total"]
    finally:
        restarted.stop()
    missing = set(acknowledged) - _stored_ids(path)
    assert missing == set(), f"{len(missing)} acknowledged creates were lost"
    assert total >= len(acknowledged)


def test_backup_while_writing_restores_what_was_acknowledged(
    database_url: str, directory: Directory, tmp_path: Path
) -> None:
    server = LiveServer(database_url, TEST_SECRET, log_path=tmp_path / "server.log").start()
    acknowledged: list[str] = []
    stop = threading.Event()
    backup = tmp_path / "backup.sqlite3"
    try:
        with _client(server, directory.email("surveyor")) as api:
            writer = threading.Thread(target=_stream_creates, args=(api, acknowledged, stop))
            writer.start()
            while len(acknowledged) < 50:
                time.sleep(0.05)
            before_backup = list(acknowledged)
            result = subprocess.run(
                [sys.executable, "-m", "server", "backup", str(backup)],
                cwd=ROOT,
                env={**os.environ, "DATABASE_URL": database_url, "SECRET_KEY": TEST_SECRET},
                capture_output=True,
                text=True,
                timeout=60,
            )
            stop.set()
            writer.join()
    finally:
        server.stop()
    assert result.returncode == 0, result.stderr
    assert _integrity(backup) == "ok"

    restored = tmp_path / "restored.sqlite3"
    restored.write_bytes(backup.read_bytes())
    restored_ids = _stored_ids(restored)
    assert set(before_backup) <= restored_ids
    assert restored_ids <= _stored_ids(Path(database_url.removeprefix("sqlite:///")))
