"""The route page in Chromium at both tablet sizes and the desktop size: an L-shaped
corridor saved through the form, planned, and a refused width shown beside its field;
screenshots into test-artifacts/screenshots/, no sideways scrolling, a label on every
input, touch targets of at least 44 px."""

from __future__ import annotations

import re
import uuid
from collections.abc import Callable
from typing import Any

import pytest

from tests.browser_support import (
    VIEWPORTS,
    Site,
    inputs_without_label,
    no_horizontal_scroll,
    screenshot,
    small_targets,
)
from tests.planner_data import SERIES_FIXTURE

pytestmark = pytest.mark.browser

L_ROUTE = "0,1; 18,1; 18,10"


@pytest.fixture(scope="module")
def l_corridor(site: Site) -> dict[str, Any]:
    """An L-shaped corridor of battens, one of them converted already."""
    with site.api("estimator") as api:

        def made(path: str, body: dict[str, Any]) -> dict[str, Any]:
            answer = api.post(path, json={"id": str(uuid.uuid4()), **body})
            answer.raise_for_status()
            return dict(answer.json())

        building = made("/api/v1/buildings", {"name": "Screenshot block"})
        area = made(
            f"/api/v1/buildings/{building['id']}/areas",
            {
                "name": "Ground floor corridor",
                "kind": "escape-route",
                "length_m": 20,
                "width_m": 12,
                "mounting_height_m": 2.7,
                "profile_id": "eu-escape-route",
                "required_duration_min": 60,
            },
        )
        path = f"/api/v1/areas/{area['id']}/fixtures"
        spots = [(1.5 + 3 * i, 1.0) for i in range(6)] + [(18.0, 3.0 + 3 * i) for i in range(3)]
        fixtures = [
            made(path, {**SERIES_FIXTURE, "tag": f"G-{n:02d}", "x_m": x, "y_m": y})
            for n, (x, y) in enumerate(spots, start=1)
        ]
        fixtures.append(made(path, {**SERIES_FIXTURE, "tag": "G-P", "position_m": 26.5}))
        fixtures.append(made(path, {**SERIES_FIXTURE, "tag": "G-X", "location": "Store room"}))
        proposal = api.put(
            f"/api/v1/fixtures/{fixtures[0]['id']}/proposal",
            json={"module_id": site.catalogue["both"], "pack_id": site.catalogue["big"]},
        ).json()
        api.post(
            f"/api/v1/fixtures/{fixtures[0]['id']}/proposal/accept",
            json={"version": proposal["version"]},
        ).raise_for_status()
    return area


@pytest.mark.parametrize("viewport", list(VIEWPORTS))
def test_route_page_in_chromium(
    page_as: Callable[..., Any],
    l_corridor: dict[str, Any],
    viewport: str,
) -> None:
    page = page_as("estimator", viewport)
    page.goto(f"/areas/{l_corridor['id']}/route")
    page.get_by_label("Centre line points").fill(L_ROUTE)
    page.get_by_label("Route width").fill("1.6")
    page.get_by_role("button", name="Save route").click()
    page.wait_for_url(re.compile(r".*\?saved=1$"))
    screenshot(page, "route", viewport)
    found = {
        "sideways scroll": not no_horizontal_scroll(page),
        "unlabelled": inputs_without_label(page),
        "small": small_targets(page),
    }
    page.get_by_role("button", name="Plan the cheapest conversion").click()
    page.locator(".route-plan-result").wait_for()
    page.get_by_text("What each fixture would give and cost").click()
    screenshot(page, "route-plan", viewport)
    found["plan sideways scroll"] = not no_horizontal_scroll(page)
    found["plan small"] = small_targets(page)
    assert not any(found.values()), found
    assert page.locator(".plan-chosen").count() >= 1
    # Bad input in the browser: the message beside the field, the input kept.
    page.get_by_label("Route width").fill("-2")
    page.get_by_role("button", name="Save route").click()
    page.locator("#width_m-error").wait_for()
    assert page.get_by_label("Route width").input_value() == "-2"
    screenshot(page, "route-error", viewport)
