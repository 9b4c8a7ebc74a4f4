"""A real uvicorn process on a free loopback port, against a real database file."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parent.parent


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


@dataclass
class LiveServer:
    """``start()`` runs ``python -m server serve``; ``kill()`` sends SIGKILL."""

    database_url: str
    secret_key: str
    workers: int = 1
    port: int = field(default_factory=free_port)
    process: subprocess.Popen[bytes] | None = None
    log_path: Path | None = None

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}"

    def start(self, timeout_s: float = 30.0) -> LiveServer:
        env = {
            **os.environ,
            "DATABASE_URL": self.database_url,
            "SECRET_KEY": self.secret_key,
            "MODE": "test",
        }
        log = open(self.log_path, "ab") if self.log_path else subprocess.DEVNULL  # noqa: SIM115
        try:
            self.process = self._spawn(env, log)
        finally:
            if not isinstance(log, int):
                log.close()  # the child holds its own copy of the descriptor
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"server exited with {self.process.returncode}: {self.log()}")
            try:
                if httpx.get(f"{self.url}/signin", timeout=1.0).status_code == 200:
                    return self
            except httpx.HTTPError:
                pass
            time.sleep(0.2)
        raise RuntimeError(f"server did not answer in time: {self.log()}")

    def log(self) -> str:
        return self.log_path.read_text()[-3000:] if self.log_path and self.log_path.exists() else ""

    def _spawn(self, env: dict[str, str], log: object) -> subprocess.Popen[bytes]:
        return subprocess.Popen(
            [
                sys.executable,
                "-m",
                "server",
                "serve",
                "--host",
                "127.0.0.1",
                "--port",
                str(self.port),
                "--workers",
                str(self.workers),
            ],
            cwd=ROOT,
            env=env,
            stdout=log,  # type: ignore[arg-type]
            stderr=log,  # type: ignore[arg-type]
            start_new_session=True,
        )

    def kill(self) -> None:
        """SIGKILL the whole process group: no shutdown, no flush, like a power cut."""
        if self.process and self.process.poll() is None:
            os.killpg(self.process.pid, signal.SIGKILL)
            self.process.wait(timeout=10)

    def stop(self) -> None:
        if self.process and self.process.poll() is None:
            os.killpg(self.process.pid, signal.SIGTERM)
            try:
                self.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.kill()
