"""Sign-in attempts limited per account and per client address.

Kept in the process's memory: with several instances each counts its own,
which still bounds guessing to (instances x limit) per window.
"""

from __future__ import annotations

import time
from collections import defaultdict, deque

from fastapi import HTTPException, Request, status

WINDOW_S = 15 * 60


class AttemptLog:
    def __init__(self) -> None:
        self._failures: dict[str, deque[float]] = defaultdict(deque)

    def recent(self, key: str, now: float) -> int:
        failures = self._failures[key]
        while failures and failures[0] < now - WINDOW_S:
            failures.popleft()
        return len(failures)

    def add(self, key: str, now: float) -> None:
        self._failures[key].append(now)

    def clear(self) -> None:
        self._failures.clear()


def _keys(request: Request, email: str) -> tuple[str, str]:
    address = request.client.host if request.client else "unknown"
    return f"account:{email.strip().lower()}", f"address:{address}"


def _log(request: Request) -> AttemptLog:
    log: AttemptLog = request.app.state.signin_attempts
    return log


def check_signin_allowed(request: Request, email: str) -> None:
    limit: int = request.app.state.settings.signin_attempts_per_15min
    now = time.monotonic()
    log = _log(request)
    if any(log.recent(key, now) >= limit for key in _keys(request, email)):
        raise HTTPException(
            status.HTTP_429_TOO_MANY_REQUESTS,
            "Too many failed sign-ins for this account or from this address. "
            "Wait 15 minutes, or ask your administrator to reset the password.",
        )


def record_signin_failure(request: Request, email: str) -> None:
    now = time.monotonic()
    for key in _keys(request, email):
        _log(request).add(key, now)
