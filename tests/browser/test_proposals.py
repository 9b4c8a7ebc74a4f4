"""An estimator builds an area's proposals at a desk: suggest, choose, accept, override, filter."""

from __future__ import annotations

from typing import Any

import pytest
from playwright.sync_api import expect

from tests.browser_support import Site, new_site, no_horizontal_scroll, screenshot
from tests.planner_data import SERIES_FIXTURE

pytestmark = pytest.mark.browser


def test_estimator_suggests_chooses_and_accepts(page_as: Any, site: Site) -> None:
    made = new_site(
        site,
        fixtures=[
            {**SERIES_FIXTURE, "tag": "C-01"},
            {**SERIES_FIXTURE, "tag": "C-02"},
            {**SERIES_FIXTURE, "tag": "C-03", "lamp_type": "LED-tube"},
        ],
    )
    first, second, third = (fixture["id"] for fixture in made["fixtures"])
    page = page_as("estimator", "1440x900")
    page.goto(f"/areas/{made['area']['id']}/proposals")
    expect(page.locator(".filters a", has_text="None yet")).to_have_text("None yet (3)")

    row = page.locator(f"#row-{first}")
    row.get_by_role("button", name="Suggest").click()
    expect(row.locator(".verdict-line .badge").first).to_have_text("Pass")
    expect(row).to_contain_text("Test module, both ends, 7 W with Test pack NiCd 4.8 V 4.5 Ah")
    expect(row).to_contain_text("(estimate)")
    row.get_by_role("button", name="Accept").click()
    expect(row.locator(".badge.accepted")).to_have_text("Accepted")

    page.locator(f"#row-{third}").get_by_role("button", name="Suggest").click()
    expect(page.locator(f"#row-{third} .notice.info")).to_contain_text("nearest miss")

    page.locator(f"#row-{second}").get_by_role("link", name="Choose").click()
    page.get_by_label("Module", exact=True).select_option(label="Test module, one end, 7 W")
    page.get_by_label("Pack", exact=True).select_option(label="Test pack NiCd 4.8 V 4.5 Ah")
    page.get_by_role("button", name="Check and save").click()
    expect(page.locator(".verdict-line .badge").first).to_have_text("Fail")
    expect(page.locator(".cautions")).to_contain_text("unplug the pack")
    screenshot(page, "proposal-fail", "1440x900")
    page.get_by_role("button", name="Accept with this reason").click()
    expect(page.locator("#override_reason-error")).to_contain_text("needs a reason")
    page.get_by_label("Why accept it although its checks fail?").fill(
        "Series link to be broken on site; both ends rewired by the fitter."
    )
    page.get_by_role("button", name="Accept with this reason").click()
    expect(page.locator(".notice.success")).to_contain_text("Accepted")

    page.goto(f"/areas/{made['area']['id']}/proposals?verdict=fail")
    expect(page.locator(".proposal-row .tag")).to_have_text(["C-02"])
    page.get_by_role("link", name="All (3)").click()
    expect(page.locator(".proposal-row .badge.accepted")).to_have_count(2)
    assert no_horizontal_scroll(page)
    screenshot(page, "proposals-area", "1440x900")
    with site.api() as api:
        stored = api.get(f"/api/v1/fixtures/{second}/proposal").json()
    assert stored["status"] == "accepted" and stored["override_reason"].startswith("Series")


def test_suggest_for_every_fixture_of_the_area(page_as: Any, site: Site) -> None:
    made = new_site(site, fixtures=[{**SERIES_FIXTURE, "tag": f"D-{n:02d}"} for n in range(1, 5)])
    page = page_as("estimator", "1180x820")
    page.goto(f"/areas/{made['area']['id']}/proposals")
    page.get_by_role("button", name="Suggest for the 4 without one").click()
    expect(page.locator(".notice.success").first).to_contain_text("for 4 fixture(s)")
    expect(page.locator(".filters a", has_text="Pass")).to_have_text("Pass (4)")
    assert no_horizontal_scroll(page)
