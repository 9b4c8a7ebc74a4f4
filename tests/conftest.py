"""Test fixtures: a real database made by the real migrations, and signed-in clients.

The database is a temporary SQLite file by default. With TEST_DATABASE_URL
set to a PostgreSQL URL, the tests marked ``postgres`` (and the API tests
parametrised over both engines) run there too; without it they skip with
the reason.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from argon2 import PasswordHasher
from fastapi.testclient import TestClient
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from server import migrate
from server.accounts import security
from server.accounts import service as accounts
from server.accounts.models import Role
from server.app import create_app
from server.config import Mode, Settings
from server.db import make_engine, make_session_factory

# The browser fixtures (one server and one Chromium for the whole session) live in
# a plugin so every folder's tests share them, instead of each importing its own copy.
pytest_plugins = ("tests.browser_support",)

PASSWORD = "correct horse battery"
TEST_SECRET = "test-secret-key-not-for-production"


def postgres_url() -> str | None:
    return os.environ.get("TEST_DATABASE_URL") or None


@pytest.fixture(autouse=True, scope="session")
def _fast_password_hashing() -> Iterator[None]:
    """Argon2 with its cheapest parameters: still argon2, much faster for many test users."""
    saved = security._HASHER
    security._HASHER = PasswordHasher(time_cost=1, memory_cost=1024, parallelism=1)
    yield
    security._HASHER = saved


@pytest.fixture(scope="session")
def migrated_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """One migrated SQLite file per session, copied for each test (fast, still real)."""
    path = tmp_path_factory.mktemp("template") / "template.sqlite3"
    migrate.upgrade(f"sqlite:///{path}")
    return path


def _fresh_postgres_database(base_url: str) -> str:
    """A new, empty database on the test server, migrated to head."""
    url = make_url(base_url)
    name = f"planner_test_{uuid.uuid4().hex[:12]}"
    admin = create_engine(url, isolation_level="AUTOCOMMIT")
    with admin.connect() as connection:
        connection.execute(text(f'CREATE DATABASE "{name}"'))
    admin.dispose()
    database_url = url.set(database=name).render_as_string(hide_password=False)
    migrate.upgrade(database_url)
    return database_url


def _drop_postgres_database(database_url: str) -> None:
    url = make_url(database_url)
    admin = create_engine(url.set(database="postgres"), isolation_level="AUTOCOMMIT")
    with admin.connect() as connection:
        connection.execute(text(f'DROP DATABASE IF EXISTS "{url.database}" WITH (FORCE)'))
    admin.dispose()


@pytest.fixture(params=["sqlite"])
def database_url(
    request: pytest.FixtureRequest, tmp_path: Path, migrated_template: Path
) -> Iterator[str]:
    """A migrated database for one test. Parametrise with ``postgres`` to add that engine."""
    if request.param == "sqlite":
        path = tmp_path / "planner.sqlite3"
        path.write_bytes(migrated_template.read_bytes())
        yield f"sqlite:///{path}"
        return
    base = postgres_url()
    if base is None:
        pytest.skip(
            "PostgreSQL tests need TEST_DATABASE_URL (set by .ci/run when a server answers)"
        )
    url = _fresh_postgres_database(base)
    try:
        yield url
    finally:
        _drop_postgres_database(url)


def both_engines(test: Callable[..., object]) -> Callable[..., object]:
    """Run an API test on SQLite and, when a server answers, on PostgreSQL."""
    return pytest.mark.parametrize("database_url", ["sqlite", "postgres"], indirect=True)(test)


@pytest.fixture
def settings(database_url: str) -> Settings:
    return Settings(mode=Mode.TEST, database_url=database_url, secret_key=TEST_SECRET)


@pytest.fixture
def app(settings: Settings) -> Iterator[object]:
    application = create_app(settings)
    yield application
    application.state.engine.dispose()


@dataclass
class Directory:
    """The organisations and users made for a test, by firm and role."""

    database_url: str
    emails: dict[tuple[str, str], str]

    def email(self, role: str, org: str = "A") -> str:
        return self.emails[(org, role)]


@pytest.fixture
def directory(database_url: str) -> Directory:
    """Firms "A" and "B", each with one user of every role."""
    engine = make_engine(database_url)
    factory = make_session_factory(engine)
    emails: dict[tuple[str, str], str] = {}
    with factory() as session:
        for org_key in ("A", "B"):
            org = accounts.get_or_create_org(session=session, name=f"Test firm {org_key}")
            for role in Role:
                email = f"{role.value}.{org_key.lower()}@firm-{org_key.lower()}.test"
                accounts.create_user(
                    session=session, org=org, email=email, password=PASSWORD, role=role
                )
                emails[(org_key, role.value)] = email
        session.commit()
    engine.dispose()
    return Directory(database_url=database_url, emails=emails)


@pytest.fixture
def client(app: object) -> Iterator[TestClient]:
    with TestClient(app) as test_client:  # type: ignore[arg-type]
        yield test_client


def bearer_token(client: TestClient, email: str) -> str:
    answer = client.post("/api/v1/auth/token", data={"username": email, "password": PASSWORD})
    assert answer.status_code == 200, answer.text
    return str(answer.json()["access_token"])


@pytest.fixture
def client_as(app: object, directory: Directory) -> Iterator[Callable[..., TestClient]]:
    """``client_as("estimator")`` or ``client_as("surveyor", org="B")``: a signed-in client."""
    opened: list[TestClient] = []

    def make(role: str = "estimator", org: str = "A") -> TestClient:
        test_client = TestClient(app)  # type: ignore[arg-type]
        test_client.__enter__()
        opened.append(test_client)
        token = bearer_token(test_client, directory.email(role, org))
        test_client.headers["Authorization"] = f"Bearer {token}"
        return test_client

    yield make
    for test_client in opened:
        test_client.__exit__(None, None, None)


@pytest.fixture
def browser_session_as(app: object, directory: Directory) -> Iterator[Callable[..., TestClient]]:
    """A client signed in through the sign-in page (session cookie, CSRF token)."""
    opened: list[TestClient] = []

    def make(role: str = "surveyor", org: str = "A") -> TestClient:
        test_client = TestClient(app)  # type: ignore[arg-type]
        test_client.__enter__()
        opened.append(test_client)
        page = test_client.get("/signin")
        token = test_client.cookies.get("planner_signin")
        answer = test_client.post(
            "/signin",
            data={
                "email": directory.email(role, org),
                "password": PASSWORD,
                "csrf_token": token,
                "next_url": "/",
            },
            follow_redirects=False,
        )
        assert page.status_code == 200 and answer.status_code == 303, answer.text
        return test_client

    yield make
    for test_client in opened:
        test_client.__exit__(None, None, None)
