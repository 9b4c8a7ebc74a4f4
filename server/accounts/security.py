"""Password hashing (argon2), signed session cookies and bearer tokens, CSRF tokens."""

from __future__ import annotations

import hmac
import secrets
from dataclasses import dataclass

from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError, VerifyMismatchError
from itsdangerous import BadSignature, SignatureExpired, URLSafeTimedSerializer

SESSION_COOKIE = "planner_session"
_HASHER = PasswordHasher()
# A hash of a random password, verified against when the account does not
# exist, so a sign-in takes as long for an unknown email as for a known one.
_DUMMY_HASH = _HASHER.hash(secrets.token_urlsafe(16))


def hash_password(password: str) -> str:
    return _HASHER.hash(password)


def verify_password(password_hash: str | None, password: str) -> bool:
    try:
        return _HASHER.verify(password_hash or _DUMMY_HASH, password) and password_hash is not None
    except (VerifyMismatchError, VerificationError, InvalidHashError):
        return False


@dataclass(frozen=True, slots=True)
class SessionData:
    user_id: str
    csrf: str


class Signer:
    """Signs and reads session cookies and API tokens with the app's secret key."""

    def __init__(self, secret_key: str, *, session_max_age_s: int, token_max_age_s: int) -> None:
        self._sessions = URLSafeTimedSerializer(secret_key, salt="planner-session")
        self._tokens = URLSafeTimedSerializer(secret_key, salt="planner-api-token")
        self._session_max_age_s = session_max_age_s
        self._token_max_age_s = token_max_age_s

    def new_session(self, user_id: str) -> tuple[str, SessionData]:
        data = SessionData(user_id=user_id, csrf=secrets.token_urlsafe(32))
        return self._sessions.dumps({"u": data.user_id, "c": data.csrf}), data

    def read_session(self, cookie: str | None) -> SessionData | None:
        if not cookie:
            return None
        try:
            payload = self._sessions.loads(cookie, max_age=self._session_max_age_s)
        except (BadSignature, SignatureExpired):
            return None
        return SessionData(user_id=str(payload["u"]), csrf=str(payload["c"]))

    def new_token(self, user_id: str) -> str:
        return self._tokens.dumps({"u": user_id})

    def read_token(self, token: str) -> str | None:
        try:
            payload = self._tokens.loads(token, max_age=self._token_max_age_s)
        except (BadSignature, SignatureExpired):
            return None
        return str(payload["u"])


def csrf_matches(expected: str, given: str | None) -> bool:
    return bool(given) and hmac.compare_digest(expected, given or "")
