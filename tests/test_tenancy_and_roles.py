"""Every route in the router table: who may call it, and that another firm's record
answers 404 exactly like a missing one.

The table below must list every route the app has; a route added without a
line here fails ``test_every_route_is_covered``.
"""

from __future__ import annotations

import re
import uuid
from collections.abc import Callable
from typing import Any

import pytest
from fastapi.testclient import TestClient

from server.accounts.models import ROLE_ORDER, Role
from server.db import make_engine, make_session_factory
from server.routing import route_table
from server.sites.models import Fixture, FixturePhoto

PUBLIC = "public"  # no sign-in needed
ANY = "any"  # any signed-in user

S, E, V, A = Role.SURVEYOR, Role.ESTIMATOR, Role.SUPERVISOR, Role.ADMIN

# (method, path) -> who may call it. Paths are the app's own templates.
ROUTE_RULES: dict[tuple[str, str], str | Role] = {
    ("GET", "/healthz"): PUBLIC,
    ("POST", "/api/v1/auth/token"): PUBLIC,
    ("GET", "/api/v1/me"): ANY,
    ("GET", "/api/v1/users"): A,
    ("POST", "/api/v1/users"): A,
    ("GET", "/signin"): PUBLIC,
    ("POST", "/signin"): PUBLIC,
    ("POST", "/signout"): ANY,
    ("GET", "/"): ANY,
    ("GET", "/api/v1/buildings"): S,
    ("POST", "/api/v1/buildings"): S,
    ("GET", "/api/v1/buildings/{record_id}"): S,
    ("PATCH", "/api/v1/buildings/{record_id}"): S,
    ("DELETE", "/api/v1/buildings/{record_id}"): S,
    ("GET", "/api/v1/buildings/{parent_id}/areas"): S,
    ("POST", "/api/v1/buildings/{parent_id}/areas"): S,
    ("GET", "/api/v1/areas/{record_id}"): S,
    ("PATCH", "/api/v1/areas/{record_id}"): S,
    ("DELETE", "/api/v1/areas/{record_id}"): S,
    ("GET", "/api/v1/areas/{parent_id}/fixtures"): S,
    ("POST", "/api/v1/areas/{parent_id}/fixtures"): S,
    ("GET", "/api/v1/fixtures/{record_id}"): S,
    ("PATCH", "/api/v1/fixtures/{record_id}"): S,
    ("DELETE", "/api/v1/fixtures/{record_id}"): S,
    ("GET", "/sw.js"): PUBLIC,
    ("GET", "/offline/rules/fixture.json"): PUBLIC,
    ("GET", "/offline/session"): ANY,
    ("GET", "/offline/changes"): S,
}
for _kind in ("ballast-types", "modules", "packs", "profiles"):
    ROUTE_RULES[("GET", f"/api/v1/catalogue/{_kind}")] = S
    ROUTE_RULES[("POST", f"/api/v1/catalogue/{_kind}")] = E
    ROUTE_RULES[("GET", f"/api/v1/catalogue/{_kind}/{{record_id}}")] = S
    ROUTE_RULES[("PATCH", f"/api/v1/catalogue/{_kind}/{{record_id}}")] = E
    ROUTE_RULES[("DELETE", f"/api/v1/catalogue/{_kind}/{{record_id}}")] = E
for _calculator in ("runtime", "recharge", "pack-health", "check"):
    ROUTE_RULES[("POST", f"/api/v1/calc/{_calculator}")] = ANY

for _calculator in ("route-illuminance", "route-plan"):
    ROUTE_RULES[("POST", f"/api/v1/calc/{_calculator}")] = ANY

_PROPOSAL = "/api/v1/fixtures/{fixture_id}/proposal"
ROUTE_RULES.update(
    {
        ("GET", _PROPOSAL): S,
        ("PUT", _PROPOSAL): E,
        ("POST", _PROPOSAL + "/suggest"): E,
        ("POST", _PROPOSAL + "/accept"): E,
        ("POST", _PROPOSAL + "/unaccept"): E,
        ("POST", "/api/v1/areas/{area_id}/check"): S,
        ("GET", "/api/v1/areas/{area_id}/proposals"): S,
        # quotes and work orders
        ("POST", "/api/v1/buildings/{building_id}/quotes"): E,
        ("GET", "/api/v1/quotes"): S,
        ("GET", "/api/v1/quotes/{quote_id}"): S,
        ("PATCH", "/api/v1/quotes/{quote_id}"): E,
        ("POST", "/api/v1/quotes/{quote_id}/lines"): E,
        ("PATCH", "/api/v1/quotes/{quote_id}/lines/{line_id}"): E,
        ("DELETE", "/api/v1/quotes/{quote_id}/lines/{line_id}"): E,
        ("POST", "/api/v1/quotes/{quote_id}/overrides"): E,
        ("POST", "/api/v1/quotes/{quote_id}/rebuild"): E,
        ("POST", "/api/v1/quotes/{quote_id}/transitions"): E,
        ("GET", "/api/v1/quotes/{quote_id}/pdf"): S,
        ("POST", "/api/v1/quotes/{quote_id}/work-order"): V,
        ("GET", "/api/v1/work-orders"): S,
        ("GET", "/api/v1/work-orders/{work_order_id}"): S,
        ("PATCH", "/api/v1/work-orders/{work_order_id}"): V,
        ("PATCH", "/api/v1/work-orders/{work_order_id}/tasks/{task_id}"): S,
        ("POST", "/api/v1/work-orders/{work_order_id}/complete"): V,
        ("GET", "/api/v1/work-orders/{work_order_id}/pdf"): S,
        # maintenance
        ("POST", "/api/v1/fixtures/{fixture_id}/tests"): S,
        ("GET", "/api/v1/fixtures/{fixture_id}/tests"): ANY,
        ("GET", "/api/v1/fixtures/{fixture_id}/schedule"): ANY,
        ("GET", "/api/v1/fixtures/{fixture_id}/condition"): ANY,
        ("GET", "/api/v1/buildings/{building_id}/due"): ANY,
        ("GET", "/api/v1/maintenance/due"): ANY,
        ("GET", "/api/v1/buildings/{building_id}/replacements"): ANY,
        ("GET", "/api/v1/buildings/{building_id}/calendar-link"): V,
        ("POST", "/api/v1/buildings/{building_id}/calendar-link"): V,
        ("DELETE", "/api/v1/buildings/{building_id}/calendar-link"): V,
        ("GET", "/calendar/{token}.ics"): PUBLIC,
        ("GET", "/api/v1/buildings/{building_id}/logbook/{year}/pdf"): ANY,
        ("GET", "/api/v1/buildings/{building_id}/tests.csv"): ANY,
        ("POST", "/api/v1/buildings/{building_id}/tests/import"): S,
        # survey pages
        ("GET", "/buildings"): S,
        ("GET", "/buildings/new"): S,
        ("POST", "/buildings/new"): S,
        ("GET", "/buildings/{building_id}"): S,
        ("GET", "/buildings/{building_id}/edit"): S,
        ("POST", "/buildings/{building_id}/edit"): S,
        ("GET", "/buildings/{building_id}/areas/new"): S,
        ("POST", "/buildings/{building_id}/areas/new"): S,
        ("GET", "/areas/{area_id}"): S,
        ("GET", "/areas/{area_id}/edit"): S,
        ("POST", "/areas/{area_id}/edit"): S,
        ("POST", "/areas/{area_id}/fixtures/copies"): S,
        ("GET", "/areas/{area_id}/fixtures/new"): S,
        ("POST", "/areas/{area_id}/fixtures/new"): S,
        ("POST", "/areas/{area_id}/findings"): S,
        ("GET", "/fixtures/{fixture_id}"): S,
        ("POST", "/fixtures/{fixture_id}"): S,
        ("POST", "/fixtures/{fixture_id}/delete"): S,
        ("POST", "/fixtures/{fixture_id}/photos"): S,
        ("GET", "/photos/{photo_id}"): S,
        # proposal pages
        ("GET", "/areas/{area_id}/proposals"): S,
        ("POST", "/areas/{area_id}/proposals/suggest"): E,
        ("POST", "/areas/{area_id}/proposals/recheck"): E,
        ("GET", "/fixtures/{fixture_id}/proposal"): S,
        ("POST", "/fixtures/{fixture_id}/proposal"): E,
        ("POST", "/fixtures/{fixture_id}/proposal/suggest"): E,
        ("POST", "/fixtures/{fixture_id}/proposal/accept"): E,
        ("POST", "/fixtures/{fixture_id}/proposal/unaccept"): E,
        ("POST", "/fixtures/{fixture_id}/proposal/recheck"): E,
        # escape-route page
        ("GET", "/areas/{area_id}/route"): S,
        ("POST", "/areas/{area_id}/route"): S,
        ("POST", "/areas/{area_id}/route/plan"): S,
        ("POST", "/areas/{area_id}/route/plan/accept"): E,
        # catalogue pages
        ("GET", "/catalogue"): S,
        # quote and work-order pages (accepting, issuing and completing also
        # need a supervisor; the service checks that beyond the route's rule)
        ("GET", "/quotes"): S,
        ("POST", "/quotes/new"): E,
        ("GET", "/quotes/{quote_id}"): S,
        ("POST", "/quotes/{quote_id}/settings"): E,
        ("POST", "/quotes/{quote_id}/lines"): E,
        ("POST", "/quotes/{quote_id}/lines/{line_id}"): E,
        ("POST", "/quotes/{quote_id}/lines/{line_id}/delete"): E,
        ("POST", "/quotes/{quote_id}/overrides"): E,
        ("POST", "/quotes/{quote_id}/transitions"): E,
        ("POST", "/quotes/{quote_id}/work-order"): V,
        ("GET", "/work-orders"): S,
        ("GET", "/work-orders/{work_order_id}"): S,
        ("POST", "/work-orders/{work_order_id}/tasks/{task_id}"): S,
        ("POST", "/work-orders/{work_order_id}/details"): V,
        ("POST", "/work-orders/{work_order_id}/complete"): V,
        # maintenance pages
        ("GET", "/maintenance"): ANY,
        ("GET", "/maintenance/buildings/{building_id}"): ANY,
        ("POST", "/maintenance/buildings/{building_id}/calendar-link"): V,
        ("POST", "/maintenance/buildings/{building_id}/calendar-link/revoke"): V,
        ("GET", "/maintenance/buildings/{building_id}/walk"): ANY,
        ("POST", "/maintenance/buildings/{building_id}/walk"): S,
        ("GET", "/maintenance/fixtures/{fixture_id}/record"): ANY,
        ("POST", "/maintenance/fixtures/{fixture_id}/record"): S,
        ("GET", "/maintenance/fixtures/{fixture_id}"): ANY,
        ("GET", "/maintenance/buildings/{building_id}/import"): S,
        ("POST", "/maintenance/buildings/{building_id}/import"): S,
    }
)
for _kind in ("ballast-types", "modules", "packs", "profiles"):
    ROUTE_RULES[("GET", f"/catalogue/{_kind}")] = S
    ROUTE_RULES[("GET", f"/catalogue/{_kind}/new")] = E
    ROUTE_RULES[("POST", f"/catalogue/{_kind}/new")] = E
    ROUTE_RULES[("GET", f"/catalogue/{_kind}/{{record_id}}")] = E
    ROUTE_RULES[("POST", f"/catalogue/{_kind}/{{record_id}}")] = E
    ROUTE_RULES[("POST", f"/catalogue/{_kind}/{{record_id}}/delete")] = E

# Which kind of record an id in a path names, by the segment before it.
ID_KINDS = {
    "buildings": "building",
    "areas": "area",
    "fixtures": "fixture",
    "ballast-types": "ballast_type",
    "modules": "module",
    "packs": "pack",
    "profiles": "profile",
    "quotes": "quote",
    "lines": "quote_line",
    "work-orders": "work_order",
    "tasks": "task",
    "photos": "photo",
    "logbook": "year",
}

MODULE = {
    "name": "Sample module",
    "battery_w": 7,
    "chemistry": "NiCd",
    "cells": 4,
    "charge_a": 0.17,
    "lamp_types": ["T8"],
    "lamp_w_min": 18,
    "lamp_w_max": 58,
    "ballasts": ["electronic-instant-start"],
}
FIXTURE = {"tag": "S-01", "lamp_type": "T8", "lamp_w": 36, "ballast": "electronic-instant-start"}

# A valid body for each route that reads one, so a 404 can only come from scoping.
# The ids inside point at firm A's own records or at nothing; what matters is the path.
SAMPLE_BODIES: dict[tuple[str, str], dict[str, Any] | str] = {
    ("POST", "/api/v1/buildings/{building_id}/tests/import"): (
        "fixture_tag,kind,tested_on,tested_by,result\nS-01,function,2026-11-02,A. Tester,pass\n"
    ),
    ("POST", "/api/v1/buildings/{parent_id}/areas"): {"name": "Sample corridor"},
    ("POST", "/api/v1/areas/{parent_id}/fixtures"): FIXTURE,
    ("PUT", _PROPOSAL): {"module_id": "m", "pack_id": "p"},
    ("POST", _PROPOSAL + "/suggest"): {},
    ("POST", _PROPOSAL + "/accept"): {"version": 1},
    ("POST", _PROPOSAL + "/unaccept"): {"version": 1},
    ("POST", "/api/v1/areas/{area_id}/check"): {
        "fixture": FIXTURE,
        "module_id": "m",
        "pack_id": "p",
    },
    ("POST", "/api/v1/buildings/{building_id}/quotes"): {},
    ("POST", "/api/v1/quotes/{quote_id}/lines"): {
        "version": 1,
        "description": "Sundries",
        "quantity": 1,
        "unit_price": 1,
    },
    ("POST", "/api/v1/quotes/{quote_id}/overrides"): {
        "version": 1,
        "fixture_id": "f",
        "reason": "Client accepts the shortfall in writing",
    },
    ("POST", "/api/v1/quotes/{quote_id}/rebuild"): {"version": 1},
    ("POST", "/api/v1/quotes/{quote_id}/transitions"): {"to": "sent"},
    ("POST", "/api/v1/quotes/{quote_id}/work-order"): {},
    ("PATCH", "/api/v1/work-orders/{work_order_id}/tasks/{task_id}"): {
        "version": 1,
        "status": "done",
    },
    ("POST", "/api/v1/work-orders/{work_order_id}/complete"): {},
    ("POST", "/api/v1/fixtures/{fixture_id}/tests"): {
        "kind": "function",
        "tested_on": "2026-11-02",
        "tested_by": "A. Tester",
        "result": "pass",
    },
}


def _body_for(method: str, path: str) -> dict[str, Any] | str | None:
    if (method, path) in SAMPLE_BODIES:
        return SAMPLE_BODIES[(method, path)]
    if method == "PATCH":
        return {"version": 1}
    return None


def _our_routes(app: Any) -> set[tuple[str, str]]:
    return {(entry.method, entry.path) for entry in route_table(app)}


def test_every_route_is_covered(app: Any) -> None:
    routes = _our_routes(app)
    missing = sorted(routes - ROUTE_RULES.keys())
    assert not missing, f"add these routes to ROUTE_RULES (and ID_KINDS): {missing}"
    gone = sorted(ROUTE_RULES.keys() - routes)
    assert not gone, f"ROUTE_RULES lists routes the app no longer has: {gone}"


def _below(role: Role) -> Role | None:
    index = ROLE_ORDER.index(role)
    return ROLE_ORDER[index - 1] if index else None


def _call(client: TestClient, method: str, path: str, body: dict[str, Any] | str | None) -> Any:
    if body is None:
        return client.request(method, path, follow_redirects=False)
    if isinstance(body, str):
        return client.request(
            method, path, content=body, headers={"Content-Type": "text/csv"}, follow_redirects=False
        )
    return client.request(method, path, json=body, follow_redirects=False)


def _fill(path: str, ids: dict[str, str]) -> str:
    """Put firm B's record ids into a path's parameters."""
    segments = path.split("/")
    for index, segment in enumerate(segments):
        if segment.startswith("{"):
            owner = segments[index - 1]
            kind = ID_KINDS.get(owner)
            assert kind, f"no ID_KINDS entry for the segment {owner!r} in {path}"
            segments[index] = ids[kind]
    return "/".join(segments)


@pytest.fixture
def firm_b_records(client_as: Callable[..., TestClient], database_url: str) -> dict[str, str]:
    """One record of every kind, owned by firm B, down to a work order's task."""
    estimator = client_as("estimator", org="B")
    supervisor = client_as("supervisor", org="B")
    ids: dict[str, str] = {"year": "2026"}

    def made(answer: Any) -> dict[str, Any]:
        assert answer.status_code in (200, 201), answer.text
        return dict(answer.json())

    ids["building"] = made(estimator.post("/api/v1/buildings", json={"name": "B block"}))["id"]
    ids["area"] = made(
        estimator.post(f"/api/v1/buildings/{ids['building']}/areas", json={"name": "B corridor"})
    )["id"]
    ids["fixture"] = made(estimator.post(f"/api/v1/areas/{ids['area']}/fixtures", json=FIXTURE))[
        "id"
    ]
    ids["ballast_type"] = made(
        estimator.post(
            "/api/v1/catalogue/ballast-types",
            json={"name": "B gear", "technology": "electronic-instant-start", "lamp_type": "T8"},
        )
    )["id"]
    ids["module"] = made(estimator.post("/api/v1/catalogue/modules", json=MODULE))["id"]
    ids["pack"] = made(
        estimator.post(
            "/api/v1/catalogue/packs",
            json={"name": "B pack", "chemistry": "NiCd", "cells": 4, "capacity_ah": 4.0},
        )
    )["id"]
    ids["profile"] = made(
        estimator.post(
            "/api/v1/catalogue/profiles",
            json={"name": "B spec", "duration_min": 120, "min_lux": 2.0, "source": "client"},
        )
    )["id"]
    proposal = made(
        estimator.put(
            f"/api/v1/fixtures/{ids['fixture']}/proposal",
            json={"module_id": ids["module"], "pack_id": ids["pack"]},
        )
    )
    made(
        estimator.post(
            f"/api/v1/fixtures/{ids['fixture']}/proposal/accept",
            json={"version": proposal["version"], "override_reason": "tenancy test"},
        )
    )
    quote = made(
        estimator.post(
            f"/api/v1/buildings/{ids['building']}/quotes",
            json={"overrides": [{"fixture_id": ids["fixture"], "reason": "tenancy test"}]},
        )
    )
    ids["quote"] = quote["id"]
    ids["quote_line"] = quote["lines"][0]["id"]
    made(estimator.post(f"/api/v1/quotes/{ids['quote']}/transitions", json={"to": "sent"}))
    made(supervisor.post(f"/api/v1/quotes/{ids['quote']}/transitions", json={"to": "accepted"}))
    order = made(supervisor.post(f"/api/v1/quotes/{ids['quote']}/work-order", json={}))
    ids["work_order"] = order["id"]
    ids["task"] = order["tasks"][0]["id"]

    engine = make_engine(database_url)
    with make_session_factory(engine)() as session:
        fixture = session.get(Fixture, ids["fixture"])
        assert fixture is not None
        photo = FixturePhoto(
            org_id=fixture.org_id, fixture_id=fixture.id, content_type="image/png", data=b"x"
        )
        session.add(photo)
        session.commit()
        ids["photo"] = photo.id
    engine.dispose()
    return ids


def test_another_firms_records_answer_404(
    app: Any, client_as: Callable[..., TestClient], firm_b_records: dict[str, str]
) -> None:
    admin_a = client_as("admin", org="A")
    missing = {kind: str(uuid.uuid4()) for kind in firm_b_records} | {"year": "2026"}
    checked = 0
    for method, path in sorted(_our_routes(app)):
        if "{" not in path or ROUTE_RULES[(method, path)] == PUBLIC:
            continue
        body = _body_for(method, path)
        theirs = _call(admin_a, method, _fill(path, firm_b_records), body)
        nobodys = _call(admin_a, method, _fill(path, missing), body)
        assert theirs.status_code == 404, (method, path, theirs.status_code, theirs.text)
        assert nobodys.status_code == 404, (method, path, nobodys.status_code)
        assert theirs.json() == nobodys.json(), (method, path)
        checked += 1
    assert checked >= 60


def test_lists_show_only_the_callers_firm(
    client_as: Callable[..., TestClient], firm_b_records: dict[str, str]
) -> None:
    admin_a = client_as("admin", org="A")
    for path in ("/api/v1/buildings", "/api/v1/catalogue/modules", "/api/v1/catalogue/packs"):
        assert admin_a.get(path).json()["total"] == 0, path


def test_roles_below_the_rule_answer_403(
    app: Any, client_as: Callable[..., TestClient], firm_b_records: dict[str, str]
) -> None:
    clients = {role: client_as(role.value, org="B") for role in Role}
    checked = 0
    for (method, path), rule in sorted(ROUTE_RULES.items(), key=str):
        if not isinstance(rule, Role) or _below(rule) is None:
            continue
        lower = _below(rule)
        assert lower is not None
        answer = _call(clients[lower], method, _fill(path, firm_b_records), _body_for(method, path))
        assert answer.status_code == 403, (method, path, lower, answer.status_code, answer.text)
        assert rule.value in answer.json()["detail"]
        checked += 1
    assert checked >= 40


def test_signed_out_requests_are_refused(app: Any, client: TestClient) -> None:
    for (method, path), rule in sorted(ROUTE_RULES.items(), key=str):
        if rule == PUBLIC:
            continue
        concrete = re.sub(r"\{[^}]+\}", str(uuid.uuid4()), path)
        answer = client.request(method, concrete, follow_redirects=False)
        if path.startswith("/api/"):
            assert answer.status_code == 401, (method, path, answer.status_code)
        else:
            assert answer.status_code in (303, 401, 403), (method, path, answer.status_code)
