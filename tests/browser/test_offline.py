"""Surveys that survive a dead signal: the tablet keeps working offline and syncs once.

Chromium's own offline switch (``context.set_offline``) cuts the page and the
service worker off the network; the other side of each story (someone else
editing, counting what arrived) goes through the live API, which the switch
does not touch.
"""

from __future__ import annotations

import re
import time
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from playwright.sync_api import Route, expect

from tests.browser_support import (
    CHROMIUM,
    CHROMIUM_ARGS,
    VIEWPORTS,
    Site,
    inputs_without_label,
    new_site,
    no_horizontal_scroll,
    screenshot,
    small_targets,
)
from tests.conftest import PASSWORD
from tests.pages import parse

pytestmark = pytest.mark.browser

SEEDED = {
    "tag": "T-01",
    "lamp_type": "T8",
    "lamp_w": 36,
    "lamp_count": 2,
    "lamps_to_back_up": 1,
    "ballast": "electronic-programmed-start",
    "wiring": "parallel",
    "unswitched_supply": True,
}
SYNC_TIMEOUT_MS = 20_000
# Change a kept entry in the tablet's IndexedDB (both the value and what the form shows).
DOCTOR_ENTRY = """async ({tag, name, value}) => {
  const db = await new Promise((done, fail) => {
    const opening = indexedDB.open("planner-offline");
    opening.onsuccess = () => done(opening.result);
    opening.onerror = () => fail(opening.error);
  });
  const store = db.transaction("queue", "readwrite").objectStore("queue");
  const all = await new Promise((done) => {
    store.getAll().onsuccess = (event) => done(event.target.result);
  });
  const entry = all.find((item) => item.tag === tag);
  entry.values[name] = value;
  entry.raw[name] = String(value);
  await new Promise((done) => { store.put(entry).onsuccess = done; });
  db.close();
}"""


def kept_for_offline(page: Any, building_id: str) -> None:
    """Open the building as a surveyor would with a signal, and wait until it is kept."""
    page.goto(f"/buildings/{building_id}")
    expect(page.locator("html")).to_have_attribute(
        "data-offline-ready", "yes", timeout=SYNC_TIMEOUT_MS
    )


def bar(page: Any) -> Any:
    return page.locator("#sync-bar")


def waiting(page: Any, count: int) -> None:
    expect(bar(page)).to_have_attribute("data-waiting", str(count), timeout=SYNC_TIMEOUT_MS)


def stored_fixtures(site: Site, area_id: str) -> list[dict[str, Any]]:
    with site.api("surveyor") as api:
        answer = api.get(f"/api/v1/areas/{area_id}/fixtures", params={"limit": 500})
        items: list[dict[str, Any]] = answer.raise_for_status().json()["items"]
    return items


def record_offline(page: Any, area_id: str, *, tag: str, lamp_w: str) -> None:
    """Open "new fixture" from the kept copy, check the suggested tag, save on the tablet."""
    page.goto(f"/areas/{area_id}/fixtures/new")
    expect(page.locator("#f-tag")).to_have_value(tag)
    page.get_by_label("Lamp watts").fill(lamp_w)
    page.get_by_role("button", name="Save on this tablet").click()
    page.wait_for_url(re.compile(rf"/areas/{area_id}$"))
    expect(page.locator("#offline-page-message")).to_contain_text(
        f"Fixture {tag} saved on this tablet"
    )


def tags_of(fixtures: list[dict[str, Any]]) -> list[str]:
    return sorted(fixture["tag"] for fixture in fixtures)


def test_ten_fixtures_recorded_offline_arrive_once(page_as: Any, site: Site) -> None:
    made = new_site(site, fixtures=[SEEDED])
    area_id = made["area"]["id"]
    page = page_as("surveyor", "820x1180")
    kept_for_offline(page, made["building"]["id"])
    context = page.context
    context.set_offline(True)

    page.goto(f"/areas/{area_id}")
    expect(page.get_by_role("heading", name="Seeded corridor")).to_be_visible()
    expect(bar(page)).to_have_attribute("data-state", "offline")
    expect(page.locator("#sync-state")).to_have_text("Offline: changes are kept on this tablet")
    page.get_by_role("link", name="Add fixture").first.click()
    expect(page.locator("#findings")).to_contain_text("Not yet checked")

    # The API's limits and its rules across fields hold before anything is kept.
    page.get_by_label("Lamp watts").fill("450")
    page.locator('label.choice:has(input[name="lamp_count"][value="1"])').click()
    page.locator('label.choice:has(input[name="wiring"][value="series"])').click()
    page.get_by_label("Open-circuit voltage").fill("4,8")
    page.get_by_label("Voltage under load").fill("5.1")
    page.get_by_role("button", name="Save on this tablet").click()
    expect(page.locator("#offline-note")).to_contain_text("Nothing was kept")
    expect(page.locator("#lamp_w-offline-error")).to_have_text("Enter 400 or less.")
    expect(page.locator("#wiring-offline-error")).to_contain_text("at least two lamps")
    expect(page.locator("#loaded_v-offline-error")).to_contain_text("cannot be above")
    expect(page.get_by_label("Lamp watts")).to_have_attribute("aria-invalid", "true")
    waiting(page, 0)
    screenshot(page, "offline-form-checks", "820x1180")

    page.get_by_label("Lamp watts").fill("58")
    page.locator('label.choice:has(input[name="wiring"][value="single"])').click()
    page.get_by_label("Voltage under load").fill("4.6")
    page.get_by_role("button", name="Save on this tablet").click()
    page.wait_for_url(re.compile(rf"/areas/{area_id}$"))
    waiting(page, 1)
    for number in range(3, 12):  # the tags the form suggests after T-02
        record_offline(page, area_id, tag=f"T-{number:02d}", lamp_w="36")
    waiting(page, 10)
    expect(page.locator("#offline-area-waiting .offline-row")).to_have_count(10)
    expect(page.locator("#offline-area-waiting")).to_contain_text("not yet checked")
    assert stored_fixtures(site, area_id) == made["fixtures"]  # nothing left the tablet

    assert no_horizontal_scroll(page)
    assert small_targets(page) == []
    screenshot(page, "offline-indicator", "820x1180")
    page.set_viewport_size(VIEWPORTS["1180x820"])
    assert no_horizontal_scroll(page)
    screenshot(page, "offline-indicator", "1180x820")

    # A reload and a closed tab, still without a connection, keep the queue.
    page.reload()
    waiting(page, 10)
    page.close()
    page = context.new_page()
    page.goto(f"/areas/{area_id}")
    waiting(page, 10)
    expect(page.locator("#offline-area-waiting .offline-row")).to_have_count(10)

    context.set_offline(False)
    waiting(page, 0)
    expect(bar(page)).to_have_attribute("data-state", "online")
    expect(page.locator("#sync-message")).to_have_text("10 changes sent.")
    expect(page.locator("#sync-last")).to_contain_text("today")
    stored = stored_fixtures(site, area_id)
    assert tags_of(stored) == [f"T-{number:02d}" for number in range(1, 12)]
    first = next(fixture for fixture in stored if fixture["tag"] == "T-02")
    assert (first["lamp_w"], first["lamp_count"], first["wiring"]) == (58, 1, "single")
    assert (first["open_circuit_v"], first["loaded_v"]) == (4.8, 4.6)

    # The kept copy of the area was fetched again after the sync: offline, it lists all 11.
    expect(page.locator("html")).to_have_attribute(
        "data-offline-refreshed", re.compile(r"\d+"), timeout=SYNC_TIMEOUT_MS
    )
    context.set_offline(True)
    page.reload()
    expect(page.locator(".rows .row-tag")).to_have_count(11)
    expect(page.locator("#offline-area-waiting")).to_have_count(0)


def test_repeat_last_and_copies_work_offline_from_the_kept_fixture(
    page_as: Any, site: Site
) -> None:
    made = new_site(site, fixtures=[{**SEEDED, "tag": "R-01", "location": "Stair 1"}])
    area_id = made["area"]["id"]
    page = page_as("surveyor", "820x1180")
    kept_for_offline(page, made["building"]["id"])
    page.context.set_offline(True)
    page.goto(f"/areas/{area_id}")
    page.get_by_role("button", name="Repeat last fixture (R-01 → R-02)").click()
    expect(page.locator("#offline-page-message")).to_contain_text(
        "Fixture R-02 added on this tablet"
    )
    waiting(page, 1)
    page.get_by_label("Add identical copies of R-02").fill("3")
    page.get_by_role("button", name="Add copies").click()
    expect(page.locator("#offline-page-message")).to_contain_text(
        "3 fixtures added: R-03 to R-05 on this tablet"
    )
    waiting(page, 4)
    expect(page.get_by_role("button", name="Repeat last fixture (R-05 → R-06)")).to_be_visible()

    page.context.set_offline(False)
    waiting(page, 0)
    stored = stored_fixtures(site, area_id)
    assert tags_of(stored) == ["R-01", "R-02", "R-03", "R-04", "R-05"]
    copied = {(f["location"], f["lamp_count"], f["wiring"], f["lamp_w"]) for f in stored}
    assert copied == {("Stair 1", 2, "parallel", 36)}


def test_an_offline_edit_of_a_fixture_changed_online_asks_which_to_keep(
    page_as: Any, site: Site
) -> None:
    made = new_site(
        site, fixtures=[{**SEEDED, "tag": "C-01"}, {**SEEDED, "tag": "C-02", "location": "Lobby"}]
    )
    first, second = made["fixtures"]
    page = page_as("surveyor", "820x1180")
    kept_for_offline(page, made["building"]["id"])
    page.context.set_offline(True)

    page.goto(f"/fixtures/{first['id']}")
    page.get_by_label("Lamp watts").fill("58")
    page.get_by_label("Where it is").fill("Stair 2 landing")
    page.get_by_role("button", name="Save on this tablet").click()
    page.wait_for_url(re.compile(r"/areas/"))
    page.goto(f"/fixtures/{second['id']}")
    page.get_by_label("Lamp watts").fill("18")
    page.get_by_role("button", name="Save on this tablet").click()
    page.wait_for_url(re.compile(r"/areas/"))
    record_offline(page, made["area"]["id"], tag="C-03", lamp_w="36")
    # As if the server had tightened a limit since the tablet checked the form.
    page.evaluate(DOCTOR_ENTRY, {"tag": "C-03", "name": "lamp_w", "value": 450})
    waiting(page, 3)

    with site.api("surveyor") as api:  # meanwhile, with a signal, someone else
        their_edit = {"version": 1, "lamp_w": 28, "notes": "Relamped"}
        api.patch(f"/api/v1/fixtures/{first['id']}", json=their_edit).raise_for_status()
        api.patch(f"/api/v1/fixtures/{second['id']}", json={"version": 1, "lamp_w": 58})

    page.context.set_offline(False)
    expect(bar(page)).to_have_attribute("data-attention", "3", timeout=SYNC_TIMEOUT_MS)
    expect(bar(page)).to_have_attribute("data-state", "attention")
    expect(page.locator("#sync-waiting")).to_have_text("3 changes need your decision")
    page.locator("#sync-waiting").click()
    card = page.locator(".offline-change", has_text="C-01")
    rows = card.locator(".offline-compare tbody tr")
    expect(rows).to_have_count(2)
    expect(rows.filter(has_text="Lamp watts")).to_contain_text("58")
    expect(rows.filter(has_text="Lamp watts").locator(".offline-theirs")).to_have_text("28")
    expect(rows.filter(has_text="Where it is").locator(".offline-yours")).to_have_text(
        "Stair 2 landing"
    )
    expect(rows.filter(has_text="Where it is").locator(".offline-theirs")).to_have_text("(empty)")
    expect(card).to_contain_text("Also changed on the server, and kept whichever you choose: Notes")
    for viewport in ("820x1180", "1180x820"):
        page.set_viewport_size(VIEWPORTS[viewport])
        assert no_horizontal_scroll(page)
        assert small_targets(page) == []
        assert inputs_without_label(page) == []
        screenshot(page, "offline-conflict", viewport)

    card.get_by_role("button", name="Keep mine").click()
    other = page.locator(".offline-change", has_text="C-02")
    expect(other.locator(".offline-theirs")).to_have_text("58")
    other.get_by_role("button", name="Keep theirs").click()  # the dialog is accepted
    expect(bar(page)).to_have_attribute("data-attention", "1", timeout=SYNC_TIMEOUT_MS)
    expect(page.locator("#sync-message")).to_have_text("1 change sent.")
    expect(page.locator(".offline-recent")).to_contain_text("your change was dropped")
    refused = page.locator(".offline-change", has_text="C-03")
    expect(refused.locator(".offline-errors")).to_contain_text("Lamp watts [W]: Input should be")
    refused.get_by_role("link", name="Correct it").click()
    expect(page.locator("#f-tag")).to_have_value("C-03")
    expect(page.get_by_label("Lamp watts")).to_have_value("450")
    expect(page.locator("#lamp_w-offline-error")).to_contain_text("less than or equal to 400")
    page.get_by_label("Lamp watts").fill("45")
    page.get_by_role("button", name="Save fixture").click()
    expect(page.locator(".notice.success")).to_have_text("Fixture C-03 saved.")
    waiting(page, 0)
    expect(bar(page)).to_have_attribute("data-attention", "0")
    with site.api("surveyor") as api:
        kept = api.get(f"/api/v1/fixtures/{first['id']}").json()
        theirs = api.get(f"/api/v1/fixtures/{second['id']}").json()
    assert (kept["lamp_w"], kept["location"], kept["notes"], kept["version"]) == (
        58,
        "Stair 2 landing",
        "Relamped",
        3,
    )
    assert (theirs["lamp_w"], theirs["version"]) == (58, 2)
    corrected = [f for f in stored_fixtures(site, made["area"]["id"]) if f["tag"] == "C-03"]
    assert [f["lamp_w"] for f in corrected] == [45]


@pytest.fixture
def restartable(browser: Any, site: Site, tmp_path: Path) -> Iterator[Callable[[], Any]]:
    """``launch()``: a browser on one profile folder, so a second launch is a restart."""
    launched: list[Any] = []

    def launch() -> Any:
        context = browser.browser_type.launch_persistent_context(
            str(tmp_path / "profile"),
            executable_path=str(CHROMIUM),
            args=CHROMIUM_ARGS,
            viewport=VIEWPORTS["820x1180"],
            base_url=site.url,
        )
        context.set_default_timeout(10_000)
        launched.append(context)
        return context

    yield launch
    for context in launched:
        context.close()  # a no-op for the one the test closed itself


def signed_in(context: Any, site: Site, path: str) -> Any:
    page = context.pages[0] if context.pages else context.new_page()
    page.goto(path)
    if "/signin" in page.url:
        page.get_by_label("Email").fill(site.emails["surveyor"])
        page.get_by_label("Password").fill(PASSWORD)
        page.get_by_role("button", name="Sign in").click()
        page.goto(path)
    return page


def test_a_sync_cut_off_twice_and_resumed_after_a_restart_makes_no_duplicates(
    restartable: Callable[[], Any], site: Site
) -> None:
    made = new_site(site, fixtures=[SEEDED])
    area_id = made["area"]["id"]
    context = restartable()
    page = signed_in(context, site, f"/buildings/{made['building']['id']}")
    expect(page.locator("html")).to_have_attribute(
        "data-offline-ready", "yes", timeout=SYNC_TIMEOUT_MS
    )
    context.set_offline(True)
    for number in range(2, 10):
        record_offline(page, area_id, tag=f"T-{number:02d}", lamp_w="36")
    waiting(page, 8)

    creates: list[str] = []

    def cut(route: Route) -> None:
        if route.request.method != "POST":
            route.continue_()
            return
        creates.append(route.request.post_data_json["tag"])
        if len(creates) == 3:
            route.fetch()  # the server stores T-04 ...
            route.abort("connectionreset")  # ... and its answer is lost
        elif len(creates) == 7:
            route.fetch()  # the server stores T-07; the tablet never hears back
        else:
            route.continue_()

    context.route(re.compile(rf"/api/v1/areas/{area_id}/fixtures$"), cut)
    context.set_offline(False)
    waiting(page, 6)
    expect(page.locator("#sync-now")).to_be_enabled(timeout=SYNC_TIMEOUT_MS)
    assert creates == ["T-02", "T-03", "T-04"]
    assert len(stored_fixtures(site, area_id)) == 4

    page.locator("#sync-now").click()
    deadline = time.monotonic() + SYNC_TIMEOUT_MS / 1000
    while len(stored_fixtures(site, area_id)) < 7 and time.monotonic() < deadline:
        page.wait_for_timeout(100)  # lets the route handler run meanwhile
    assert creates == ["T-02", "T-03", "T-04", "T-04", "T-05", "T-06", "T-07"]
    context.close()  # the browser goes down with T-07 in flight

    context = restartable()
    answers: list[int] = []
    context.on(
        "response",
        lambda answer: (
            answers.append(answer.status)
            if answer.request.method == "POST" and "/api/v1/areas/" in answer.url
            else None
        ),
    )
    page = signed_in(context, site, f"/areas/{area_id}")
    waiting(page, 0)
    expect(page.locator("#sync-message")).to_contain_text("2 changes sent; 1 was already on")
    assert answers == [200, 201, 201]  # T-07 again (already there), T-08, T-09
    stored = stored_fixtures(site, area_id)
    assert tags_of(stored) == [f"T-{number:02d}" for number in range(1, 10)]
    assert len({fixture["id"] for fixture in stored}) == 9


def marked_fields(html: str) -> set[str]:
    """The names of the fields a form page marks wrong (inside ``.field.has-error``)."""
    return {
        control.attrs["name"]
        for box in parse(html).find_all(class_="has-error")
        if "field" in box.attrs.get("class", "").split()
        for control in box.iter()
        if control.tag in ("input", "select", "textarea") and control.attrs.get("name")
    }


VALID_FORM = {
    "tag": "K-01",
    "lamp_type": "T8",
    "lamp_w": "36",
    "lamp_count": "2",
    "lamps_to_back_up": "1",
    "ballast": "electronic-instant-start",
    "wiring": "single",
    "ambient_c": "25",
}
# Each case breaks one rule of server/sites/schemas.py (FixtureCreate).
BROKEN_FORMS = {
    "missing watts": {"lamp_w": ""},
    "watts at zero": {"lamp_w": "0"},
    "watts too high": {"lamp_w": "401"},
    "watts not a number": {"lamp_w": "36W"},
    "no tag": {"tag": "  "},
    "tag too long": {"tag": "X" * 51},
    "ceiling too hot": {"ambient_c": "101"},
    "cells not whole": {"pack_cells": "4.5"},
    "date code letters": {"pack_date_code": "18a4", "pack_date_format": "YYWW"},
    "bad date": {"commissioned_on": "2025-02-30"},
    "unknown lamp": {"lamp_type": "T99"},
    "more backed up than held": {"lamps_to_back_up": "3"},
    "series with one lamp": {"wiring": "series", "lamp_count": "1", "lamps_to_back_up": "1"},
    "loaded above open circuit": {"open_circuit_v": "5.2", "loaded_v": "5.3"},
    "current and resistor": {"load_a": "0.3", "load_ohm": "9.1"},
    "date code without format": {"pack_date_code": "1834"},
    "NUL in the notes": {"notes": "pack\x00label"},
}


def test_local_checks_mark_the_fields_the_server_marks(page_as: Any, site: Site) -> None:
    """The tablet's checks and the server's (the same form posted) name the same fields."""
    made = new_site(site, fixtures=[])
    form_url = f"/areas/{made['area']['id']}/fixtures/new"
    page = page_as("surveyor", "820x1180")
    assert page.evaluate("raw => PlannerOffline.check(raw)", VALID_FORM) == {}
    with site.api("surveyor") as api:
        for name, change in BROKEN_FORMS.items():
            form = {**VALID_FORM, **change, "id": str(uuid.uuid4())}
            answer = api.post(form_url, data=form, follow_redirects=False)
            assert answer.status_code == 422, (name, answer.status_code)
            server = marked_fields(answer.text)
            local = page.evaluate("raw => PlannerOffline.check(raw)", form)
            assert server and set(local) == server, (name, local, server)
