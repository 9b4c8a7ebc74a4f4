"""Sessions, passwords, sign-in limits and security headers."""

from __future__ import annotations

from fastapi.testclient import TestClient
from sqlalchemy import select

from server.accounts.models import User
from server.accounts.security import SESSION_COOKIE
from server.app import SECURITY_HEADERS
from server.db import make_engine, make_session_factory
from tests.conftest import PASSWORD, Directory


def test_passwords_are_stored_as_argon2_hashes(directory: Directory) -> None:
    engine = make_engine(directory.database_url)
    with make_session_factory(engine)() as session:
        hashes = session.scalars(select(User.password_hash)).all()
    engine.dispose()
    assert hashes and all(h.startswith("$argon2id$") for h in hashes)
    assert all(PASSWORD not in h for h in hashes)


def test_session_cookie_is_secure_over_https(app, directory: Directory) -> None:
    with TestClient(app, base_url="https://planner.test") as browser:
        browser.get("/signin")
        answer = browser.post(
            "/signin",
            data={
                "email": directory.email("surveyor"),
                "password": PASSWORD,
                "csrf_token": browser.cookies.get("planner_signin"),
            },
            follow_redirects=False,
        )
    cookie = next(h for h in answer.headers.get_list("set-cookie") if h.startswith(SESSION_COOKIE))
    assert "Secure" in cookie and "HttpOnly" in cookie and "SameSite=lax" in cookie


def test_signin_is_rate_limited_per_account(client: TestClient, directory: Directory) -> None:
    email = directory.email("estimator")
    statuses = [
        client.post("/api/v1/auth/token", data={"username": email, "password": "wrong"}).status_code
        for _ in range(10)
    ]
    assert statuses == [401] * 10
    blocked = client.post("/api/v1/auth/token", data={"username": email, "password": PASSWORD})
    assert blocked.status_code == 429
    assert "15 minutes" in blocked.json()["detail"]


def test_signin_is_rate_limited_per_address(client: TestClient, directory: Directory) -> None:
    for number in range(10):
        client.post(
            "/api/v1/auth/token", data={"username": f"nobody{number}@x.test", "password": "x"}
        )
    fresh_account = client.post(
        "/api/v1/auth/token", data={"username": directory.email("admin"), "password": PASSWORD}
    )
    assert fresh_account.status_code == 429


def test_security_headers_on_pages_api_and_errors(client: TestClient) -> None:
    for path in ("/signin", "/api/v1/buildings", "/no-such-page", "/openapi.json"):
        answer = client.get(path)
        for name, value in SECURITY_HEADERS.items():
            assert answer.headers.get(name) == value, (path, name)
    policy = SECURITY_HEADERS["Content-Security-Policy"]
    assert "frame-ancestors 'none'" in policy and "'unsafe-inline'" not in policy
