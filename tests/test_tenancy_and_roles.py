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
from server.routing import route_table

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
}
for _kind in ("ballast-types", "modules", "packs"):
    ROUTE_RULES[("GET", f"/api/v1/catalogue/{_kind}")] = S
    ROUTE_RULES[("POST", f"/api/v1/catalogue/{_kind}")] = E
    ROUTE_RULES[("GET", f"/api/v1/catalogue/{_kind}/{{record_id}}")] = S
    ROUTE_RULES[("PATCH", f"/api/v1/catalogue/{_kind}/{{record_id}}")] = E
    ROUTE_RULES[("DELETE", f"/api/v1/catalogue/{_kind}/{{record_id}}")] = E
for _calculator in ("runtime", "recharge", "pack-health", "check"):
    ROUTE_RULES[("POST", f"/api/v1/calc/{_calculator}")] = ANY

# Which kind of record the first id in a path names, by the segment before it.
ID_KINDS = {
    "buildings": "building",
    "areas": "area",
    "fixtures": "fixture",
    "ballast-types": "ballast_type",
    "modules": "module",
    "packs": "pack",
}

SAMPLE_BODIES: dict[str, dict[str, Any]] = {
    "building": {"name": "Sample block"},
    "area": {"name": "Sample corridor", "kind": "escape-route"},
    "fixture": {
        "tag": "S-01",
        "lamp_type": "T8",
        "lamp_w": 36,
        "ballast": "electronic-instant-start",
    },
}


def _body_for(method: str, path: str) -> dict[str, Any] | None:
    if method == "PATCH":
        return {"version": 1}
    if method == "POST" and path.endswith("/areas"):
        return SAMPLE_BODIES["area"]
    if method == "POST" and path.endswith("/fixtures"):
        return SAMPLE_BODIES["fixture"]
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


def _call(client: TestClient, method: str, path: str, body: dict[str, Any] | None) -> Any:
    if body is None:
        return client.request(method, path, follow_redirects=False)
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
def firm_b_records(client_as: Callable[..., TestClient]) -> dict[str, str]:
    """One record of every kind, owned by firm B."""
    estimator = client_as("estimator", org="B")
    ids: dict[str, str] = {}
    ids["building"] = estimator.post("/api/v1/buildings", json={"name": "B block"}).json()["id"]
    ids["area"] = estimator.post(
        f"/api/v1/buildings/{ids['building']}/areas", json=SAMPLE_BODIES["area"]
    ).json()["id"]
    ids["fixture"] = estimator.post(
        f"/api/v1/areas/{ids['area']}/fixtures", json=SAMPLE_BODIES["fixture"]
    ).json()["id"]
    ids["ballast_type"] = estimator.post(
        "/api/v1/catalogue/ballast-types",
        json={"name": "B gear", "technology": "electronic-instant-start", "lamp_type": "T8"},
    ).json()["id"]
    ids["module"] = estimator.post(
        "/api/v1/catalogue/modules",
        json={
            "name": "B module",
            "battery_w": 7,
            "chemistry": "NiCd",
            "cells": 4,
            "charge_a": 0.17,
            "lamp_types": ["T8"],
            "lamp_w_min": 18,
            "lamp_w_max": 58,
            "ballasts": ["electronic-instant-start"],
        },
    ).json()["id"]
    ids["pack"] = estimator.post(
        "/api/v1/catalogue/packs",
        json={"name": "B pack", "chemistry": "NiCd", "cells": 4, "capacity_ah": 4.0},
    ).json()["id"]
    return ids


def test_another_firms_records_answer_404(
    app: Any, client_as: Callable[..., TestClient], firm_b_records: dict[str, str]
) -> None:
    admin_a = client_as("admin", org="A")
    missing = {kind: str(uuid.uuid4()) for kind in firm_b_records}
    checked = 0
    for method, path in sorted(_our_routes(app)):
        if "{" not in path:
            continue
        body = _body_for(method, path)
        theirs = _call(admin_a, method, _fill(path, firm_b_records), body)
        nobodys = _call(admin_a, method, _fill(path, missing), body)
        assert theirs.status_code == 404, (method, path, theirs.status_code, theirs.text)
        assert nobodys.status_code == 404, (method, path, nobodys.status_code)
        assert theirs.json() == nobodys.json(), (method, path)
        checked += 1
    assert checked >= 15


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
    assert checked >= 10


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
