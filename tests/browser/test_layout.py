"""Every main page at both tablet sizes and the desktop size: screenshots, no sideways
scrolling, a label on every input, touch targets of at least 44 px."""

from __future__ import annotations

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
from tests.planner_data import SERIES_FIXTURE

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def pages(site: Site) -> dict[str, str]:
    """A small surveyed area with proposals of each verdict, and the paths to look at."""
    made = new_site(
        site,
        fixtures=[
            {**SERIES_FIXTURE, "tag": "L-01", "location": "By the stair door"},
            {**SERIES_FIXTURE, "tag": "L-02", "unswitched_supply": False},
            {**SERIES_FIXTURE, "tag": "L-03", "ballast": "magnetic-glow-starter"},
            {
                **SERIES_FIXTURE,
                "tag": "L-04",
                "existing_kit": True,
                "pack_chemistry": "NiCd",
                "pack_cells": 4,
                "pack_capacity_ah": 4.5,
                "pack_date_code": "1903",
                "pack_date_format": "YYMM",
                "open_circuit_v": 5.2,
                "loaded_v": 2.9,
                "load_ohm": 9.1,
            },
        ],
    )
    fixtures = made["fixtures"]
    with site.api() as api:
        api.put(
            f"/api/v1/fixtures/{fixtures[0]['id']}/proposal",
            json={"module_id": site.catalogue["both"], "pack_id": site.catalogue["big"]},
        ).raise_for_status()
        api.put(
            f"/api/v1/fixtures/{fixtures[2]['id']}/proposal",
            json={"module_id": site.catalogue["one"], "pack_id": site.catalogue["small"]},
        ).raise_for_status()
    area, building = made["area"]["id"], made["building"]["id"]
    return {
        "home": "/",
        "buildings": "/buildings",
        "building": f"/buildings/{building}",
        "area-form": f"/areas/{area}/edit",
        "area": f"/areas/{area}",
        "fixture-new": f"/areas/{area}/fixtures/new",
        "fixture": f"/fixtures/{fixtures[3]['id']}",
        "proposals": f"/areas/{area}/proposals",
        "proposal": f"/fixtures/{fixtures[2]['id']}/proposal",
        "catalogue": "/catalogue",
        "modules": "/catalogue/modules",
        "module-form": "/catalogue/modules/new",
        "pack-form": "/catalogue/packs/new",
    }


@pytest.mark.parametrize("viewport", list(VIEWPORTS))
def test_main_pages_fit_and_label_everything(
    page_as: Any, browser: Any, site: Site, pages: dict[str, str], viewport: str
) -> None:
    signed_out = browser.new_context(viewport=VIEWPORTS[viewport], base_url=site.url)
    try:
        signin = signed_out.new_page()
        signin.goto("/signin")
        screenshot(signin, "signin", viewport)
        assert no_horizontal_scroll(signin)
        assert inputs_without_label(signin) == []
    finally:
        signed_out.close()
    page = page_as("estimator", viewport)
    problems: dict[str, Any] = {}
    for name, path in pages.items():
        answer = page.goto(path)
        assert answer is not None and answer.status == 200, (name, path)
        if name == "fixture":
            with page.expect_response(lambda answer: answer.url.endswith("/findings")):
                page.get_by_label("Check with module").select_option(
                    label="Test module, both ends, 7 W"
                )
            page.locator("#findings .existing-pack").wait_for()
        screenshot(page, name, viewport)
        found = {
            "sideways scroll": not no_horizontal_scroll(page),
            "unlabelled": inputs_without_label(page),
            "small": small_targets(page),
        }
        if any(found.values()):
            problems[name] = found
    assert problems == {}
