"""The floor walk on a tablet: Debian's Chromium against the live server.

The live server and the browser are the fixtures of tests/browser/conftest.py,
imported here by name (hence F811: pytest passes them in as arguments).
"""
# ruff: noqa: F811

from __future__ import annotations

import re
from datetime import date, timedelta
from typing import Any

import pytest

from tests.browser_support import (
    VIEWPORTS,
    Site,
    inputs_without_label,
    new_site,
    no_horizontal_scroll,
    screenshot,
    small_targets,
)

pytestmark = pytest.mark.browser

COMMISSIONED = (date.today() - timedelta(days=35)).isoformat()
FIXTURE = {
    "lamp_type": "T8",
    "lamp_w": 36,
    "ballast": "electronic-programmed-start",
    "unswitched_supply": True,
    "commissioned_on": COMMISSIONED,
}


@pytest.fixture(scope="module")
def walk(site: Site) -> dict[str, Any]:
    made = new_site(
        site,
        fixtures=[{**FIXTURE, "tag": f"W-0{n}", "location": f"bay {n}"} for n in range(1, 5)],
    )
    building, area = made["building"]["id"], made["area"]["id"]
    return {
        "made": made,
        "walk": f"/maintenance/buildings/{building}/walk?area={area}&kind=function",
        "building": f"/maintenance/buildings/{building}",
        "fixture": f"/maintenance/fixtures/{made['fixtures'][1]['id']}",
    }


@pytest.mark.parametrize("viewport", list(VIEWPORTS))
def test_walk_pages_fit_the_screen(page_as: Any, walk: dict[str, Any], viewport: str) -> None:
    page = page_as("surveyor", viewport)
    for name in ("walk", "building", "fixture"):
        page.goto(walk[name])
        assert no_horizontal_scroll(page), (name, viewport)
        assert inputs_without_label(page) == [], (name, viewport)
        assert small_targets(page) == [], (name, viewport)
        screenshot(page, f"maintenance-{name}", viewport)
    page.goto("/maintenance")
    assert no_horizontal_scroll(page)
    screenshot(page, "maintenance-overview", viewport)


def test_all_passed_except_one_on_a_tablet(page_as: Any, walk: dict[str, Any]) -> None:
    page = page_as("surveyor", "820x1180")
    page.goto(walk["walk"])
    rows = page.locator("li.walk-row")
    assert rows.count() == 4
    second = rows.nth(1)
    second.get_by_text("Fail", exact=True).click()
    second.get_by_text("Readings, pack, action and notes").click()
    second.get_by_label("What was done").fill("lamp replaced")
    rows.nth(3).get_by_text("Not tested", exact=True).click()
    page.get_by_role("button", name="Record function tests").click()
    page.wait_for_url(re.compile(r".*\?saved=3$"))
    assert "3 tests recorded" in page.locator(".notice").inner_text()
    page.goto(walk["fixture"])
    log = page.locator("table.log-table tbody tr")
    assert log.count() == 1
    text = log.first.inner_text().lower()  # badges are drawn upper-case
    assert "fail" in text and "lamp replaced" in text
