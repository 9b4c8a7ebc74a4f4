"""A surveyor on a tablet: building, area, fixture, five repeats, the findings beside the form."""

from __future__ import annotations

import re
from typing import Any

import pytest
from playwright.sync_api import expect

from tests.browser_support import Site, new_site, no_horizontal_scroll, screenshot
from tests.planner_data import SERIES_FIXTURE

pytestmark = pytest.mark.browser


def choose(page: Any, name: str, value: str) -> None:
    """Tap the big button of a radio group (the label the input sits in)."""
    page.locator(f'label.choice:has(input[name="{name}"][value="{value}"])').click()


def findings_verdict(page: Any) -> Any:
    return page.locator("#findings .verdict-line .badge").first


def test_surveyor_builds_a_corridor_and_sees_the_series_rule(page_as: Any, site: Site) -> None:
    """Series wiring with a one-end module fails; a both-ends module passes.

    ENGINEERING.md section 5: two lamps in series on one electronic ballast need a
    module with changeover on both lamp ends (module listings, common practice).
    """
    page = page_as("surveyor", "820x1180")
    page.get_by_role("link", name="Buildings").first.click()
    page.get_by_role("link", name="New building", exact=True).click()
    page.get_by_label("Building name").fill("Harbour House")
    page.get_by_label("Address").fill("7 Quay Lane")
    page.get_by_role("button", name="Save building").click()
    expect(page.get_by_role("heading", name="Harbour House")).to_be_visible()

    page.get_by_role("link", name="New area", exact=True).click()
    page.get_by_label("Area name").fill("Ground floor corridor")
    page.get_by_role("button", name="Save area").click()
    expect(page.get_by_role("heading", name="Ground floor corridor")).to_be_visible()

    page.get_by_role("link", name="Add fixture").first.click()
    expect(page.locator("#f-tag")).to_have_value("T-01")
    page.get_by_label("Lamp watts").fill("36")
    page.get_by_label("Lamp length").fill("1200")
    choose(page, "lamp_count", "2")
    choose(page, "wiring", "series")
    choose(page, "unswitched_supply", "true")
    page.get_by_role("button", name="Save fixture").click()
    expect(page.locator(".notice.success")).to_have_text("Fixture T-01 saved.")

    for number in range(2, 7):
        page.get_by_role("button", name=re.compile("Repeat last fixture")).click()
        expect(page.locator(".notice.success")).to_have_text(f"Fixture T-0{number} added.")
    tags = page.locator(".rows .row-tag").all_inner_texts()
    assert tags == ["T-01", "T-02", "T-03", "T-04", "T-05", "T-06"]
    assert no_horizontal_scroll(page)
    screenshot(page, "area-fixtures", "820x1180")

    page.locator(".rows a", has_text="T-06").click()
    expect(page.locator("#f-tag")).to_have_value("T-06")
    expect(page.locator('input[name="wiring"][value="series"]')).to_be_checked()
    page.get_by_label("Check with module").select_option(label="Test module, one end, 7 W")
    page.get_by_label("and pack").select_option(label="Test pack NiCd 4.8 V 4.5 Ah")
    expect(findings_verdict(page)).to_have_text("Fail")
    failing = page.locator("#findings .finding", has=page.locator(".badge.fail"))
    expect(failing.first).to_contain_text("switches one lamp end only")
    expect(failing.first.locator(".fix")).to_contain_text("changeover on both lamp ends")
    screenshot(page, "fixture-findings-fail", "820x1180")

    page.get_by_label("Check with module").select_option(label="Test module, both ends, 7 W")
    expect(findings_verdict(page)).to_have_text("Pass")
    expect(page.locator("#findings")).to_contain_text("break the series link")
    assert no_horizontal_scroll(page)
    screenshot(page, "fixture-findings-pass", "820x1180")


def test_findings_follow_the_typing(page_as: Any, site: Site) -> None:
    made = new_site(site, fixtures=[{**SERIES_FIXTURE, "wiring": "single", "lamp_count": 1}])
    page = page_as("surveyor", "1180x820")
    page.goto(f"/fixtures/{made['fixtures'][0]['id']}")
    page.get_by_label("Check with module").select_option(label="Test module, both ends, 7 W")
    page.get_by_label("and pack").select_option(label="Test pack NiCd 4.8 V 4.5 Ah")
    expect(findings_verdict(page)).to_have_text("Pass")
    temperature = page.get_by_label("Ceiling temperature")
    temperature.fill("")
    temperature.press_sequentially("55")
    expect(findings_verdict(page)).to_have_text("Fail")
    expect(page.locator("#findings")).to_contain_text("above the pack's marked maximum")
    page.get_by_label("Lamp watts").press("Backspace")
    page.get_by_label("Lamp watts").press("Backspace")
    expect(page.locator("#findings .notice")).to_contain_text("Lamp watts")


def test_a_wrong_value_shows_its_error_and_keeps_the_input(page_as: Any, site: Site) -> None:
    made = new_site(site, fixtures=[SERIES_FIXTURE])
    page = page_as("surveyor", "1180x820")
    page.goto(f"/areas/{made['area']['id']}/fixtures/new")
    page.get_by_label("Lamp watts").fill("thirty-six")
    page.get_by_label("Where it is").fill("Above the lift")
    page.get_by_role("button", name="Save fixture").click()
    expect(page.locator("#lamp_w-error")).to_have_text("Enter a number, like 36 or 12.5.")
    expect(page.get_by_label("Lamp watts")).to_have_value("thirty-six")
    expect(page.get_by_label("Where it is")).to_have_value("Above the lift")
    expect(page.locator(".notice.error")).to_contain_text("Nothing was saved")
    assert no_horizontal_scroll(page)
    screenshot(page, "fixture-error", "1180x820")


def test_a_form_posted_without_its_csrf_token_is_refused(page_as: Any, site: Site) -> None:
    page = page_as("surveyor", "1440x900")
    page.goto("/buildings/new")
    page.get_by_label("Building name").fill("No token tower")
    page.evaluate("() => document.querySelector('#building-form input[name=csrf_token]').remove()")
    with page.expect_response(lambda answer: answer.request.method == "POST") as posted:
        page.get_by_role("button", name="Save building").click()
    assert posted.value.status == 403
    expect(page.locator("body")).to_contain_text("CSRF")
    with site.api("surveyor") as api:
        names = [item["name"] for item in api.get("/api/v1/buildings?limit=500").json()["items"]]
    assert "No token tower" not in names


def test_focus_is_visible_when_tabbing(page_as: Any, site: Site) -> None:
    page = page_as("surveyor", "1440x900")
    page.goto("/buildings/new")
    page.keyboard.press("Tab")
    expect(page.locator(":focus")).to_have_text("Skip to the page")
    for _ in range(6):
        page.keyboard.press("Tab")
        outline = page.evaluate(
            "() => { const s = getComputedStyle(document.activeElement);"
            " return [s.outlineStyle, parseFloat(s.outlineWidth)]; }"
        )
        assert outline[0] != "none" and outline[1] >= 3, outline
