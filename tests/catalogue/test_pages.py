"""Catalogue pages: the API's schemas behind the forms, messages beside fields, safe deletes."""

from __future__ import annotations

import uuid
from typing import Any

from tests.pages import csrf_token, field_error, field_value, form_fields, parse
from tests.planner_data import BOTH_ENDS_MODULE, catalogue, form_of, survey


def _post(browser: Any, path: str, data: dict[str, Any]) -> Any:
    return browser.post(
        path, data={"csrf_token": csrf_token(browser), **data}, follow_redirects=False
    )


def _module_form(**changes: Any) -> dict[str, Any]:
    return form_of({"id": str(uuid.uuid4()), **BOTH_ENDS_MODULE, **changes})


def test_a_module_made_on_the_page_is_the_apis_module(browser_session_as, client_as) -> None:
    browser = browser_session_as("estimator")
    made = _post(browser, "/catalogue/modules/new", _module_form(name="Page module"))
    assert made.status_code == 303, made.text
    modules = client_as("estimator").get("/api/v1/catalogue/modules").json()["items"]
    assert [(m["name"], m["lamp_types"], m["changeover"]) for m in modules] == [
        ("Page module", ["T8", "T5"], "both-ends")
    ]
    listing = parse(browser.get("/catalogue/modules").text)
    assert "Page module" in listing.find("table").text()


def test_messages_beside_the_fields_and_the_input_kept(browser_session_as) -> None:
    browser = browser_session_as("estimator")
    answer = _post(
        browser,
        "/catalogue/modules/new",
        _module_form(battery_w="", battery_a="", lamp_w_min="70", charge_a="-1", lamp_types=[]),
    )
    assert answer.status_code == 422
    page = parse(answer.text)
    assert field_error(page, "charge_a") == "Enter a number above 0."
    assert field_error(page, "lamp_types") == "Tick at least one."
    assert field_value(page, "lamp_w_min") == "70"
    assert field_value(page, "charge_a") == "-1"
    rule = _post(browser, "/catalogue/modules/new", _module_form(battery_w="", battery_a=""))
    assert "battery-side power or current" in field_error(parse(rule.text), "battery_w")


def test_pack_and_ballast_type_forms_check_their_fields(browser_session_as) -> None:
    browser = browser_session_as("estimator")
    pack = _post(
        browser,
        "/catalogue/packs/new",
        {"id": str(uuid.uuid4()), "name": "P", "chemistry": "NiCd", "cells": "4.5",
         "capacity_ah": "4,5", "peukert_k": "2"},
    )  # fmt: skip
    page = parse(pack.text)
    assert pack.status_code == 422
    assert field_error(page, "cells") == "Enter a whole number."
    assert field_error(page, "peukert_k") == "Enter 1.6 or less."
    assert field_error(page, "capacity_ah") == ""  # a decimal comma is read as a point
    ballast = _post(
        browser,
        "/catalogue/ballast-types/new",
        {"id": str(uuid.uuid4()), "name": "", "technology": "", "lamp_type": "T8"},
    )
    page = parse(ballast.text)
    assert field_error(page, "name") == "Enter a value."
    assert field_error(page, "technology") == "Enter a value."


def test_a_stale_module_edit_shows_both_prices(browser_session_as, client_as) -> None:
    module = catalogue(client_as("estimator"))["both"]
    mine, theirs = browser_session_as("estimator"), browser_session_as("supervisor")
    path = f"/catalogue/modules/{module['id']}"
    my_form = form_fields(parse(mine.get(path).text), "record-form")
    their_form = form_fields(parse(theirs.get(path).text), "record-form")
    lists = {"lamp_types": module["lamp_types"], "ballasts": module["ballasts"]}
    assert _post(theirs, path, {**their_form, **lists, "price": "99.00"}).status_code == 303
    stale = _post(mine, path, {**my_form, **lists, "price": "120.00"})
    assert stale.status_code == 409
    page = parse(stale.text)
    assert field_value(page, "price") == "120.00"
    assert page.find(id="price-stored").text() == "Stored now: 99.00"


def test_a_module_in_use_is_not_deleted(browser_session_as, client_as) -> None:
    estimator = client_as("estimator")
    items = catalogue(estimator)
    made = survey(client_as("surveyor"))
    estimator.put(
        f"/api/v1/fixtures/{made['fixture']['id']}/proposal",
        json={"module_id": items["both"]["id"], "pack_id": items["big"]["id"]},
    )
    browser = browser_session_as("estimator")
    module = items["both"]
    kept = _post(
        browser, f"/catalogue/modules/{module['id']}/delete", {"version": module["version"]}
    )
    assert kept.status_code == 409
    assert "1 proposal(s) use this module" in parse(kept.text).find(class_="warn").text()
    unused = items["one"]
    gone = _post(
        browser, f"/catalogue/modules/{unused['id']}/delete", {"version": unused["version"]}
    )
    assert gone.status_code == 303
    names = [m["name"] for m in estimator.get("/api/v1/catalogue/modules").json()["items"]]
    assert names == [module["name"]]


def test_a_surveyor_reads_the_catalogue_but_cannot_change_it(browser_session_as, client_as) -> None:
    catalogue(client_as("estimator"))
    browser = browser_session_as("surveyor")
    listing = parse(browser.get("/catalogue/modules").text)
    assert not listing.find("table").find_all("a")
    assert _post(browser, "/catalogue/modules/new", _module_form()).status_code == 403
    assert browser.get("/catalogue/nothing-here").status_code == 404


def test_deleting_a_module_in_use_answers_409_and_keeps_it(client_as) -> None:
    from tests.test_tenancy_and_roles import FIXTURE, MODULE

    api = client_as("estimator")
    module = api.post("/api/v1/catalogue/modules", json=MODULE).json()
    pack = api.post(
        "/api/v1/catalogue/packs",
        json={"name": "Pack", "chemistry": "NiCd", "cells": 4, "capacity_ah": 4.0},
    ).json()
    building = api.post("/api/v1/buildings", json={"name": "In use"}).json()
    area = api.post(f"/api/v1/buildings/{building['id']}/areas", json={"name": "A"}).json()
    fixture = api.post(f"/api/v1/areas/{area['id']}/fixtures", json=FIXTURE).json()
    chosen = api.put(
        f"/api/v1/fixtures/{fixture['id']}/proposal",
        json={"module_id": module["id"], "pack_id": pack["id"]},
    )
    assert chosen.status_code in (200, 201), chosen.text
    refused = api.delete(f"/api/v1/catalogue/modules/{module['id']}")
    assert refused.status_code == 409
    assert "in use" in refused.json()["detail"]
    assert api.get(f"/api/v1/catalogue/modules/{module['id']}").status_code == 200


def test_an_organisations_own_profile_is_checked_and_used(client_as) -> None:
    api = client_as("estimator")
    bad = api.post(
        "/api/v1/catalogue/profiles",
        json={"name": "Client spec", "duration_min": 120, "min_lux": 2.0, "avg_lux": 1.0},
    )
    assert bad.status_code == 422
    assert bad.json()["detail"][0]["loc"][-1] == "avg_lux"
    made = api.post(
        "/api/v1/catalogue/profiles",
        json={
            "name": "Client spec: 2 lx, 2 h",
            "duration_min": 120,
            "min_lux": 2.0,
            "source": "client's specification, section 4",
        },
    )
    assert made.status_code == 201, made.text
    profile = made.json()
    building = api.post("/api/v1/buildings", json={"name": "Spec block"}).json()
    area = api.post(
        f"/api/v1/buildings/{building['id']}/areas",
        json={"name": "Corridor", "profile_id": profile["id"], "required_duration_min": 120},
    )
    assert area.status_code == 201, area.text
    assert (
        client_as("surveyor").delete(f"/api/v1/catalogue/profiles/{profile['id']}").status_code
        == 403
    )


def test_profile_pages_list_and_refuse_beside_the_field(browser_session_as) -> None:
    from tests.pages import field_error, parse

    browser = browser_session_as("estimator")
    page = browser.get("/catalogue/profiles/new")
    assert page.status_code == 200
    token = browser.cookies.get("planner_session") and _csrf(page.text)
    answer = browser.post(
        "/catalogue/profiles/new",
        data={
            "csrf_token": token,
            "name": "Spec",
            "duration_min": "-5",
            "min_lux": "1",
            "source": "client",
        },
    )
    assert answer.status_code == 422
    assert field_error(parse(answer.text), "duration_min")
    assert "Requirement profiles of our own" in browser.get("/catalogue").text


def _csrf(html: str) -> str:
    import re

    match = re.search(r'name="csrf_token" value="([^"]+)"', html)
    assert match
    return match.group(1)
