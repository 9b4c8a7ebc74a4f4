"""The offline routes: the service worker script, the field rules, the session probe, the
page of changes kept on a tablet, and what the survey pages carry for the offline script."""

from __future__ import annotations

from collections.abc import Callable

from fastapi.testclient import TestClient

from server.offline.service import field_rules
from server.sites.schemas import FixtureCreate
from tests.pages import csrf_token, parse
from tests.planner_data import survey


def test_the_service_worker_is_served_from_the_root_for_the_whole_site(client: TestClient) -> None:
    answer = client.get("/sw.js")
    assert answer.status_code == 200
    assert answer.headers["content-type"].startswith("application/javascript")
    assert answer.headers["service-worker-allowed"] == "/"
    assert answer.headers["cache-control"] == "no-cache"
    assert 'addEventListener("fetch"' in answer.text


def test_the_rules_carry_the_fixture_schemas_limits(client: TestClient) -> None:
    """The limits are FixtureCreate's own (server/sites/schemas.py): 0 < lamp_w <= 400 W ..."""
    rules = client.get("/offline/rules/fixture.json").json()["fields"]
    assert rules == field_rules(schema=FixtureCreate)
    assert "id" not in rules
    assert rules["lamp_w"] == {
        "kind": "number",
        "required": True,
        "nullable": False,
        "gt": 0,
        "le": 400,
    }
    assert rules["lamp_count"] == {
        "kind": "whole",
        "required": False,
        "nullable": False,
        "default": 1,
        "ge": 1,
        "le": 8,
    }
    assert rules["pack_cells"]["nullable"] and rules["pack_cells"]["kind"] == "whole"
    assert rules["tag"] == {
        "kind": "text",
        "required": True,
        "nullable": False,
        "min_length": 1,
        "max_length": 50,
    }
    assert rules["pack_date_code"]["pattern"] == r"^\d{4}$"
    assert rules["commissioned_on"]["kind"] == "date"
    assert rules["unswitched_supply"] == {
        "kind": "bool",
        "required": False,
        "nullable": False,
        "default": False,
    }
    assert rules["lamp_type"]["kind"] == "choice" and "T8" in rules["lamp_type"]["choices"]
    assert rules["pack_chemistry"]["nullable"] and rules["pack_chemistry"]["choices"] == [
        "NiCd",
        "NiMH",
        "LiFePO4",
    ]
    assert set(rules) == set(FixtureCreate.model_fields) - {"id"}


def test_the_session_probe_names_the_user_and_the_pages_csrf_token(
    client: TestClient, browser_session_as: Callable[..., TestClient]
) -> None:
    assert client.get("/offline/session").status_code == 401
    browser = browser_session_as("surveyor")
    answer = browser.get("/offline/session")
    assert answer.status_code == 200
    assert answer.headers["cache-control"] == "no-store"
    me = browser.get("/api/v1/me").json()
    assert answer.json() == {"user_id": me["id"], "csrf_token": csrf_token(browser)}


def test_signed_in_pages_carry_the_indicator_and_the_sign_in_page_does_not(
    client: TestClient, browser_session_as: Callable[..., TestClient]
) -> None:
    assert parse(client.get("/signin").text).find_all(id="sync-bar") == []
    browser = browser_session_as("surveyor")
    page = parse(browser.get("/offline/changes").text)
    me = browser.get("/api/v1/me").json()
    indicator = page.find("section", id="sync-bar")
    assert indicator.attrs["data-user-id"] == me["id"]
    assert page.find("button", id="sync-now").text() == "Sync now"
    assert page.find("h1").text() == "Changes on this tablet"
    assert page.find_all("script", src="/static/js/offline.js")


def test_the_fixture_forms_name_the_api_they_sync_with(
    client_as: Callable[..., TestClient],
) -> None:
    surveyor = client_as("surveyor")
    made = survey(surveyor)
    area, fixture = made["area"]["id"], made["fixture"]["id"]
    new = parse(surveyor.get(f"/areas/{area}/fixtures/new").text).find("form", id="fixture-form")
    assert new.attrs["data-offline-api"] == f"/api/v1/areas/{area}/fixtures"
    assert new.attrs["data-offline-rules"] == "/offline/rules/fixture.json"
    assert new.attrs["data-area-id"] == area
    edit = parse(surveyor.get(f"/fixtures/{fixture}").text).find("form", id="fixture-form")
    assert edit.attrs["data-offline-api"] == f"/api/v1/fixtures/{fixture}"
    assert edit.find_all(id="offline-note")
