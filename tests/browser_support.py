"""Browser test fixtures: Debian's Chromium driven by Playwright against a real server.

One uvicorn process (``python -m server serve``) runs for the whole session on
a free loopback port, against a temporary SQLite file made by the real
migrations and seeded with a firm, its users and an invented catalogue. The
tests skip, saying why, only where /usr/bin/chromium is missing.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import httpx
import pytest

from server import migrate
from server.accounts import service as accounts
from server.accounts.models import Role
from server.db import make_engine, make_session_factory
from tests.conftest import PASSWORD, TEST_SECRET
from tests.live_server import ROOT, LiveServer
from tests.planner_data import BIG_PACK, BOTH_ENDS_MODULE, ONE_END_MODULE, SMALL_PACK

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]
VIEWPORTS: dict[str, dict[str, int]] = {
    "820x1180": {"width": 820, "height": 1180},
    "1180x820": {"width": 1180, "height": 820},
    "1440x900": {"width": 1440, "height": 900},
}
SCREENSHOTS = ROOT / "test-artifacts" / "screenshots"

pytestmark = pytest.mark.browser


@dataclass
class Site:
    """The running server and what was seeded in it."""

    url: str
    emails: dict[str, str]
    catalogue: dict[str, str]

    def api(self, role: str = "estimator") -> httpx.Client:
        """An API client of the live server with a bearer token of that role."""
        token = httpx.post(
            f"{self.url}/api/v1/auth/token",
            data={"username": self.emails[role], "password": PASSWORD},
        ).json()["access_token"]
        return httpx.Client(base_url=self.url, headers={"Authorization": f"Bearer {token}"})


def _seed(database_url: str) -> dict[str, str]:
    engine = make_engine(database_url)
    emails: dict[str, str] = {}
    with make_session_factory(engine)() as session:
        org = accounts.get_or_create_org(session=session, name="Browser test firm")
        for role in Role:
            email = f"{role.value}@browser-firm.test"
            accounts.create_user(
                session=session, org=org, email=email, password=PASSWORD, role=role
            )
            emails[role.value] = email
        session.commit()
    engine.dispose()
    return emails


@pytest.fixture(scope="session")
def site(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Site]:
    if not CHROMIUM.exists():
        pytest.skip(
            "Debian's Chromium is not installed at /usr/bin/chromium "
            "(scripts/ensure-browser installs it where apt-get may run)"
        )
    folder = tmp_path_factory.mktemp("browser")
    database_url = f"sqlite:///{folder / 'planner.sqlite3'}"
    migrate.upgrade(database_url)
    emails = _seed(database_url)
    server = LiveServer(
        database_url=database_url, secret_key=TEST_SECRET, log_path=folder / "server.log"
    ).start()
    try:
        seeded = Site(url=server.url, emails=emails, catalogue={})
        with seeded.api() as api:
            for key, body in (
                ("both", BOTH_ENDS_MODULE),
                ("one", ONE_END_MODULE),
            ):
                seeded.catalogue[key] = (
                    api.post("/api/v1/catalogue/modules", json=body).raise_for_status().json()["id"]
                )
            for key, body in (("big", BIG_PACK), ("small", SMALL_PACK)):
                seeded.catalogue[key] = (
                    api.post("/api/v1/catalogue/packs", json=body).raise_for_status().json()["id"]
                )
        yield seeded
    finally:
        server.stop()


@pytest.fixture(scope="session")
def browser(site: Site) -> Iterator[Any]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        launched = playwright.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        yield launched
        launched.close()


@pytest.fixture
def page_as(browser: Any, site: Site) -> Iterator[Callable[..., Any]]:
    """``page_as("surveyor", "820x1180")``: a signed-in page in a fresh browser context."""
    contexts: list[Any] = []

    def make(role: str = "surveyor", viewport: str = "820x1180") -> Any:
        context = browser.new_context(viewport=VIEWPORTS[viewport], base_url=site.url)
        context.set_default_timeout(10_000)
        contexts.append(context)
        page = context.new_page()
        page.on("dialog", lambda dialog: dialog.accept())
        page.goto("/signin")
        page.get_by_label("Email").fill(site.emails[role])
        page.get_by_label("Password").fill(PASSWORD)
        page.get_by_role("button", name="Sign in").click()
        page.wait_for_url(f"{site.url}/")
        return page

    yield make
    for context in contexts:
        context.close()


def new_site(site: Site, *, fixtures: list[dict[str, Any]]) -> dict[str, Any]:
    """A building and an area with these fixtures, made through the live API."""
    with site.api("surveyor") as api:
        building = (
            api.post("/api/v1/buildings", json={"id": str(uuid.uuid4()), "name": "Seeded block"})
            .raise_for_status()
            .json()
        )
        area = (
            api.post(
                f"/api/v1/buildings/{building['id']}/areas",
                json={"name": "Seeded corridor", "kind": "escape-route"},
            )
            .raise_for_status()
            .json()
        )
        made = [
            api.post(f"/api/v1/areas/{area['id']}/fixtures", json=body).raise_for_status().json()
            for body in fixtures
        ]
    return {"building": building, "area": area, "fixtures": made}


def no_horizontal_scroll(page: Any) -> bool:
    return bool(page.evaluate("() => document.documentElement.scrollWidth <= window.innerWidth"))


def inputs_without_label(page: Any) -> list[str]:
    """Names of visible inputs with neither a <label> nor an aria-label."""
    return list(
        page.evaluate(
            """() => Array.from(document.querySelectorAll('input, select, textarea'))
                .filter(e => e.type !== 'hidden')
                .filter(e => !(e.labels && e.labels.length) && !e.getAttribute('aria-label')
                             && !e.getAttribute('aria-labelledby'))
                .map(e => e.name || e.id || e.outerHTML.slice(0, 60))"""
        )
    )


def small_targets(page: Any) -> list[str]:
    """Controls drawn smaller than 44 px high (buttons, fields, choices, nav, rows)."""
    return list(
        page.evaluate(
            """() => Array.from(document.querySelectorAll(
                    'button, .button, select, .choice span, .nav a, .filters a, .row > a,'
                    + ' input:not([type=hidden]):not([type=radio]):not([type=checkbox])'))
                .filter(e => e.offsetParent !== null)
                .filter(e => e.getBoundingClientRect().height < 44)
                .map(e => (e.textContent || e.name || e.tagName).trim().slice(0, 40)
                          + ' ' + Math.round(e.getBoundingClientRect().height) + 'px')"""
        )
    )


def screenshot(page: Any, name: str, viewport: str) -> Path:
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)
    path = SCREENSHOTS / f"{name}-{viewport}.png"
    page.screenshot(path=str(path), full_page=True)
    return path
