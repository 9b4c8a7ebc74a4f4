"""Sign-in by token and by cookie, and what an unsigned request gets."""

from __future__ import annotations

from fastapi.testclient import TestClient

from server.accounts.security import SESSION_COOKIE
from tests.conftest import PASSWORD


def test_token_flow_and_me(client_as) -> None:
    me = client_as("surveyor").get("/api/v1/me")
    assert me.status_code == 200
    assert me.json()["role"] == "surveyor"


def test_wrong_password_is_refused(client: TestClient, directory) -> None:
    answer = client.post(
        "/api/v1/auth/token", data={"username": directory.email("admin"), "password": "nope"}
    )
    assert answer.status_code == 401


def test_api_without_sign_in_is_401(client: TestClient) -> None:
    assert client.get("/api/v1/buildings").status_code == 401


def test_session_cookie_is_httponly_and_samesite(client: TestClient, directory) -> None:
    client.get("/signin")
    answer = client.post(
        "/signin",
        data={
            "email": directory.email("surveyor"),
            "password": PASSWORD,
            "csrf_token": client.cookies.get("planner_signin"),
        },
        follow_redirects=False,
    )
    assert answer.status_code == 303
    cookie = next(h for h in answer.headers.get_list("set-cookie") if h.startswith(SESSION_COOKIE))
    assert "HttpOnly" in cookie and "SameSite=lax" in cookie
    assert "Secure" not in cookie  # plain http in the test; https sets it


def test_cookie_write_without_csrf_token_is_refused(browser_session_as) -> None:
    browser = browser_session_as("surveyor")
    answer = browser.post("/api/v1/buildings", json={"name": "No token"})
    assert answer.status_code == 403
    assert "CSRF" in answer.json()["detail"]
